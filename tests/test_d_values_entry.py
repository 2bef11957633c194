"""A test given as D-values (e.g. a supplier's sheet or a quick spot check).

A D-value Dxx is by definition the size at xx % passing, so ``{"D15": 0.3}`` is
the curve point (0.3 mm, 15 %). These tests check that the core takes the
points as given (no invented curve), reads log-linearly between them as for
any curve (common practice on the semi-log chart, see docs/methods.md), and
says "needs data" for what the points do not cover.
"""

import json
import math

import pytest

from tamis import api


def evaluate(sample, base=None, rules=None):
    req = {"schema": 1, "op": "evaluate", "sample": sample}
    if base is not None:
        req["base"] = base
    if rules is not None:
        req["rules"] = rules
    return json.loads(api.handle(json.dumps(req)))


def by_id(resp):
    return {c["id"]: c for c in resp["result"]["checks"] if c.get("subject", "sample") == "sample"}


def test_d_values_become_points_of_the_curve():
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "gradation",
                                          "test": {"d_mm": {"D15": 0.3, "D85": 2.0}}})))
    assert r["ok"]
    pts = {(p["opening_mm"], p["passing_pct"]) for p in r["result"]["points"]}
    assert pts == {(2.0, 85.0), (0.3, 15.0)}
    d = r["result"]["d_mm"]
    assert d["D15"] == 0.3 and d["D85"] == 2.0
    # D50 by log-linear interpolation: ln D50 = ln 0.3 + (50-15)/(85-15) * (ln 2.0 - ln 0.3)
    expected = math.exp(math.log(0.3) + 0.5 * (math.log(2.0) - math.log(0.3)))
    assert d["D50"] == pytest.approx(expected, rel=1e-12)
    assert d["D10"] is None and d["D90"] is None  # never extrapolated
    assert "curve_from_d_values" in [f["code"] for f in r["findings"]]


def test_terzaghi_quick_check_from_d_values_alone():
    # A curve needs at least two points, so the filter is given by its D15 and D85 (as on a supplier sheet).
    # Terzaghi & Peck: D15F/D85B <= 4 (retention) and D15F/D15B >= 4 (permeability), ratio 4 by default.
    # D15F = 0.3, D85B = 0.08 -> 3.75 <= 4 passes; D15B = 0.01 -> 30 >= 4 passes.
    r = evaluate({"d_mm": {"D15": 0.3, "D85": 2.0}}, {"d_mm": {"D15": 0.01, "D85": 0.08}}, {"criteria": "terzaghi"})
    assert r["ok"], r
    c = by_id(r)
    assert c["filter.retention"]["status"] == "pass"
    assert c["filter.permeability"]["status"] == "pass"
    # D85B = 0.07 -> 0.3 / 0.07 = 4.29 > 4: retention fails.
    r = evaluate({"d_mm": {"D15": 0.3, "D85": 2.0}}, {"d_mm": {"D15": 0.01, "D85": 0.07}}, {"criteria": "terzaghi"})
    assert by_id(r)["filter.retention"]["status"] == "fail"
    assert r["result"]["verdict"] == "reject"


def test_nrcs_quick_check_needs_the_base_fines_and_no4_passing():
    # NRCS NEH 633 Ch. 26 (1994, from memory): the category comes from % passing 0.075 mm after regrading on
    # 4.75 mm, so without P(4.75) and P(0.075) of the base the retention limit cannot be set.
    r = evaluate({"d_mm": {"D15": 0.3, "D85": 2.0}}, {"d_mm": {"D15": 0.004, "D85": 0.05}})
    assert by_id(r)["filter.retention"]["status"] == "needs_data"
    # With them: 100 % passing 4.75 mm and 90 % passing 0.075 mm -> category 1, D15F <= 9 x 0.05 = 0.45 mm.
    base = {"d_mm": {"D15": 0.004, "D85": 0.05},
            "passing": [{"opening_mm": 4.75, "passing_pct": 100.0}, {"opening_mm": 0.075, "passing_pct": 90.0}]}
    r = evaluate({"d_mm": {"D15": 0.3, "D85": 2.0}}, base)
    assert r["result"]["base_category"] == 1
    assert r["result"]["limits"]["d15_max_mm"] == pytest.approx(0.45, rel=1e-9)
    assert by_id(r)["filter.retention"]["status"] == "pass"


@pytest.mark.parametrize("d_mm, code, field", [
    ({"X15": 0.3}, "bad_d_value_name", "sample.d_mm.X15"),
    ({"D150": 0.3}, "bad_d_value_name", "sample.d_mm.D150"),
    ({"D15": -1}, "out_of_range", "sample.d_mm.D15"),
    ({"D15": "0.3"}, "not_a_number", "sample.d_mm.D15"),
    ({"D15": 0.3, "D85": 0.2}, "passing_rises", "sample.d_mm.D85"),
    ({"D15": 0.3}, "too_few_points", "sample.passing"),
])
def test_bad_d_values_are_refused_with_their_field(d_mm, code, field):
    r = evaluate({"d_mm": d_mm})
    assert r["ok"] is False
    assert r["error"]["code"] == code
    assert r["error"]["field"] == field
    assert "points[" not in r["error"]["message"]


def test_d_values_and_masses_cannot_be_mixed():
    r = evaluate({"d_mm": {"D15": 0.3, "D85": 2.0},
                  "sieves": [{"opening_mm": 4.75, "retained_g": 0}], "dry_mass_g": 100})
    assert r["ok"] is False and r["error"]["code"] == "conflicting_fields"
