"""Checks on the filter material itself: fines, plasticity, maximum size, segregation.

Sources (registry ids ``filter.fines``, ``filter.plasticity``,
``filter.max_size``, ``filter.segregation``): NRCS NEH 633-26 (October 1994)
design step 8 and the segregation table, same values in FEMA 2011 and USBR 2011; from
memory. Thresholds in :mod:`tamis.criteria.tables`. A D-value or percentage
the curve does not reach is bounded, never extrapolated, and decides a check
when the bound leaves one outcome (docs/decisions.md D8).
"""

from __future__ import annotations

from ..curve import Curve, passing_at, size_at
from ..findings import FAIL, NEEDS_DATA, NOT_APPLICABLE, PASS, Check
from .checks import Range, d_range, decide, decided_by, limit_check, make_check
from .tables import MATERIAL, NO_200_MM, SEGREGATION_ROWS, segregation_d90_max_mm


def fines_check(curve: Curve) -> Check:
    """``filter.fines``: percent passing 0.075 mm [%] <= 5 %.

    When the curve stops above 0.075 mm, at most the finest point's percentage passes 0.075 mm (percent
    passing never rises as sizes fall): that bound decides a pass when it is within the limit."""
    p = passing_at(curve, NO_200_MM)
    lim = MATERIAL["fines_max_pct"]
    if p is None:
        finest_mm, finest_pct = curve.points[-1]
        if finest_mm > NO_200_MM and finest_pct <= lim:
            return make_check("filter.fines", PASS,
                              f"Fines (passing 0.075 mm) are at most {finest_pct:.4g} %, within the limit <= {lim:g} %."
                              f" Decided by bounds: the curve stops at {finest_mm:g} mm with {finest_pct:.4g} % "
                              "passing, and no more than that can pass 0.075 mm.",
                              value=None, limit=lim, relation="<=", unit="%",
                              extra={"value_range_pct": [0.0, finest_pct]})
    return limit_check("filter.fines", p, "<=", lim, "%", "Fines (passing 0.075 mm)",
                       missing="Fines cannot be checked: the curve does not reach 0.075 mm"
                               + ("" if p is not None else
                                  f" and {curve.points[-1][1]:.4g} % still passes its finest sieve") + ".")


def plasticity_check(curve: Curve, props: dict) -> Check:
    """``filter.plasticity``: fines must be nonplastic (NP or PI = 0)."""
    fines = passing_at(curve, NO_200_MM)
    pi = props.get("plasticity_index")
    np_flag = props.get("nonplastic")
    if fines is not None and fines <= 0.0:
        return make_check("filter.plasticity", NOT_APPLICABLE, "No fines passing 0.075 mm: plasticity does not apply.")
    if np_flag is True and pi not in (None, 0, 0.0):
        return make_check("filter.plasticity", FAIL,
                          f"The sample is marked nonplastic but has a plasticity index of {pi:g}; "
                          "treated as plastic until resolved.", value=pi, limit=0.0, relation="<=", unit="%")
    if np_flag is True:
        return make_check("filter.plasticity", PASS, "The fines are reported nonplastic.", value=0.0, limit=0.0,
                          relation="<=", unit="%")
    if pi is not None:
        ok = pi <= 0.0
        return make_check("filter.plasticity", PASS if ok else FAIL,
                          f"Plasticity index of the fines {pi:g} " + ("= 0: nonplastic." if ok else
                          "> 0: the fines are plastic and could hold an open crack."),
                          value=pi, limit=0.0, relation="<=", unit="%")
    if np_flag is False:
        return make_check("filter.plasticity", FAIL, "The fines are reported plastic.", limit=0.0, relation="<=",
                          unit="%")
    return make_check("filter.plasticity", NEEDS_DATA,
                      "Plasticity of the fines is not reported (give plasticity.nonplastic or the plasticity index).",
                      limit=0.0, relation="<=", unit="%")


def max_size_check(curve: Curve) -> Check:
    """``filter.max_size``: D100 [mm] <= 75 mm, D100 being the finest sieve passing 100 %.

    When the coarsest sieve does not pass 100 %, D100 is larger than that sieve: a coarsest sieve of 75 mm
    or more then decides a fail."""
    d100 = size_at(curve, 100.0)
    lim = MATERIAL["d100_max_mm"]
    if d100 is None:
        top_mm, top_pct = curve.points[0]
        if top_pct < 100.0 and top_mm >= lim:
            return make_check("filter.max_size", FAIL,
                              f"Maximum size D100 is larger than {top_mm:g} mm, above the limit <= {lim:g} mm. "
                              f"Decided by bounds: {100.0 - top_pct:.4g} % is retained on the coarsest sieve, "
                              f"{top_mm:g} mm, so D100 exceeds that size.",
                              value=None, limit=lim, relation="<=", unit="mm",
                              extra={"value_range_mm": [top_mm, None]})
    return limit_check("filter.max_size", d100, "<=", lim, "mm", "Maximum size D100",
                       missing="Maximum size cannot be checked: the coarsest sieve does not pass 100 %.")


def _d90_max_range(d10: Range) -> Range:
    """Maximum D90 [mm] for a D10 in ``d10`` (the table is non-decreasing in D10)."""
    return Range(segregation_d90_max_mm(d10.lo), segregation_d90_max_mm(d10.hi) if d10.hi != float("inf")
                 else SEGREGATION_ROWS[-1][1], d10.how)


def segregation_d10_row(curve: Curve) -> tuple[float | None, float | None, str]:
    """(D10 [mm] or None, D90 max [mm] or None, how D10 was read); the D90 max is given when the table
    row is fixed, by D10 read on the curve or by its bounds."""
    d10 = d_range(curve, 10.0, "D10")
    if d10 is None:
        return None, None, "D10 is outside the measured curve"
    row = _d90_max_range(d10)
    if d10.exact:
        return d10.lo, row.lo, "D10 read on the curve"
    if row.exact:
        return None, row.lo, f"{d10.how}, and every D10 up to that size falls in the same row"
    return None, None, d10.how


def segregation_check(curve: Curve) -> Check:
    """``filter.segregation``: D90 [mm] <= D90 max for the sample's D10 (segregation table).

    Both D-values may be bounded instead of read (:func:`~tamis.criteria.checks.d_range`): the D90
    max is non-decreasing in D10, so the check is decided when D90's range lies wholly within the
    smallest D90 max of D10's range (pass) or wholly above the largest (fail)."""
    d10r = d_range(curve, 10.0, "D10")
    d90r = d_range(curve, 90.0, "D90")
    d10, d90_max, how = segregation_d10_row(curve)
    d90 = d90r.lo if d90r is not None and d90r.exact else None
    extra = {"d10_mm": d10, "d10_basis": how}
    if d10r is None or d90r is None:
        what = "D10" if d10r is None else "D90"
        return make_check("filter.segregation", NEEDS_DATA, f"Segregation cannot be checked: {what} is outside "
                          "the measured curve.", value=d90, limit=d90_max, relation="<=", unit="mm", extra=extra)
    row = _d90_max_range(d10r)
    if d90r.exact and row.exact:
        return limit_check("filter.segregation", d90, "<=", row.lo, "mm", f"D90 for this D10 ({how})", extra=extra)
    ok = decide(d90r, "<=", row)
    if ok is None:
        return make_check("filter.segregation", NEEDS_DATA,
                          "Segregation cannot be checked: the bounds leave it open." +
                          decided_by(d90r, row).replace(" Decided by bounds:", " Known bounds:"),
                          value=d90, limit=d90_max, relation="<=", unit="mm", extra=extra)
    v, lim = (d90r.hi, row.lo) if ok else (d90r.lo, row.hi)
    if not d90r.exact:
        extra["value_range_mm"] = d90r.json()
    msg = (f"D90 {'at most ' if ok and not d90r.exact else ('at least ' if not d90r.exact else '')}{v:.4g} mm "
           f"{'meets' if ok else 'breaks'} the limit <= {lim:.4g} mm for this D10." + decided_by(d90r, row))
    return make_check("filter.segregation", PASS if ok else FAIL, msg, value=d90, limit=lim, relation="<=",
                      unit="mm", extra=extra)


def material_checks(curve: Curve, props: dict) -> list[Check]:
    """The four filter-material checks, in a fixed order."""
    return [fines_check(curve), plasticity_check(curve, props), max_size_check(curve), segregation_check(curve)]


def material_limits(curve: Curve) -> dict:
    _, d90_max, _ = segregation_d10_row(curve)
    return {"fines_max_pct": MATERIAL["fines_max_pct"], "d100_max_mm": MATERIAL["d100_max_mm"],
            "d90_max_mm": d90_max}
