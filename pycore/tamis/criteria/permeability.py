"""Permeability estimates from the gradation: Hazen and Kozeny-Carman (Carrier 2003).

These are estimates, never rules: their checks have status ``not_applicable``
so they never enter a verdict; their ``value`` is k [cm/s]. The validity
ranges are data (:data:`tamis.criteria.tables.HAZEN_VALIDITY`); input outside them gives a warning
finding, never a clamp.

References
----------
Carrier, W.D. (2003) Goodbye, Hazen; Hello, Kozeny-Carman. J. Geotech.
Geoenviron. Eng. 129(11):1054-1056. Hazen form k = C_H D10^2 (Eq. 1, read);
C_H = 100 and the validity range, and the Kozeny-Carman constants, from memory.
"""

from __future__ import annotations

import math

from ..lab.curve import Curve, coefficient_of_uniformity, exp, ln, size_at
from ..checks import NOT_APPLICABLE, Check, Finding
from ..registry import make_check
from .tables import HAZEN_VALIDITY, KC, SHAPE_FACTORS


_SRC_HAZEN = "Carrier 2003, JGGE 129(11), Eq. 1 (Hazen); validity from memory"


def _power(x: float, a: float) -> float:
    """x ** a for x > 0 through the core's platform-independent ln/exp, so CPython
    and Pyodide give the same bits."""
    return exp(a * ln(x))


def hazen_k_cm_s(d10_mm: float, c_h: float = 100.0) -> float:
    """Hazen: k [cm/s] = C_H x D10[cm]^2.

    >>> round(hazen_k_cm_s(0.2), 6)
    0.04
    """
    d10_cm = d10_mm / 10.0
    return c_h * d10_cm * d10_cm


def hazen_estimate(curve: Curve, c_h: float = 100.0) -> tuple[Check, list[Finding]]:
    """``permeability.hazen``: the estimate with warnings outside its validity."""
    d10, d60 = size_at(curve, 10.0), size_at(curve, 60.0)
    findings = []
    extra = {"estimate": True, "d10_mm": d10, "c_h": c_h, "validity": dict(HAZEN_VALIDITY)}
    if d10 is None:
        return make_check("permeability.hazen", NOT_APPLICABLE,
                          "Hazen estimate not made: D10 is outside the measured curve.", unit="cm/s",
                          extra=extra), findings
    k = hazen_k_cm_s(d10, c_h)
    cu = coefficient_of_uniformity(d60, d10)
    v = HAZEN_VALIDITY
    if not (v["d10_min_mm"] <= d10 <= v["d10_max_mm"]):
        findings.append(Finding("warning", "hazen_range",
                                f"Hazen estimate: D10 = {d10:.3g} mm is outside {v['d10_min_mm']:g}-"
                                f"{v['d10_max_mm']:g} mm.", "", _SRC_HAZEN))
    if cu is None or cu >= v["cu_max"]:
        findings.append(Finding("warning", "hazen_range",
                                "Hazen estimate: Cu " + ("unknown" if cu is None else f"= {cu:.3g}")
                                + f" is not below {v['cu_max']:g}; Hazen applies to uniform clean sands.",
                                "", _SRC_HAZEN))
    return make_check("permeability.hazen", NOT_APPLICABLE,
                      f"Estimate only (Hazen, C_H = {c_h:g}): k is about {k:.2g} cm/s.", value=k, unit="cm/s",
                      extra=extra), findings


def effective_diameter_mm(curve: Curve, pan_lower_mm: float | None = None) -> tuple[float | None, str]:
    """Carrier's effective diameter [mm]: D_eff = 100 / sum(f_i / (D_l^0.404 D_s^0.595)).

    The sum is taken with sizes in cm, as Carrier (2003) writes it (the
    exponents add up to 0.999, so the unit matters), and the result is
    returned in mm. The fraction below the finest sieve is spread down to
    ``pan_lower_mm`` (default half the finest sieve). None when the coarsest
    sieve does not pass 100 % (the fraction above it has no size range).
    """
    pts = curve.points
    if pts[0][1] < 100.0:
        return None, "the coarsest sieve does not pass 100 %"

    def term(f, d_l_mm, d_s_mm):
        return f / _power(d_l_mm / 10.0, KC["exp_large"]) / _power(d_s_mm / 10.0, KC["exp_small"])

    total = 0.0
    for (d_l, p_l), (d_s, p_s) in zip(pts, pts[1:]):
        if p_l - p_s > 0:
            total += term(p_l - p_s, d_l, d_s)
    finest_mm, finest_pct = pts[-1]
    note = "no fraction below the finest sieve"
    if finest_pct > 0:
        low = pan_lower_mm if pan_lower_mm is not None else finest_mm / 2.0
        if low >= finest_mm:
            return None, f"kc_pan_lower_mm = {low:g} mm is not below the finest sieve {finest_mm:g} mm"
        total += term(finest_pct, finest_mm, low)
        note = f"the {finest_pct:.3g} % below {finest_mm:g} mm was spread down to {low:.3g} mm (assumed)"
    if total <= 0:
        return None, "the curve has no mass between sieves"
    return 100.0 / total * 10.0, note


def kozeny_carman_k_cm_s(d_eff_mm: float, void_ratio: float, shape_factor: float) -> float:
    """k [cm/s] = 1.99e4 x D_eff[cm]^2 x (1/SF^2) x e^3/(1+e) (Carrier 2003, from memory)."""
    d_cm = d_eff_mm / 10.0
    e = void_ratio
    return KC["constant"] * d_cm * d_cm / (shape_factor * shape_factor) * (e * e * e) / (1.0 + e)


def kozeny_carman_estimate(curve: Curve, props: dict, rules: dict) -> tuple[Check, list[Finding]]:
    """``permeability.kozeny_carman``: the estimate, or why none was made."""
    findings = []
    e, sf = rules.get("void_ratio"), rules.get("shape_factor", 7.0)
    d_eff, note = effective_diameter_mm(curve, rules.get("kc_pan_lower_mm"))
    extra = {"estimate": True, "d_eff_mm": d_eff, "void_ratio": e, "shape_factor": sf, "fines_assumption": note}
    if d_eff is None or e is None:
        why = note if d_eff is None else "rules.void_ratio is not given"
        return make_check("permeability.kozeny_carman", NOT_APPLICABLE,
                          f"Kozeny-Carman estimate not made: {why}.", unit="cm/s", extra=extra), findings
    if props.get("nonplastic") is False or (props.get("plasticity_index") or 0) > 0:
        findings.append(Finding("warning", "kozeny_carman_range",
                                "Kozeny-Carman does not apply to plastic fines (Carrier 2003, from memory).", "",
                                "Carrier 2003, JGGE 129(11)"))
    if not (min(SHAPE_FACTORS.values()) <= sf <= max(SHAPE_FACTORS.values())):
        findings.append(Finding("warning", "kozeny_carman_range",
                                f"Shape factor {sf:g} is outside the Fair & Hatch range 6.0-7.7.", "rules.shape_factor",
                                "Carrier 2003, JGGE 129(11) (from memory)"))
    k = kozeny_carman_k_cm_s(d_eff, e, sf)
    if not math.isfinite(k):  # pragma: no cover - guarded by positive inputs
        k = None
    return make_check("permeability.kozeny_carman", NOT_APPLICABLE,
                      f"Estimate only (Kozeny-Carman, e = {e:g}, SF = {sf:g}; {note}): k is about {k:.2g} cm/s.",
                      value=k, unit="cm/s", extra=extra), findings


def ratio_estimate(d15f_mm: float | None, d15b_mm: float | None) -> Check:
    """``permeability.ratio``: kF/kB estimated as (D15F/D15B)^2 [-]."""
    if d15f_mm is None or d15b_mm is None:
        return make_check("permeability.ratio", NOT_APPLICABLE,
                          "Filter/base permeability ratio not estimated: a D15 is outside its curve.", unit="-",
                          extra={"estimate": True})
    q = d15f_mm / d15b_mm
    r = q * q
    return make_check("permeability.ratio", NOT_APPLICABLE,
                      f"Estimate only: the filter is about {r:.3g} times as permeable as the base "
                      "((D15F/D15B)^2).", value=r, unit="-", extra={"estimate": True})
