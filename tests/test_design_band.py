"""The designed filter band: NRCS NEH 633-26 (October 1994) design steps 1-10
(FROM MEMORY; the same in substance in FEMA 2011 and USBR 2011), on an
INVENTED gravelly, sandy and clayey base, plus the W2 sand base
(a student laboratory report quoting FEMA 2011 steps 1-2, READ IN A
SECONDARY SOURCE; the D-values and limits are DERIVED by us from its masses).

The construction between control points (coarse limit through D15F max,
D90 max and 75 mm; fine limit a constant size factor finer) is DERIVED, and
the band-width ratio 5 is FROM MEMORY (NEH 633-26 step 7). Expected numbers
are computed here independently with numpy.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from tamis import SCREENING_NOTICE, api

GRAVELLY = {"passing": [{"opening_mm": 37.5, "passing_pct": 100}, {"opening_mm": 19.0, "passing_pct": 85},
                        {"opening_mm": 9.5, "passing_pct": 70}, {"opening_mm": 4.75, "passing_pct": 55},
                        {"opening_mm": 2.0, "passing_pct": 45}, {"opening_mm": 0.425, "passing_pct": 30},
                        {"opening_mm": 0.075, "passing_pct": 18}, {"opening_mm": 0.005, "passing_pct": 6}],
            "plasticity": {"nonplastic": True}}                      # invented silty gravel
SANDY = {"passing": [{"opening_mm": 4.75, "passing_pct": 99.15932746}, {"opening_mm": 2.0, "passing_pct": 87.46997598},
                     {"opening_mm": 0.85, "passing_pct": 66.29303443}, {"opening_mm": 0.425, "passing_pct": 43.89511609},
                     {"opening_mm": 0.25, "passing_pct": 26.22097678}, {"opening_mm": 0.106, "passing_pct": 7.325860689},
                     {"opening_mm": 0.075, "passing_pct": 4.163330665}]}   # W2 percentages as printed
CLAYEY = {"passing": [{"opening_mm": 4.75, "passing_pct": 100}, {"opening_mm": 2.0, "passing_pct": 98},
                      {"opening_mm": 0.425, "passing_pct": 90}, {"opening_mm": 0.075, "passing_pct": 62},
                      {"opening_mm": 0.005, "passing_pct": 25}, {"opening_mm": 0.001, "passing_pct": 12}],
          "plasticity": {"liquid_limit": 32, "plasticity_index": 14}}    # invented sandy lean clay


def _size(pts, pct):
    pts = sorted(pts)
    return float(np.exp(np.interp(pct, [p for _, p in pts], np.log([d for d, _ in pts]))))


def _pts(test):
    return [(p["opening_mm"], p["passing_pct"]) for p in test["passing"]]


def _regraded(test):
    pts = _pts(test)
    p475 = float(np.interp(np.log(4.75), np.log(sorted(d for d, _ in pts)), [p for _, p in sorted(pts)]))
    return [(4.75, 100.0)] + [(d, p * 100.0 / p475) for d, p in pts if d < 4.75]


def _design(bases, rules=None):
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "design_band", "id": 1, "bases": bases,
                                          "rules": rules or {}})))
    assert r["ok"], r
    return r["result"]


def _step(res, n):
    return next(s for s in res["steps"] if s["step"] == n)["values"]


def test_sandy_base_w2():
    res = _design([SANDY])
    d85r = _size(_regraded(SANDY), 85)
    assert d85r == pytest.approx(1.7585, abs=5e-4)                       # W2 derived
    assert _step(res, 3)["bases"][0]["category"] == 4
    assert _step(res, 4)["d15f_max_mm"] == pytest.approx(4 * d85r, rel=1e-6)       # 7.03 mm (W2 derived)
    d15 = _size(_pts(SANDY), 15)
    assert _step(res, 5)["d15f_min_mm"] == pytest.approx(4 * d15, rel=1e-6)        # 0.601 mm, NRCS 1994
    # W2: the ratio is above 5, so D15F min is raised to D15F max / 5
    assert _step(res, 6)["raised"] is True
    assert res["control_points"]["d15f_min_mm"] == pytest.approx(4 * d85r / 5, rel=1e-6)
    assert res["feasible"] and res["notice"] == SCREENING_NOTICE


def test_clayey_base_category_2():
    res = _design([CLAYEY])
    cp = res["control_points"]
    assert _step(res, 3)["bases"][0]["category"] == 2
    assert cp["d15f_max_mm"] == 0.7
    assert cp["d15f_min_mm"] == pytest.approx(0.14)          # W3 derived: 0.7 / 5 = 0.14 mm (above the 0.1 floor)


def test_gravelly_base_regraded_category_3():
    res = _design([GRAVELLY])
    rg = _regraded(GRAVELLY)
    a = dict(rg)[0.075]
    assert 15 <= a < 40
    d85 = _size(rg, 85)
    expected = (40 - a) / 25 * (4 * d85 - 0.7) + 0.7
    b = _step(res, 3)["bases"][0]
    assert b["a_pct"] == pytest.approx(a, rel=1e-9) and b["category"] == 3
    assert res["control_points"]["d15f_max_mm"] == pytest.approx(expected, rel=1e-6)
    assert _step(res, 2)["bases"][0]["regraded"] is True


def test_finest_base_governs_retention_and_coarsest_permeability():
    res = _design([SANDY, CLAYEY])
    s4, s5 = _step(res, 4), _step(res, 5)
    assert s4["governing_base"] == "base 2" and s4["d15f_max_mm"] == 0.7
    assert s5["governing_base"] == "base 1"
    assert s5["d15f_min_mm"] == pytest.approx(4 * _size(_pts(SANDY), 15), rel=1e-6)
    assert _step(res, 6)["raised"] is False


def test_band_is_ordered_narrow_and_meets_its_control_points():
    res = _design([SANDY], {"criteria": "usbr-2011"})
    cp = res["control_points"]
    lims = res["band"]["limits"]
    for x in lims:
        assert 0 <= x["min_pct"] <= x["max_pct"] <= 100
    un = {x["opening_mm"]: x for x in res["band_unrounded"]}
    assert un[0.075]["max_unrounded_pct"] == pytest.approx(5.0)
    assert un[75.0]["min_unrounded_pct"] == pytest.approx(100.0)
    # rounding only narrows: min rounded up, max rounded down
    for x, u in zip(lims, res["band_unrounded"]):
        assert x["min_pct"] >= u["min_unrounded_pct"] - 1e-9 and x["max_pct"] <= u["max_unrounded_pct"] + 1e-9
    # width ratio <= 5 between 15 % and 60 % on the control lines
    s9 = _step(res, 9)
    assert s9["width_ratio_15_to_90_pct"] <= 5.0 + 1e-12
    # segregation: D90 max from the table for the band's minimum D10
    assert cp["d10_min_mm"] == pytest.approx(np.sqrt(0.075 * cp["d15f_min_mm"]), rel=1e-9)
    rows = [(0.5, 20.0), (1.0, 25.0), (2.0, 30.0), (5.0, 40.0), (10.0, 50.0), (float("inf"), 60.0)]
    assert cp["d90_max_mm"] == next(v for edge, v in rows if cp["d10_min_mm"] <= edge)


def test_band_is_accepted_by_evaluate_and_checks_a_sample():
    res = _design([SANDY])
    band = res["band"]
    inside = {"passing": [{"opening_mm": x["opening_mm"], "passing_pct": (x["min_pct"] + x["max_pct"]) / 2}
                          for x in band["limits"]], "plasticity": {"nonplastic": True}}
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "evaluate", "id": 2, "sample": inside,
                                          "band": band, "base": SANDY})))
    assert r["ok"], r
    checks = {c["id"]: c for c in r["result"]["checks"] if c["id"].startswith(("band.", "filter."))}
    assert checks["band.compliance"]["status"] == "pass"
    assert checks["filter.retention"]["status"] == "pass"
    assert checks["filter.permeability"]["status"] == "pass"


def test_no_band_when_d15_min_exceeds_d15_max():
    coarse_base = {"passing": [{"opening_mm": 4.75, "passing_pct": 100}, {"opening_mm": 2.0, "passing_pct": 40},
                               {"opening_mm": 1.0, "passing_pct": 10}, {"opening_mm": 0.5, "passing_pct": 0}]}
    res = _design([CLAYEY, coarse_base])
    assert res["feasible"] is False and res["band"] is None
    assert res["steps"][-1]["title"] == "No band possible"


def test_incomplete_base_is_an_error_naming_bases():
    short = {"passing": [{"opening_mm": 4.75, "passing_pct": 100}, {"opening_mm": 0.425, "passing_pct": 60}]}
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "design_band", "id": 1, "bases": [short]})))
    assert r["ok"] is False and r["error"]["field"] == "bases"


def test_bad_bases_field():
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "design_band", "id": 1, "bases": []})))
    assert r["ok"] is False and r["error"]["field"] == "bases"


def test_cli_gives_the_same_answer(tmp_path):
    req = {"bases": [GRAVELLY, SANDY, CLAYEY], "rules": {"criteria": "nrcs-1994"}}
    f = tmp_path / "band.json"
    f.write_text(json.dumps(req), encoding="utf-8")
    out = subprocess.run([sys.executable, "-m", "tamis", "design_band", str(f), "--compact"],
                         capture_output=True, text=True, check=False)
    assert out.returncode == 0, out.stderr
    assert json.loads(out.stdout) == json.loads(api.handle(json.dumps({"schema": 1, "op": "design_band",
                                                                       "id": None, **req})))


# ------------------------------------------------------------------ property
from hypothesis import assume, given, settings  # noqa: E402
from hypothesis import strategies as hst  # noqa: E402

_SIEVES = (37.5, 19.0, 9.5, 4.75, 2.0, 0.85, 0.425, 0.25, 0.15, 0.075, 0.02, 0.005, 0.001)


@hst.composite
def _base_tests(draw):
    drops = draw(hst.lists(hst.floats(min_value=0.0, max_value=30.0), min_size=len(_SIEVES) - 1,
                           max_size=len(_SIEVES) - 1))
    p, pts = 100.0, [{"opening_mm": _SIEVES[0], "passing_pct": 100.0}]
    for d, dp in zip(_SIEVES[1:], drops):
        p = max(0.0, p - dp)
        pts.append({"opening_mm": d, "passing_pct": p})
    assume(pts[-1]["passing_pct"] < 14.0)
    return {"passing": pts, "dispersive": draw(hst.booleans())}


@settings(max_examples=60, deadline=None)
@given(hst.lists(_base_tests(), min_size=1, max_size=3), hst.sampled_from(["nrcs-1994", "usbr-2011"]))
def test_a_filter_on_the_band_midline_meets_retention_and_permeability_for_every_base(bases, crit):
    """The band's own logic, checked by evaluate (NEH 633-26 1994 steps 4-6, from memory)."""
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "design_band", "id": 1, "bases": bases,
                                          "rules": {"criteria": crit}})))
    assume(r["ok"])
    res = r["result"]
    if not res["feasible"]:
        assert res["band"] is None
        return
    cp = res["control_points"]
    g = (cp["d15f_min_mm"] / cp["d15f_max_mm"]) ** 0.5
    d15 = cp["d15f_max_mm"] * g
    sample = {"passing": [{"opening_mm": 75.0 * g, "passing_pct": 100.0},
                          {"opening_mm": cp["d90_max_mm"] * g, "passing_pct": 90.0},
                          {"opening_mm": d15, "passing_pct": 15.0},
                          {"opening_mm": d15 / 2, "passing_pct": 5.0}, {"opening_mm": d15 / 4, "passing_pct": 0.0}],
              "plasticity": {"nonplastic": True}}
    for base in bases:
        ev = json.loads(api.handle(json.dumps({"schema": 1, "op": "evaluate", "id": 2, "sample": sample,
                                               "base": base, "rules": {"criteria": crit}})))
        assert ev["ok"], ev
        st_ = {c["id"]: c["status"] for c in ev["result"]["checks"]}
        assert st_["filter.retention"] in ("pass", "warn")
        assert st_["filter.permeability"] == "pass"


def test_terzaghi_band_on_a_very_fine_base_keeps_the_fine_limit_above_0075():
    silt = {"passing": [{"opening_mm": 0.425, "passing_pct": 100}, {"opening_mm": 0.075, "passing_pct": 96},
                        {"opening_mm": 0.02, "passing_pct": 60}, {"opening_mm": 0.005, "passing_pct": 30},
                        {"opening_mm": 0.001, "passing_pct": 5}]}          # invented
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "design_band", "id": 1, "bases": [silt],
                                          "rules": {"criteria": "terzaghi"}})))
    assert r["ok"], r
    res = r["result"]
    assert res["control_points"]["d15f_min_mm"] == 0.1
    assert any(f["code"] == "band_fines_floor" for f in r["findings"])


# ------------------------------------------------------------ never inverted when feasible
_ISSUE_BASES = [  # the two bases of the report that gave feasible: true with min above max (invented data)
    {"passing": [{"opening_mm": 50, "passing_pct": 100}, {"opening_mm": 4.75, "passing_pct": 29.61780813},
                 {"opening_mm": 2, "passing_pct": 1}, {"opening_mm": 0.005, "passing_pct": 0}],
     "plasticity": {"liquid_limit": 21.78, "plasticity_index": 5.57}},
    {"passing": [{"opening_mm": 100, "passing_pct": 100}, {"opening_mm": 0.25, "passing_pct": 0}],
     "plasticity": {"nonplastic": True}},
]


def _never_inverted(res):
    if not res["feasible"]:
        return
    for lim, raw in zip(res["band"]["limits"], res["band_unrounded"]):
        assert lim["min_pct"] <= lim["max_pct"], lim
        assert raw["min_unrounded_pct"] <= raw["max_unrounded_pct"], raw
        # the published limits never lie outside the unrounded band (rounding only narrows it)
        assert lim["min_pct"] >= raw["min_unrounded_pct"] and lim["max_pct"] <= raw["max_unrounded_pct"], (lim, raw)


def test_a_band_narrower_than_the_rounding_step_is_not_inverted_and_says_so():
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "design_band", "id": 1, "bases": _ISSUE_BASES})))
    assert r["ok"], r
    res = r["result"]
    assert res["feasible"] is True
    _never_inverted(res)
    narrow = [f for f in r["findings"] if f["code"] == "band_narrow"]
    assert len(narrow) == 1 and "50 mm" in narrow[0]["message"]
    at50 = next(x for x in res["band"]["limits"] if x["opening_mm"] == 50.0)
    assert 96.30 < at50["min_pct"] < at50["max_pct"] < 96.32     # unrounded there: 96.3093 to 96.3108 %


@hst.composite
def _plastic_bases(draw):
    t = draw(_base_tests())
    if draw(hst.booleans()):
        ll = draw(hst.floats(15.0, 60.0))
        t["plasticity"] = {"liquid_limit": ll, "plasticity_index": draw(hst.floats(0.0, ll * 0.6))}
    else:
        t["plasticity"] = {"nonplastic": True}
    return t


@settings(max_examples=int(__import__("os").environ.get("TAMIS_FUZZ_EXAMPLES", "60")), deadline=None)
@given(hst.lists(_plastic_bases(), min_size=1, max_size=3),
       hst.sampled_from(["nrcs-1994", "usbr-2011", "fema-2011", "terzaghi"]))
def test_a_feasible_band_is_never_inverted_at_any_sieve(bases, crit):
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "design_band", "id": 1, "bases": bases,
                                          "rules": {"criteria": crit}})))
    assume(r["ok"])
    _never_inverted(r["result"])
