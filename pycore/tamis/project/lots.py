"""Lots: test frequency, trends, stage-to-stage creep and drift of the tests of one lot.

A *lot* is an amount of one material placed in one zone from one source
(docs/records.md, kind ``lot``). Its tests are :class:`TestPoint` values (one
per test, already evaluated by the exchange layer); this module only counts
and compares them. Every threshold is a parameter of the project, with the
defaults below given as examples, not as standards (common practice, no
source): the project's specification governs.

- :func:`frequency_status`: the project's testing rule (one test per so much
  placed, at least one per day of placement, one per change of source)
  against the lot's placed quantity and its tests -> ``ok`` / ``due`` /
  ``overdue`` (docs/methods.md "Lots").
- :func:`stage_comparison`: stockpile -> delivery -> loose in lift ->
  compacted means of fines, D15 and D85, with the creep warning (fines in
  place rising by more than a margin over the delivered fines, or passing the
  fines limit while the delivered material met it) and the segregation
  warning (in-place D85 falling by more than a share of the delivered D85).
- :func:`drift_warnings`: the last k values of fines and of D15 each closer to
  a limit than the one before (docs/decisions.md).

Dates are ``YYYY-MM-DD`` texts (the day of ``sampled_at`` in UTC); the core has
no clock, so "today" is the request's ``as_of``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

#: The sampling stages, in the order material travels.
STAGES = ("stockpile", "delivery", "loose_in_lift", "compacted")
#: Stages of material in place (the creep comparison's "after").
IN_PLACE = ("loose_in_lift", "compacted")
#: Tests at these stages count toward the testing frequency and the PWL (material placed or being placed);
#: stockpile tests appear in the trends and the stage comparison only.
COUNTED_STAGES = ("delivery", "loose_in_lift", "compacted", None)

UNITS = ("m3", "t")

#: Defaults of the lot analysis (the project's numbers; examples, common practice, no source).
DEFAULTS = {
    "creep_margin_pct": 1.0,   # percentage points of fines, in place over delivered
    "d85_loss_share": 0.20,    # in-place D85 below delivered D85 by more than this share: coarse loss
    "drift_k": 3,              # last k tests each closer to a limit
}

#: Example testing rules offered to the user: examples of how a specification words it, not standards.
FREQUENCY_EXAMPLES = (
    {"id": "example-150m3-daily-source", "label": "Example: 1 test per 150 m3, at least 1 per day of placement, "
     "1 per change of source", "per_quantity": 150.0, "quantity_unit": "m3", "per_day": True, "per_source": True,
     "example": True},
    {"id": "example-300t-source", "label": "Example: 1 test per 300 t and 1 per change of source",
     "per_quantity": 300.0, "quantity_unit": "t", "per_day": False, "per_source": True, "example": True},
    {"id": "example-500m3", "label": "Example: 1 test per 500 m3", "per_quantity": 500.0, "quantity_unit": "m3",
     "per_day": False, "per_source": False, "example": True},
)

_RANK = {"ok": 0, "due": 1, "overdue": 2}


@dataclass(frozen=True)
class TestPoint:
    """One test of a lot, reduced to what the lot analysis uses.

    ``passing_pct`` maps an opening [mm] to the percent passing [%] at the
    test's own sieves; ``counted`` is False for a stockpile test, a test with
    no result, or an original that a retest replaces.
    """

    record_id: str
    sample_id: str
    sampled_at: str | None
    day: str | None
    stage: str | None
    source: str | None
    quantity: float | None
    quantity_unit: str | None
    ticket: str | None
    fines_pct: float | None
    d15_mm: float | None
    d85_mm: float | None
    cu: float | None
    passing_pct: dict
    verdict: str | None
    failing: tuple
    limits: dict
    counted: bool
    note: str | None = None


@dataclass(frozen=True)
class Rule:
    """The project's testing rule for a lot's material. ``per_quantity`` in ``quantity_unit`` (None: no
    quantity rule); ``per_day``: at least one test on each day of placement; ``per_source``: one test of
    each source placed."""

    per_quantity: float | None
    quantity_unit: str | None
    per_day: bool
    per_source: bool
    example: bool = False


@dataclass(frozen=True)
class Placement:
    """A day's placement in a lot: ``quantity`` in the lot's unit, from ``source`` (None: the lot's)."""

    day: str
    quantity: float
    source: str | None = None


@dataclass
class Frequency:
    status: str
    items: list = field(default_factory=list)
    placed_quantity: float | None = None
    quantity_from: str = ""
    tests_counted: int = 0
    tests_required: int | None = None

    def to_dict(self) -> dict:
        return {"status": self.status, "placed_quantity": self.placed_quantity, "quantity_from": self.quantity_from,
                "tests_counted": self.tests_counted, "tests_required": self.tests_required, "items": self.items}


def _worst(statuses) -> str:
    s = "ok"
    for x in statuses:
        if _RANK[x] > _RANK[s]:
            s = x
    return s


def frequency_status(rule: Rule | None, unit: str | None, placements: list[Placement], tests: list[TestPoint],
                     as_of: str | None, closed: bool, lot_source: str | None = None) -> Frequency:
    """The lot's testing against ``rule``.

    Placed quantity: the sum of ``placements`` when the lot logs them, else
    the sum of the quantities its counted tests represent (in ``unit``; a
    test in another unit is left out of the sum, see the op's findings; tests
    of one delivery ticket count its quantity once).

    - quantity: ``ceil(placed / per_quantity)`` tests are needed (one per
      ``per_quantity`` or part of it). Fewer: ``due`` while only the current,
      unfinished increment lacks its test, ``overdue`` once a whole increment
      (``floor(placed / per_quantity)``) has none, or the lot is closed;
    - day: each placement day needs a counted test sampled that day: a day
      before ``as_of`` (or any day of a closed lot) without one is
      ``overdue``, the ``as_of`` day itself ``due``;
    - source: each source placed needs a counted test of that source: the
      source of the latest placement ``due``, an earlier one ``overdue``.

    ``as_of`` (``YYYY-MM-DD``) defaults to the latest day the lot knows.
    """
    counted = [t for t in tests if t.counted]
    n = len(counted)
    if placements:
        placed = math.fsum(p.quantity for p in placements)
        qfrom = "placements"
    else:
        by = {}  # the tests of one delivery ticket represent its quantity once
        for t in counted:
            if t.quantity is not None and t.quantity_unit == unit:
                key = ("ticket", t.ticket) if t.ticket else ("test", t.record_id)
                by[key] = max(by.get(key, 0.0), t.quantity)
        placed = math.fsum(by.values()) if by else None
        qfrom = "tests" if by else ""
    freq = Frequency("ok", [], placed, qfrom, n, None)
    if rule is None:
        freq.status = "no_rule"
        return freq
    days_known = [p.day for p in placements] + [t.day for t in tests if t.day]
    if as_of is None and days_known:
        as_of = max(days_known)
    items = []
    if rule.per_quantity is not None:
        if placed is None:
            items.append({"rule": "quantity", "status": "ok",
                          "message": "no placed quantity recorded (no placements, no test quantities): "
                                     "the quantity rule cannot be counted yet"})
        else:
            ratio = placed / rule.per_quantity
            need = math.ceil(ratio) if placed > 0 else 0
            whole = math.floor(ratio)
            freq.tests_required = need
            if n >= need:
                st = "ok"
            elif closed or whole > n:
                st = "overdue"
            else:
                st = "due"
            per = f"{fmt(rule.per_quantity)} {rule.quantity_unit or unit or ''}".strip()
            msg = (f"{fmt(placed)} {unit or ''} placed: {need} test{'s' if need != 1 else ''} needed "
                   f"(1 per {per}), {n} done")
            if st != "ok":
                msg += f"; {need - n} to take"
            items.append({"rule": "quantity", "status": st, "message": msg, "needed": need, "done": n})
    if rule.per_day:
        place_days = sorted({p.day for p in placements}) if placements else sorted({t.day for t in counted if t.day})
        tested_days = {t.day for t in counted if t.day}
        if not placements:
            items.append({"rule": "day", "status": "ok", "message": "no placement days logged: only the days "
                          "of the tests are known, so a day without a test cannot be seen"})
        for d in place_days:
            if d in tested_days:
                continue
            st = "overdue" if (closed or (as_of is not None and d < as_of)) else "due"
            items.append({"rule": "day", "status": st, "day": d,
                          "message": f"placement on {d} has no test that day"})
    if rule.per_source:
        order = []
        for p in sorted(placements, key=lambda p: p.day):
            s = p.source or lot_source
            if s and s not in order:
                order.append(s)
        if not placements and lot_source:
            order.append(lot_source)
        tested_sources = {t.source or lot_source for t in counted}
        latest = None
        if placements:
            last = max(placements, key=lambda p: p.day)
            latest = last.source or lot_source
        for s in order:
            if s in tested_sources:
                continue
            st = "due" if (s == latest and not closed) else "overdue"
            items.append({"rule": "source", "status": st, "source": s, "message": f"no test of source {s}"})
    freq.items = items
    freq.status = _worst(i["status"] for i in items)
    return freq


def fmt(x: float) -> str:
    """A quantity for a message: whole numbers without decimals, else up to 3 significant digits past them."""
    return f"{x:.0f}" if float(x).is_integer() else f"{x:.4g}"


# ---------------------------------------------------------------------------
# Stage comparison (creep, segregation)
# ---------------------------------------------------------------------------

def _mean(vals):
    vals = [v for v in vals if v is not None]
    return math.fsum(vals) / len(vals) if vals else None


def stage_comparison(tests: list[TestPoint], fines_max_pct: float | None, margin_pct: float,
                     d85_loss_share: float) -> tuple[list[dict], list[dict]]:
    """Per-stage means (stockpile, delivery, loose in lift, compacted) and the creep and segregation warnings.

    "Before" is the delivered material (the stockpile when nothing was tested
    on delivery); "after" is the last in-place stage tested (compacted, else
    loose in lift). Creep: mean fines after - before > ``margin_pct``
    (percentage points), or fines after above ``fines_max_pct`` while before
    was at or below it. Segregation (loss of coarse fraction): D85 after below
    ``(1 - d85_loss_share)`` times D85 before. Unrounded values are compared.
    Tests replaced by a retest and tests without a result are left out.
    """
    rows = []
    by = {}
    for t in tests:
        if t.stage in STAGES and t.fines_pct is not None and t.note != "superseded":
            by.setdefault(t.stage, []).append(t)
    for st in STAGES:
        ts = by.get(st, [])
        if ts:
            rows.append({"stage": st, "n": len(ts), "fines_pct": _mean(t.fines_pct for t in ts),
                         "d15_mm": _mean(t.d15_mm for t in ts), "d85_mm": _mean(t.d85_mm for t in ts)})
    get = {r["stage"]: r for r in rows}
    before = get.get("delivery") or get.get("stockpile")
    after = get.get("compacted") or get.get("loose_in_lift")
    warnings = []
    if before is None or after is None:
        return rows, warnings
    rise = after["fines_pct"] - before["fines_pct"]
    crossed = (fines_max_pct is not None and after["fines_pct"] > fines_max_pct
               and before["fines_pct"] <= fines_max_pct)
    if rise > margin_pct or crossed:
        why = []
        if rise > margin_pct:
            why.append(f"fines rose {rise:.1f} points from {_stage_word(before['stage'])} ({before['fines_pct']:.1f} %) "
                       f"to {_stage_word(after['stage'])} ({after['fines_pct']:.1f} %), more than the "
                       f"{margin_pct:g}-point margin")
        if crossed:
            why.append(f"{_stage_word(after['stage'])} fines {after['fines_pct']:.1f} % pass the "
                       f"{fines_max_pct:g} % limit while {_stage_word(before['stage'])} material met it")
        warnings.append({"code": "creep", "measure": "fines_pct", "before": before["stage"], "after": after["stage"],
                         "rise_pct": rise, "margin_pct": margin_pct, "crossed_limit": crossed,
                         "message": "Fines creep: " + "; ".join(why) + "."})
    if before["d85_mm"] is not None and after["d85_mm"] is not None and before["d85_mm"] > 0:
        if after["d85_mm"] < (1.0 - d85_loss_share) * before["d85_mm"]:
            warnings.append({"code": "coarse_loss", "measure": "d85_mm", "before": before["stage"],
                             "after": after["stage"],
                             "message": f"Loss of coarse fraction: D85 {after['d85_mm']:.3g} mm "
                                        f"{_stage_word(after['stage'])} against {before['d85_mm']:.3g} mm "
                                        f"{_stage_word(before['stage'])}, more than {d85_loss_share * 100:g} % less "
                                        "(segregation or breakdown)."})
    return rows, warnings


def _stage_word(stage: str) -> str:
    return {"stockpile": "stockpile", "delivery": "delivered", "loose_in_lift": "loose in the lift",
            "compacted": "compacted"}[stage]


# ---------------------------------------------------------------------------
# Drift
# ---------------------------------------------------------------------------

def _toward(values, limit, k):
    """True when the last ``k`` values are each strictly closer to ``limit`` than the one before."""
    if limit is None or len(values) < k:
        return False
    last = values[-k:]
    dist = [abs(limit - v) for v in last]
    return all(b < a for a, b in zip(dist, dist[1:]))


def drift_warnings(tests: list[TestPoint], limits: dict, k: int, subject: str = "lot") -> list[dict]:
    """Fines moving toward the fines limit, D15 toward D15F max or min, over the last ``k`` tests.

    The tests are taken in sampling order (every stage; retested originals
    and tests without a result left out). A warning is given when each of the
    last ``k`` values is closer to the limit than the one before (for D15,
    toward the nearer of the two limits at the last test); values already
    beyond the limit fail their own checks and are still reported here.
    """
    seq = [t for t in tests if t.note != "superseded" and t.fines_pct is not None]
    out = []
    fines = [t.fines_pct for t in seq]
    fmax = limits.get("fines_max_pct")
    if _toward(fines, fmax, k):
        out.append({"code": "drift", "measure": "fines_pct", "limit": fmax, "k": k,
                    "tests": [t.sample_id for t in seq[-k:]],
                    "message": f"Fines drift: the last {k} tests of this {subject} rise "
                               f"{'to and past' if fines[-1] > fmax else 'toward'} the {fmax:g} % limit "
                               f"({', '.join(f'{v:.1f}' for v in fines[-k:])} %)."})
    d15 = [t.d15_mm for t in seq if t.d15_mm is not None]
    d15_tests = [t for t in seq if t.d15_mm is not None]
    hi, lo = limits.get("d15_max_mm"), limits.get("d15_min_mm")
    if d15:
        cands = [(abs(x - d15[-1]), x, name) for x, name in ((hi, "D15F max"), (lo, "D15F min")) if x is not None]
        if cands:
            _, lim, name = min(cands)
            if _toward(d15, lim, k):
                out.append({"code": "drift", "measure": "d15_mm", "limit": lim, "k": k,
                            "tests": [t.sample_id for t in d15_tests[-k:]],
                            "message": f"D15 drift: the last {k} tests of this {subject} move toward {name} "
                                       f"{lim:.3g} mm ({', '.join(f'{v:.3g}' for v in d15[-k:])} mm)"
                                       + (", and past it." if (d15[-1] > lim if lim == hi else d15[-1] < lim) else ".")})
    return out


def worst_status(statuses) -> str:
    """The most urgent of frequency statuses (``overdue`` > ``due`` > ``ok``; others ignored)."""
    return _worst(s for s in statuses if s in _RANK)
