"""The base soil as the filter rules see it: regraded curve, A, category, d85B, d15B.

References: regrading on 4.75 mm and the category from A, NRCS NEH 633-26
(October 1994) Steps 2-4, from memory. The regraded curve feeds A and d85B,
the original curve d15B (the NRCS wording for the permeability limit is
"before regrading"; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from ..lab.uscs import decided_pct
from ..lab.curve import Curve, passing_at, regrade, size_at
from ..checks import Finding
from ..lab.reduction import gradation_of
from .nrcs import base_category
from .tables import CATEGORY_EDGES_PCT, NO_200_MM

_FULL_PCT = 100.0 - 1e-9
#: The soil properties of a base whose plasticity was not given (as :func:`tamis.lab.reduction.parse_props`
#: returns them for a test without ``plasticity``).
_NO_PROPS = {"nonplastic": None, "liquid_limit": None, "plasticity_index": None, "dispersive": None}


def category_a_pct(curve: Curve, on_mm: float | None) -> float | None:
    """A [%] as the category edges see it: P(0.075 mm) x 100 / P(on_mm) of the unregraded ``curve``
    (P(0.075 mm) itself when ``on_mm`` is None), by :func:`tamis.lab.uscs.decided_pct`.

    The regraded curve scales each percentage by the float CF = 100 / P(on), which leaves A one unit in
    the last place off when it is exactly 15, 40 or 85 % (4.6 % passing 0.075 mm and 11.5 % passing
    4.75 mm give 39.99999999999999): binary noise must not move a base across a category edge (the edges
    are the NEH 633-26 1994 category table, from memory). Only the category uses this value; ``a_pct``
    and the category 3 formula keep the unrounded A of the regraded curve.
    """
    p200 = passing_at(curve, NO_200_MM)
    if p200 is None or on_mm is None:
        return p200
    p_on = passing_at(curve, on_mm)
    return decided_pct(p200, 0.0, p_on) if p_on else None


@dataclass(frozen=True)
class BaseAnalysis:
    """What the retention and permeability rules need from one base soil.

    Attributes
    ----------
    curve : Curve
        The base curve as measured.
    retention_curve : Curve
        The curve A and d85B are read on (regraded when regrading applies).
    regraded : bool
        True when the base was regraded on ``regrade_on_mm``.
    correction_factor : float or None
        CF = 100 / P(regrade_on_mm) [-] when regraded.
    a_pct : float or None
        Percent passing 0.075 mm on ``retention_curve`` [%].
    category : int or None
        1-4 (NRCS family), None for the terzaghi set or when A is unknown.
    d85b_mm, d15b_mm : float or None
        d85B on ``retention_curve``; d15B on the original curve [mm].
    dispersive : bool or None
        True/False when known (rules override, else the base's own flag).
    near_85 : bool
        A within the warning band around the 85 % discontinuity.
    """

    curve: Curve
    retention_curve: Curve
    regraded: bool
    correction_factor: float | None
    regrade_on_mm: float | None
    a_pct: float | None
    category: int | None
    d85b_mm: float | None
    d15b_mm: float | None
    dispersive: bool | None
    near_85: bool
    findings: list = field(default_factory=list)


def analyse_base(curve: Curve, dispersive: bool | None, categorise: bool, regrade_on_mm: float,
                 path: str = "base", regrade_wanted: bool | None = None) -> BaseAnalysis:
    """Regrade (when ``regrade_wanted`` and the base has particles above
    ``regrade_on_mm``), read A and the category (when ``categorise``), d85B
    and d15B. ``regrade_wanted`` defaults to ``categorise`` (the NRCS family
    regrades; the terzaghi set neither regrades nor categorises)."""
    if regrade_wanted is None:
        regrade_wanted = categorise
    findings: list[Finding] = []
    used, regraded, cf, on = curve, False, None, None
    if regrade_wanted:
        p_on = passing_at(curve, regrade_on_mm)
        if p_on is None:
            findings.append(Finding("warning", "regrade_unknown",
                                    f"The base curve does not reach {regrade_on_mm:g} mm with 100 % passing above "
                                    "it, so its gravel content is unknown; it was not regraded and the category "
                                    "is not assigned.", path))
            used = None
        elif p_on < _FULL_PCT:
            rg = regrade(curve, regrade_on_mm)
            if rg is None:
                findings.append(Finding("warning", "regrade_empty",
                                        f"Nothing of the base passes {regrade_on_mm:g} mm; it cannot be regraded.",
                                        path))
                used = None
            else:
                used, regraded, cf, on = rg.curve, True, rg.factor, regrade_on_mm
    a_pct = category = d85b = None
    near = False
    if used is not None:
        d85b = size_at(used, 85.0)
        if categorise:
            a_pct = passing_at(used, NO_200_MM)
            if a_pct is None:
                findings.append(Finding("warning", "base_fines_unknown",
                                        "The base curve does not reach 0.075 mm, so A (percent passing 0.075 mm) "
                                        "and the base category are unknown.", path))
            else:
                a_edge = category_a_pct(curve, on) if regraded else a_pct
                category = base_category(a_pct if a_edge is None else a_edge)
                near = abs(a_pct - CATEGORY_EDGES_PCT["cat1_above"]) <= CATEGORY_EDGES_PCT["discontinuity_warn_band"]
                if near:
                    findings.append(Finding("warning", "category_edge_85",
                                            f"A = {a_pct:.2f} % lies within "
                                            f"{CATEGORY_EDGES_PCT['discontinuity_warn_band']:g} points of 85 %, where "
                                            "the maximum D15F jumps between 9 x d85B and 0.7 mm; both limits are "
                                            "checked.", path))
    return BaseAnalysis(curve=curve, retention_curve=used if used is not None else curve, regraded=regraded,
                        correction_factor=cf, regrade_on_mm=on, a_pct=a_pct, category=category,
                        d85b_mm=d85b, d15b_mm=size_at(curve, 15.0), dispersive=dispersive, near_85=near,
                        findings=findings)


def base_info(b: BaseAnalysis | None, props: dict | None = None, findings: list | None = None) -> dict:
    """The ``base_info`` block of a :class:`~tamis.criteria.FilterOutcome`; the notes that explain the
    nulls of the regraded gradation (D-values, Cu) are appended to ``findings``."""
    if b is None:
        return {"base_category": None, "a_pct": None, "base_regraded": None}
    rg = None
    if b.regraded:
        rg, notes = gradation_of(b.retention_curve, props or _NO_PROPS, "base")
        if findings is not None:
            findings.extend(replace(f, message="Regraded base: " + f.message) for f in notes
                            if f.code in ("d_below_range", "d_above_range", "cu_undefined", "fraction_undefined"))
        rg = {**rg, "regraded_on_mm": b.regrade_on_mm, "correction_factor": b.correction_factor}
    return {"base_category": b.category, "a_pct": b.a_pct, "base_regraded": rg}
