"""Filter against base: the retention (maximum D15F) and permeability (minimum
D15F) checks, for every rule set.

Sources per rule set are in the registry (``filter.retention`` and
``filter.permeability`` variants); thresholds in :mod:`tamis.criteria.tables`.
"""

from __future__ import annotations

import math
from dataclasses import replace

from ..findings import FAIL, NEEDS_DATA, PASS, WARN, Check
from .base import BaseAnalysis
from .checks import Range, d_range, decide, decided_by, exact, make_check
from .nrcs import d15f_max_mm, d15f_min_mm
from .terzaghi import terzaghi_d15f_max_mm, terzaghi_d15f_min_mm


def _with_how(lim: Range, d85: Range, rule_name: str) -> Range:
    """``lim`` with the sentence saying how the bound on d85B bounds it."""
    if d85.exact:
        return lim
    if lim.exact:
        return Range(lim.lo, lim.hi, f"{d85.how}; {rule_name} is then {lim.lo:.4g} mm whatever d85B is "
                                     "(the floor governs)")
    hi = f"{lim.hi:.4g} mm" if math.isfinite(lim.hi) else "unbounded"
    return Range(lim.lo, lim.hi, f"{d85.how}; the maximum is then between {lim.lo:.4g} mm and {hi}")


def retention_limit(b: BaseAnalysis, rs: dict, rules: dict) -> dict:
    """Maximum D15F [mm] for base ``b`` under rule set ``rs``.

    Returns ``{"limit_mm", "limit_range", "rule", "alternatives": [(label, limit_mm)],
    "alternative_ranges": [(label, Range)], "caveats": [str]}``; ``limit_mm`` is None unless the limit
    is known exactly, ``limit_range`` is a :class:`Range` (None when the base lacks the data). Every
    limit is non-decreasing in d85B, so a d85B outside the curve bounds it (and a floor can fix it).
    ``alternatives`` are limits that a conservative reading also asks the filter to meet for a pass
    (the other side of the 85 % edge; the dispersive limit when dispersion is unknown); failing only
    those gives ``warn``. ``alternatives`` lists only the exactly known ones.
    """
    out = {"limit_mm": None, "limit_range": None, "rule": "", "alternatives": [], "alternative_ranges": [],
           "caveats": []}
    d85 = d_range(b.retention_curve, 85.0, "d85B")
    if rs["family"] == "terzaghi":
        if d85 is None:
            return out
        ratio = rules["terzaghi_ratio"]
        out["limit_range"] = _with_how(d85.map(lambda d: terzaghi_d15f_max_mm(d, ratio)), d85, "the maximum")
        out["rule"] = f"{ratio:g} x D85B"
        out["limit_mm"] = out["limit_range"].lo if out["limit_range"].exact else None
        return out
    if b.category is None or d85 is None:
        return out
    table = rs["retention"]
    disp = bool(b.dispersive)

    def limit(category, dispersive):
        lim = d85.map(lambda d: d15f_max_mm(category, b.a_pct, d, dispersive, table)[0])
        return _with_how(lim, d85, "the maximum")

    out["limit_range"] = limit(b.category, disp)
    out["rule"] = d15f_max_mm(b.category, b.a_pct, d85.lo if d85.exact else d85.hi, disp, table)[1]
    out["limit_mm"] = out["limit_range"].lo if out["limit_range"].exact else None
    alts = []
    if b.near_85:
        other = 2 if b.category == 1 else 1
        alts.append((f"category {other} (A within 2 points of 85 %)", limit(other, disp)))
    if b.dispersive is None and b.category in (1, 2):
        alts.append(("dispersive base (dispersion not reported)", limit(b.category, True)))
    out["alternative_ranges"] = alts
    out["alternatives"] = [(c, r.lo) for c, r in alts if r.exact]
    if b.category == 3 and disp and not table["cat3_dispersive_known"]:
        out["caveats"].append("No dispersive variant of the category-3 limit is known here; the non-dispersive "
                              "limit was used and the engineer must decide.")
    return out


def retention_check(d15f_mm: float | None, b: BaseAnalysis, rs: dict, rules: dict,
                    d15f_range: Range | None = None) -> tuple[Check, dict]:
    """``filter.retention``: D15F <= maximum D15F, decided on bounds where the curves leave a D-value
    unmeasured (``d15f_range`` as for :func:`permeability_check`). Returns the check and the limit details."""
    crit = rules["criteria"]
    lim = retention_limit(b, rs, rules)
    extra = {"base_category": b.category, "a_pct": b.a_pct, "d85b_mm": b.d85b_mm, "rule": lim["rule"],
             "alternative_limits_mm": [{"case": c, "limit_mm": v} for c, v in lim["alternatives"]]}
    value = exact(d15f_mm) if d15f_mm is not None else d15f_range
    why = ("the filter's D15 is outside its measured curve" if value is None else
           "the base's category or d85B could not be found from its curve")
    rule = lim["rule"]
    chk = _bounded_check(
        "filter.retention", crit, value, "<=", lim["limit_range"], extra, f"Retention cannot be checked: {why}",
        lambda v, m: f"D15 of the filter {v:.4g} mm is within the maximum {m:.4g} mm ({rule}).",
        lambda v, m: f"D15 of the filter {v:.4g} mm exceeds the maximum {m:.4g} mm ({rule}): the filter may not "
                     "hold back the base.")
    if chk.status != PASS:
        return chk, lim
    alt = [(c, r, decide(value, "<=", r)) for c, r in lim["alternative_ranges"]]
    failed = [(c, r) for c, r, ok in alt if ok is False]
    open_ = [(c, r) for c, r, ok in alt if ok is None]
    status, msg = PASS, chk.message
    if failed:
        status = WARN
        msg = (f"D15 of the filter {value.hi:.4g} mm meets the maximum {lim['limit_range'].lo:.4g} mm ({rule}) but not "
               + "; ".join(f"{r.hi:.4g} mm for {c}" for c, r in failed) + "." + decided_by(value, lim["limit_range"]))
    elif open_:
        status = NEEDS_DATA
        msg += " The bounds leave open " + "; ".join(f"the limit for {c}" for c, _ in open_) + "."
    if lim["caveats"]:
        msg += " " + " ".join(lim["caveats"])
        if status == PASS:
            status = WARN
    return replace(chk, status=status, message=msg), lim


def permeability_limit_range(b: BaseAnalysis, rs: dict, rules: dict) -> tuple[Range | None, str]:
    """Minimum D15F [mm] for base ``b`` as a :class:`Range` (None without a bound on d15B) and the rule text.

    The limit m x d15B, not less than the floor, is non-decreasing in d15B; when d15B lies below the base's
    finest point the limit lies between the floor and max(m x that size, floor), and when m x that size is
    at most the floor, the floor governs and the limit is the floor exactly."""
    d15 = d_range(b.curve, 15.0, "d15B")
    if d15 is None:
        return None, ""
    if rs["family"] == "terzaghi":
        r = rules["terzaghi_ratio"]
        lim = d15.map(lambda d: terzaghi_d15f_min_mm(d, r))
        if not d15.exact:
            lim = Range(lim.lo, lim.hi, f"{d15.how}; {r:g} x D15B is at most {lim.hi:.4g} mm")
        return lim, f"{r:g} x D15B"
    m, f = rs["permeability_multiplier"], rs["permeability_floor_mm"]
    rule = f"{m:g} x d15B (before regrading), not less than {f:g} mm"
    lim = d15.map(lambda d: d15f_min_mm(d, m, f))
    if not d15.exact:
        if lim.exact:
            how = (f"{d15.how}; {m:g} x d15B is then at most {m:g} x {d15.hi:g} = {m * d15.hi:.4g} mm, under the "
                   f"{f:g} mm floor: the floor governs")
        else:
            how = f"{d15.how}; the minimum is then between {lim.lo:.4g} and {lim.hi:.4g} mm"
        lim = Range(lim.lo, lim.hi, how)
    return lim, rule


def permeability_limit(b: BaseAnalysis, rs: dict, rules: dict) -> tuple[float | None, str]:
    """Minimum D15F [mm] for base ``b`` and the rule text; None unless the limit is known exactly (d15B
    read on the curve, or bounded so that the floor governs: :func:`permeability_limit_range`)."""
    lim, rule = permeability_limit_range(b, rs, rules)
    if lim is None or not lim.exact:
        return None, rule
    return lim.lo, rule


def _bounded_check(check_id: str, variant: str, value: Range | None, relation: str, limit: Range | None,
                   extra: dict, what_missing: str, pass_text, fail_text) -> Check:
    """A filter-against-base check decided on ranges (:func:`decide`); ``pass_text(v, l)`` and
    ``fail_text(v, l)`` give the message for the deciding value and limit (unrounded numbers)."""
    v_num = value.lo if value is not None and value.exact else None
    l_num = limit.lo if limit is not None and limit.exact else None
    if value is None or limit is None:
        return make_check(check_id, NEEDS_DATA, f"{what_missing}.", variant=variant, value=v_num, limit=l_num,
                          relation=relation, unit="mm", extra=extra)
    ok = decide(value, relation, limit)
    if not value.exact:
        extra["value_range_mm"] = value.json()
    if not limit.exact:
        extra["limit_range_mm"] = limit.json()
    if ok is None:
        return make_check(check_id, NEEDS_DATA,
                          f"{what_missing}: the bounds leave it open." + decided_by(value, limit).replace(
                              " Decided by bounds:", " Known bounds:"),
                          variant=variant, value=v_num, limit=l_num, relation=relation, unit="mm", extra=extra)
    upper = relation in ("<=", "<")
    # the deciding ends: for a pass the worst value against the strictest limit, for a fail the best ones
    v = value.hi if upper == ok else value.lo
    lim = limit.lo if upper == ok else limit.hi
    if not limit.exact:
        l_num = lim
        extra["limit_bound"] = "lower" if upper == ok else "upper"
    msg = (pass_text(v, lim) if ok else fail_text(v, lim)) + decided_by(value, limit)
    return make_check(check_id, PASS if ok else FAIL, msg, variant=variant, value=v_num, limit=l_num,
                      relation=relation, unit="mm", extra=extra)


def permeability_check(d15f_mm: float | None, b: BaseAnalysis, rs: dict, rules: dict,
                       d15f_range: Range | None = None) -> Check:
    """``filter.permeability``: D15F >= minimum D15F, decided on bounds where the curves leave a D-value
    unmeasured (``d15f_range``: the filter's D15 as a :class:`Range` when it is outside its curve)."""
    crit = rules["criteria"]
    limit, rule = permeability_limit_range(b, rs, rules)
    extra = {"d15b_mm": b.d15b_mm, "rule": rule}
    value = exact(d15f_mm) if d15f_mm is not None else d15f_range
    why = ("the filter's D15 is outside its measured curve" if value is None else
           "the base's d15 lies outside its measured curve (add hydrometer points)")
    return _bounded_check(
        "filter.permeability", crit, value, ">=", limit, extra, f"Permeability cannot be checked: {why}",
        lambda v, lim: f"D15 of the filter {v:.4g} mm is at least the minimum {lim:.4g} mm ({rule}).",
        lambda v, lim: f"D15 of the filter {v:.4g} mm is below the minimum {lim:.4g} mm ({rule}): the filter may "
                       "not drain freely enough.")
