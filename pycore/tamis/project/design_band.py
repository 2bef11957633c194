"""The designed filter band: the ``design_band`` op.

``op_design_band`` runs the published design procedure (NRCS NEH 633-26,
October 1994, design steps 1-10, from memory; the same in substance in FEMA
2011 and USBR 2011) from one or more base soils and returns the control
points, the band and every step with the numbers it produced.

A screening aid: the project specification, local codes and the engineer of
record govern.
"""

from __future__ import annotations

import math

from .. import SCREENING_NOTICE
from ..criteria.base import analyse_base
from ..criteria.against_base import permeability_limit, retention_limit
from ..criteria.rules import parse_rules
from ..criteria.tables import MATERIAL, NO_200_MM, RULE_SETS, segregation_d90_max_mm
from ..errors import ZONES_MAX, InputError, join, require_list, require_mapping, text
from ..lab.curve import exp, ln, make_curve, passing_at, size_at
from ..lab.reduction import reduce_test

#: Sieves the designed band is read at [mm] (ASTM E11 openings, 3 in to No. 200).
BAND_SIEVES_MM = (75.0, 50.0, 37.5, 25.0, 19.0, 12.5, 9.5, 4.75, 2.36, 1.18, 0.6, 0.3, 0.15, 0.075)


def _parse_bases(req: dict):
    items = require_list(req.get("bases"), "bases", min_len=1, max_len=ZONES_MAX)
    out = []
    for i, b in enumerate(items):
        p = join("bases", i)
        require_mapping(b, p)
        if "test" in b:
            name = text(b, "name", p, default=f"base {i + 1}")
            out.append((name, reduce_test(b["test"], join(p, "test"))))
        else:
            out.append((f"base {i + 1}", reduce_test(b, p)))
    return out


def _round_in(x: float, up: bool) -> float:
    """Round to 0.1 % toward the inside of the band (min up, max down); never widens it."""
    v = math.ceil(x * 10.0) / 10.0 if up else math.floor(x * 10.0) / 10.0
    return min(100.0, max(0.0, v))


def _extend(d_a: float, p_a: float, d_b: float, p_b: float, p: float) -> float:
    """Size [mm] at ``p`` % on the semi-log line through (d_a, p_a) and (d_b, p_b)."""
    t = (p - p_a) / (p_b - p_a)
    return exp(ln(d_a) + t * (ln(d_b) - ln(d_a)))


def op_design_band(req: dict):
    """API op ``design_band``: ``{"bases": [test, ...], "rules"}`` -> control points, band, steps."""
    bases = _parse_bases(req)
    r = parse_rules(req.get("rules"), "rules")
    rs = RULE_SETS[r["criteria"]]
    findings, steps, per_base = [], [], []
    for name, red in bases:
        disp = r["dispersive"] if r["dispersive"] is not None else red.props.get("dispersive")
        b = analyse_base(red.curve, disp, rs["regrade"], r["regrade_on_mm"], name,
                         regrade_wanted=rs["regrade"] and r["regrade"])
        findings += list(red.findings) + list(b.findings)
        ret = retention_limit(b, rs, r)
        pmin, prule = permeability_limit(b, rs, r)
        per_base.append({"name": name, "b": b, "ret": ret, "pmin": pmin, "prule": prule})
    steps.append({"step": 1, "title": "Base soils", "values": {
        "bases": [{"name": p["name"], "dispersive": p["b"].dispersive,
                   "gravel_above_regrade_sieve": p["b"].regraded} for p in per_base]},
        "note": "Every base gradation given is used; dispersion from rules.dispersive or each base's flag."})
    steps.append({"step": 2, "title": "Regrade on the No. 4 (4.75 mm) sieve where the base has gravel",
                  "values": {"bases": [{"name": p["name"], "regraded": p["b"].regraded,
                                        "correction_factor": p["b"].correction_factor} for p in per_base]},
                  "note": "CF = 100 / P(4.75 mm); P' = CF x P. Not applied by the terzaghi set."
                  if rs["regrade"] else "The terzaghi set uses the curves as given."})
    steps.append({"step": 3, "title": "Base-soil category from A (percent passing 0.075 mm after regrading)",
                  "values": {"bases": [{"name": p["name"], "a_pct": p["b"].a_pct, "category": p["b"].category,
                                        "d85b_mm": p["b"].d85b_mm, "d15b_mm": p["b"].d15b_mm}
                                       for p in per_base]}})
    missing = [p["name"] for p in per_base if p["ret"]["limit_mm"] is None or p["pmin"] is None]
    if missing:
        raise InputError("base_incomplete", "The band cannot be designed: " + ", ".join(missing)
                         + " lack the sizes the rules need (category, d85B or d15B); extend the curve(s).",
                         "bases")
    gov_ret = min(per_base, key=lambda p: p["ret"]["limit_mm"])
    d15_max = gov_ret["ret"]["limit_mm"]
    alt = [v for p in per_base for _, v in p["ret"]["alternatives"]]
    steps.append({"step": 4, "title": "Maximum D15F (retention), governed by the finest base",
                  "values": {"bases": [{"name": p["name"], "d15f_max_mm": p["ret"]["limit_mm"],
                                        "rule": p["ret"]["rule"]} for p in per_base],
                             "d15f_max_mm": d15_max, "governing_base": gov_ret["name"]},
                  "note": "The smallest limit over all bases is used."})
    if alt and min(alt) < d15_max:
        findings.append({"level": "warning", "code": "band_alternative_limit",
                         "message": f"A conservative reading (85 % edge or unknown dispersion) gives a smaller "
                                    f"maximum D15F of {min(alt):.4g} mm; the band uses {d15_max:.4g} mm.",
                         "field": "bases", "source": "granular-filter rules, see docs/criteria.md"})
    gov_perm = max(per_base, key=lambda p: p["pmin"])
    d15_min0 = gov_perm["pmin"]
    steps.append({"step": 5, "title": "Minimum D15F (permeability), governed by the coarsest base before regrading",
                  "values": {"bases": [{"name": p["name"], "d15f_min_mm": p["pmin"], "rule": p["prule"]}
                                       for p in per_base], "d15f_min_mm": d15_min0,
                             "governing_base": gov_perm["name"]}})
    ratio_max = rs["band_width_ratio"]
    floor = rs.get("permeability_floor_mm", 0.0)
    d15_min = max(d15_min0, d15_max / ratio_max, floor)
    if d15_min <= NO_200_MM:
        # only the terzaghi set has no floor: a fine limit through (0.075 mm, 5 %) needs D15 above 0.075 mm
        floor = RULE_SETS["nrcs-1994"]["permeability_floor_mm"]
        d15_min = max(d15_min, floor)
        findings.append({"level": "warning", "code": "band_fines_floor",
                         "message": f"D15F min fell at or below 0.075 mm, where the fines limit already governs; "
                                    f"the NRCS floor {floor:g} mm (from memory) is used so that the band's fine "
                                    "limit can pass through 0.075 mm at 5 %.",
                         "field": "rules.criteria", "source": "NRCS NEH 633-26 (1994), 0.1 mm floor (from memory)"})
    steps.append({"step": 6, "title": f"Band width: D15F max / D15F min <= {ratio_max:g}",
                  "values": {"ratio_before": d15_max / d15_min0, "d15f_min_mm": d15_min,
                             "raised": d15_min > d15_min0},
                  "note": f"When the ratio exceeds {ratio_max:g}, D15F min is raised to D15F max / {ratio_max:g} "
                          f"(never below {floor:g} mm)."})
    fines, d100 = MATERIAL["fines_max_pct"], MATERIAL["d100_max_mm"]
    steps.append({"step": 7, "title": "Fines and maximum size",
                  "values": {"fines_max_pct_at_0.075_mm": fines, "d100_max_mm": d100},
                  "note": "At most 5 % passing 0.075 mm, nonplastic; D100 at most 75 mm."})
    result = {"feasible": False, "control_points": None, "band": None, "steps": steps, "rules": r,
              "notice": SCREENING_NOTICE}
    if d15_min > d15_max:
        steps.append({"step": 8, "title": "No band possible", "values": {"d15f_min_mm": d15_min,
                                                                          "d15f_max_mm": d15_max},
                      "note": "D15F min exceeds D15F max: no single filter satisfies both; a different design "
                              "(for example two filter stages or a change of base) is needed."})
        return result, findings
    d10_fine = _extend(NO_200_MM, fines, d15_min, 15.0, 10.0)
    d90_max = segregation_d90_max_mm(d10_fine)
    steps.append({"step": 8, "title": "Segregation: maximum D90 for the band's minimum D10",
                  "values": {"d10_min_mm": d10_fine, "d90_max_mm": d90_max},
                  "note": "D10 min is read on the fine limit between (0.075 mm, 5 %) and (D15F min, 15 %); the "
                          "table is entered with it (the lower D10 is the stricter row)."})
    if d90_max <= d15_max:
        steps.append({"step": 9, "title": "No band possible", "values": {"d90_max_mm": d90_max},
                      "note": "D90 max does not exceed D15F max."})
        return result, findings
    k = d15_min / d15_max
    coarse_pts = [(d100, 100.0), (d90_max, 90.0), (d15_max, 15.0), (_extend(d15_max, 15.0, d90_max, 90.0, 0.0), 0.0)]
    fine_pts = [(d100 * k, 100.0), (d90_max * k, 90.0), (d15_min, 15.0), (NO_200_MM, fines),
                (_extend(NO_200_MM, fines, d15_min, 15.0, 0.0), 0.0)]
    coarse, fine = make_curve(coarse_pts, "coarse_limit"), make_curve(fine_pts, "fine_limit")
    below = max(size_at(coarse, p) / size_at(fine, p) for p in (5.0, 10.0))
    steps.append({"step": 9, "title": "Control points joined into a band",
                  "values": {"coarse_limit": [{"opening_mm": d, "passing_pct": p} for d, p in coarse_pts],
                             "fine_limit": [{"opening_mm": d, "passing_pct": p} for d, p in fine_pts],
                             "width_ratio_15_to_90_pct": 1.0 / k, "width_ratio_max_below_15_pct": below},
                  "note": "Coarse limit through (D15F max, 15 %), (D90 max, 90 %), (75 mm, 100 %), extended on the "
                          "same line below 15 %. Fine limit: the coarse limit shifted by the constant size factor "
                          f"D15F min / D15F max from 15 to 100 %, so the width ratio stays <= {ratio_max:g} up to "
                          f"{rs['band_width_up_to_pct']:g} % and beyond; below 15 % it runs through (0.075 mm, 5 %), "
                          "where the fines limit governs and the width ratio is reported, not enforced (derived "
                          "construction)."})
    limits, narrow, crossed = [], [], []
    for s in BAND_SIEVES_MM:
        lo, hi = passing_at(coarse, s), passing_at(fine, s)
        rlo, rhi = _round_in(lo, True), _round_in(hi, False)
        if lo > hi:
            crossed.append(s)
        elif rlo > rhi:
            # narrower than the 0.1 % step: no rounded value lies inside, so the limits stay unrounded
            # (rounding either way would widen the band or invert it)
            narrow.append(s)
            rlo, rhi = lo, hi
        limits.append({"opening_mm": s, "min_pct": rlo, "max_pct": rhi,
                       "min_unrounded_pct": lo, "max_unrounded_pct": hi})
    if crossed:
        steps.append({"step": 10, "title": "No band possible",
                      "values": {"sieves_mm": crossed},
                      "note": "The two limits cross at these sieves (the coarse limit passes more than the fine "
                              "limit): the control points do not make one band; a different design is needed."})
        return result, findings
    if narrow:
        findings.append({"level": "warning", "code": "band_narrow",
                         "message": "The band is narrower than 0.1 % at " + ", ".join(f"{s:g} mm" for s in narrow)
                                    + ": its limits there are given unrounded (rounding would widen or invert "
                                    "them), and a filter can hardly be produced to so narrow a band.",
                         "field": "bases", "source": "display rounding of the designed band (derived)"})
    steps.append({"step": 10, "title": "Band at standard sieves",
                  "values": {"sieves_mm": list(BAND_SIEVES_MM)},
                  "note": "Percent passing read on both limits; rounded to 0.1 % toward the inside of the band "
                          "(minimum up, maximum down), so rounding never widens it."})
    result.update({
        "feasible": True,
        "control_points": {"d15f_max_mm": d15_max, "d15f_min_mm": d15_min, "d90_max_mm": d90_max,
                           "d100_max_mm": d100, "fines_max_pct": fines, "d10_min_mm": d10_fine},
        "band": {"name": f"designed filter band ({r['criteria']})",
                 "limits": [{"opening_mm": x["opening_mm"], "min_pct": x["min_pct"], "max_pct": x["max_pct"]}
                            for x in limits]},
        "band_unrounded": limits,
    })
    return result, findings
