"""Small helpers shared by the criteria modules: building a registered check, and bounds of D-values
outside the measured curve (:class:`Range`, :func:`decide`)."""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..curve import Curve, size_at
from ..findings import FAIL, NEEDS_DATA, PASS, Check, compare
from .registry import source_text


def make_check(check_id: str, status: str, message: str, *, variant: str = "", value=None, limit=None,
               relation=None, unit: str = "", extra: dict | None = None, advisory: bool = False) -> Check:
    """A :class:`~tamis.findings.Check` whose ``source`` comes from the registry."""
    return Check(id=check_id, status=status, message=message, value=value, limit=limit, relation=relation,
                 unit=unit, source=source_text(check_id, variant), extra=dict(extra or {}), advisory=advisory)


def limit_check(check_id: str, value, relation: str, limit, unit: str, what: str, *, variant: str = "",
                extra: dict | None = None, missing: str = "") -> Check:
    """Compare ``value relation limit`` on unrounded numbers; ``needs_data`` when either is None."""
    if value is None or limit is None:
        return make_check(check_id, NEEDS_DATA, missing or f"{what}: not enough data to decide.",
                          variant=variant, value=value, limit=limit, relation=relation, unit=unit, extra=extra)
    ok = compare(value, relation, limit)
    msg = f"{what}: {value:.4g} {unit} {'meets' if ok else 'breaks'} the limit {relation} {limit:.4g} {unit}."
    return make_check(check_id, PASS if ok else FAIL, msg, variant=variant, value=value, limit=limit,
                      relation=relation, unit=unit, extra=extra)


# ------------------------------------------------------------ bound reasoning
# A D-value outside the measured curve is not extrapolated, but it is bounded: below the finest point it is
# at most that point's size, above the coarsest at least that size (percent passing never rises as sizes
# fall). Every limit the rules build from a D-value is non-decreasing in it (a multiple, a multiple with a
# floor, the category-3 line with its 0.7 mm floor, the segregation table), so a bounded D-value gives a
# bounded limit, and a check whose outcome is the same over the whole range is decided
# (docs/decisions.md D8).

@dataclass(frozen=True)
class Range:
    """A quantity known to lie in [lo, hi] (``hi`` may be ``math.inf``); ``how`` says where the bound comes
    from ('' when the quantity was read on the curve and ``lo == hi``)."""

    lo: float
    hi: float
    how: str = ""

    @property
    def exact(self) -> bool:
        return self.lo == self.hi

    def map(self, f) -> "Range":
        """The range of a non-decreasing function ``f`` of this quantity."""
        return Range(f(self.lo), f(self.hi) if math.isfinite(self.hi) else math.inf, self.how)

    def json(self) -> list:
        """[lo, hi] for a check's extra keys (an unbounded end is null)."""
        return [self.lo if math.isfinite(self.lo) else None, self.hi if math.isfinite(self.hi) else None]


def exact(v: float) -> Range:
    return Range(v, v)


def d_range(curve: Curve, pct: float, name: str) -> Range | None:
    """The size at ``pct`` % passing as a :class:`Range`: exact when the curve brackets it, (0, finest]
    when it lies below the finest point, [coarsest, inf) above the coarsest; None otherwise."""
    v = size_at(curve, pct)
    if v is not None:
        return exact(v)
    finest_mm, finest_pct = curve.points[-1]
    if finest_pct > pct:
        return Range(0.0, finest_mm, f"{name} lies below the finest point, {finest_mm:g} mm ({finest_pct:.3g} % "
                                     "passing), so it is at most that size")
    coarsest_mm, coarsest_pct = curve.points[0]
    if coarsest_pct < pct:
        return Range(coarsest_mm, math.inf, f"{name} lies above the coarsest point, {coarsest_mm:g} mm "
                                            f"({coarsest_pct:.3g} % passing), so it is at least that size")
    return None


def decide(value: Range, relation: str, limit: Range) -> bool | None:
    """True when ``value relation limit`` holds for every value and limit in their ranges, False when it
    fails for all of them, None when the ranges leave it open (compared unrounded)."""
    if relation in ("<=", "<"):
        if compare(value.hi, relation, limit.lo):
            return True
        if not compare(value.lo, relation, limit.hi):
            return False
        return None
    if compare(value.lo, relation, limit.hi):
        return True
    if not compare(value.hi, relation, limit.lo):
        return False
    return None


def decided_by(value: Range, limit: Range) -> str:
    """The sentence naming the bounds that decided a check ('' when both were read exactly)."""
    parts = [r.how for r in (value, limit) if r.how]
    return (" Decided by bounds: " + "; ".join(parts) + ".") if parts else ""
