"""Checks on the filter material itself: fines, plasticity, maximum size, segregation.

Sources (registry ids ``filter.fines``, ``filter.plasticity``,
``filter.max_size``, ``filter.segregation``): NRCS NEH 633-26 (October 1994)
design step 8 and the segregation table, same values in FEMA 2011 and USBR 2011; from
memory. Thresholds in :mod:`tamis.criteria.tables`.
"""

from __future__ import annotations

from ..lab.curve import Curve, passing_at, size_at
from ..checks import FAIL, NEEDS_DATA, NOT_APPLICABLE, PASS, Check
from ..registry import limit_check, make_check
from .tables import MATERIAL, NO_200_MM, SEGREGATION_ROWS, segregation_d90_max_mm


def fines_check(curve: Curve) -> Check:
    """``filter.fines``: percent passing 0.075 mm [%] <= 5 %."""
    p = passing_at(curve, NO_200_MM)
    return limit_check("filter.fines", p, "<=", MATERIAL["fines_max_pct"], "%", "Fines (passing 0.075 mm)",
                       missing="Fines cannot be checked: the curve does not reach 0.075 mm.")


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
    """``filter.max_size``: D100 [mm] <= 75 mm, D100 being the finest sieve passing 100 %."""
    d100 = size_at(curve, 100.0)
    return limit_check("filter.max_size", d100, "<=", MATERIAL["d100_max_mm"], "mm", "Maximum size D100",
                       missing="Maximum size cannot be checked: the coarsest sieve does not pass 100 %.")


def segregation_d10_row(curve: Curve) -> tuple[float | None, float | None, str]:
    """(D10 [mm] or None, D90 max [mm] or None, how D10 was read)."""
    d10 = size_at(curve, 10.0)
    if d10 is not None:
        return d10, segregation_d90_max_mm(d10), "D10 read on the curve"
    finest_mm, finest_pct = curve.points[-1]
    first_edge = SEGREGATION_ROWS[0][0]
    if finest_pct > 10.0 and finest_mm <= first_edge:
        return None, SEGREGATION_ROWS[0][1], (f"D10 lies below the finest sieve {finest_mm:g} mm, which is at most "
                                              f"{first_edge:g} mm: the first row applies")
    return None, None, "D10 is outside the measured curve"


def segregation_check(curve: Curve) -> Check:
    """``filter.segregation``: D90 [mm] <= D90 max for the sample's D10 (segregation table)."""
    d10, d90_max, how = segregation_d10_row(curve)
    d90 = size_at(curve, 90.0)
    extra = {"d10_mm": d10, "d10_basis": how}
    if d90_max is None:
        return make_check("filter.segregation", NEEDS_DATA, f"Segregation cannot be checked: {how}.", value=d90,
                          relation="<=", unit="mm", extra=extra)
    return limit_check("filter.segregation", d90, "<=", d90_max, "mm", f"D90 for this D10 ({how})", extra=extra,
                       missing="Segregation cannot be checked: D90 is outside the measured curve.")


def material_checks(curve: Curve, props: dict) -> list[Check]:
    """The four filter-material checks, in a fixed order."""
    return [fines_check(curve), plasticity_check(curve, props), max_size_check(curve), segregation_check(curve)]


def material_limits(curve: Curve) -> dict:
    _, d90_max, _ = segregation_d10_row(curve)
    return {"fines_max_pct": MATERIAL["fines_max_pct"], "d100_max_mm": MATERIAL["d100_max_mm"],
            "d90_max_mm": d90_max}
