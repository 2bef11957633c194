"""Regression cases found by comparing the core with an independent implementation of the published rules.

Each case was a disagreement between ``tamis.api.handle`` and a separate implementation written from the
reference notes and the documented conventions (log-linear D-values, regrading on 4.75 mm, base categories by A).
The inputs are invented test cases, not data claims; the expected values come from the independent computation
and the published rule quoted beside each test.
"""

from __future__ import annotations

import pytest

from conftest import call_api


def _passing(points, **more):
    t = {"passing": [{"opening_mm": d, "passing_pct": p} for d, p in points]}
    t.update(more)
    return t


# ASTM D2487 (read in published reproductions of its criteria): a soil is fine-grained when 50 % or more
# passes the No. 200 (0.075 mm) sieve, counted on the fraction finer than 75 mm (D2487-17 §1.2, read).
# When the top sieve retains material of unknown size, the minus-75 mm fraction holds at least the share of
# fines of the whole sample (fines / P(75 mm) >= fines), so 50 % fines of the whole sample already make the
# soil fine-grained and its symbol follows from the plasticity chart (A-line PI = 0.73 (LL - 20), read;
# CL PI > 7 on or above it, ML below it or PI < 4, from memory). The core used to return no symbol here.
TOP_RETAINS = [(63.0, 97.0), (4.75, 52.0), (0.6, 51.0), (0.075, 50.0)]


@pytest.mark.parametrize("plasticity, symbol", [
    ({"nonplastic": True}, "ML"),                              # nonplastic fines count as ML
    ({"liquid_limit": 30, "plasticity_index": 12}, "CL"),      # A-line at LL 30: 7.3; PI 12 > 7, above it
    ({"liquid_limit": 60, "plasticity_index": 35}, "CH"),      # LL >= 50, A-line 29.2, above it
    ({"liquid_limit": 60, "plasticity_index": 10}, "MH"),      # LL >= 50, below the A-line
    ({"liquid_limit": 22, "plasticity_index": 5}, "CL-ML"),    # 4 <= PI <= 7, above the A-line (1.46)
])
def test_fine_grained_symbol_when_top_sieve_retains_material(plasticity, symbol):
    res = call_api("gradation", test=_passing(TOP_RETAINS, plasticity=plasticity))["result"]
    assert res["gravel_pct"] is None          # the gravel fraction is still unknown (never assumed)
    assert res["uscs"]["symbol"] == symbol
    assert res["uscs"]["name"] is None        # the group name needs the coarse fractions
    assert any("top sieve" in n for n in res["uscs"]["needs"])


def test_fine_grained_without_limits_still_needs_them():
    res = call_api("gradation", test=_passing(TOP_RETAINS))["result"]
    assert res["uscs"]["symbol"] is None
    assert set(res["uscs"]["candidates"]) == {"CL", "ML", "CL-ML", "CH", "MH"}


def test_just_below_50_pct_fines_with_unknown_top_stays_undecided():
    # 49.9 % fines of the whole sample and 3 % of unknown size above 63 mm: the minus-75 mm fraction has
    # between 49.9 % and 51.4 % fines, so coarse- or fine-grained cannot be decided (D2487, 50 % limit).
    pts = [(63.0, 97.0), (4.75, 52.0), (0.6, 51.0), (0.075, 49.9)]
    res = call_api("gradation", test=_passing(pts, plasticity={"nonplastic": True}))["result"]
    assert res["uscs"]["symbol"] is None


def test_fine_grained_with_a_19mm_top_sieve():
    # Top sieve 19 mm passing 60 %: P(75 mm) is unknown, fines 50 % of the whole sample: CL (as above).
    pts = [(19.0, 60.0), (4.75, 52.0), (0.6, 51.0), (0.075, 50.0)]
    res = call_api("gradation", test=_passing(pts, plasticity={"liquid_limit": 30, "plasticity_index": 12}))
    assert res["result"]["uscs"]["symbol"] == "CL"


# NRCS NEH 633-26 (1994) category 2 (40 <= A <= 85 %): D15F <= 0.7 mm; dispersive base 0.5 mm (both from
# memory, see docs/criteria.md). The independent implementation gives "pass" for a non-dispersive base; the
# core warns when dispersion is not reported and the filter meets only the 0.7 mm limit (its documented
# conservative reading), passes when the base is declared non-dispersive and fails when it is dispersive.
CAT2_BASE = _passing([(4.75, 100.0), (0.425, 90.0), (0.075, 60.0), (0.005, 20.0), (0.001, 5.0)],
                     plasticity={"liquid_limit": 35, "plasticity_index": 15})
# Filter with D15 = 0.6 mm exactly (a measured point at 15 %), between the two limits.
FILTER_D15_06 = _passing([(9.5, 100.0), (4.75, 95.0), (1.18, 50.0), (0.6, 15.0), (0.075, 2.0)],
                         plasticity={"nonplastic": True})


@pytest.mark.parametrize("rules, status", [
    ({}, "warn"),
    ({"dispersive": False}, "pass"),
    ({"dispersive": True}, "fail"),
])
def test_category_2_retention_with_unknown_dispersion(rules, status):
    res = call_api("evaluate", sample=FILTER_D15_06, base=CAT2_BASE, rules=rules)["result"]
    assert res["base_category"] == 2
    assert res["a_pct"] == 60.0
    ret = [c for c in res["checks"] if c["id"] == "filter.retention"][0]
    assert ret["value"] == 0.6
    assert ret["status"] == status
    assert res["limits"]["d15_max_mm"] == (0.5 if rules.get("dispersive") else 0.7)


# Kezdi (1979) split test (from memory, see docs/criteria.md): split the curve, renormalise the coarse and the
# fine part to 100 %, stable when D'15 (coarse) / d'85 (fine) <= 4. The coarse part must exist to act as the
# filter of the fine part; adding an empty sieve on top of the stack (9.5 mm instead of 2.36 mm, both passing
# 100 %) must not change the verdict. The independent implementation, with splits kept inside the measured
# range (between the smallest percent above 0 and the largest below 100), gives 2.38 and 1.94 (both stable).
# The core's scan reaches a split at 99.999999999 %, where the coarse part vanishes and its D'15 is the
# top sieve itself: 11.6 (fail) with the 9.5 mm top sieve, 2.87 (pass) with 2.36 mm. The fix belongs in
# criteria/stability.py (not edited here: another engineer owns it); see the verification report.
UNIFORM_SAND = [(1.18, 92.5), (0.85, 86.1), (0.425, 63.4), (0.3, 49.0), (0.15, 23.5), (0.075, 0.0)]


# Kezdi (1979) split test, D'15c/d'85f <= 4: the verdict must not change when an empty sieve is added on top
# (the material is the same). Fixed by keeping splits on measured material (docs/decisions.md D5).
def test_kezdi_verdict_does_not_depend_on_an_empty_top_sieve():
    statuses = {}
    for top_mm in (9.5, 2.36):
        test = _passing([(top_mm, 100.0)] + UNIFORM_SAND, plasticity={"nonplastic": True})
        res = call_api("evaluate", sample=test)["result"]
        statuses[top_mm] = [c for c in res["checks"] if c["id"] == "stability.kezdi"][0]["status"]
    assert statuses == {9.5: "pass", 2.36: "pass"}


# NRCS NEH 633-26 (1994) base categories by A, the percent passing 0.075 mm after regrading on 4.75 mm
# (P' = P x 100 / P(4.75), step 3; from memory): 1 if A > 85, 2 if 40 <= A <= 85, 3 if 15 <= A < 40,
# 4 if A < 15 (the documented edges). In each case below A is exactly an edge in decimal; the core used to
# scale by the float CF = 100 / P(4.75) and land one unit in the last place on the wrong side
# (14.999999999999998, 39.99999999999999, 85.00000000000001). Expected categories: the independent
# computation in exact decimal.
def _gravelly_base(p4_pct, p200_pct, **more):
    return _passing([(19.0, 100.0), (9.5, (100.0 + p4_pct) / 2), (4.75, p4_pct), (0.425, (p4_pct + p200_pct) / 2),
                     (0.075, p200_pct), (0.001, p200_pct / 10)],
                    plasticity={"liquid_limit": 35, "plasticity_index": 15}, **more)


@pytest.mark.parametrize("p4_pct, p200_pct, category", [
    (50.1, 7.515, 3),     # A = 15 exactly: category 3 (15 <= A)
    (50.2, 7.53, 3),
    (50.1, 20.04, 2),     # A = 40 exactly: category 2 (40 <= A)
    (50.2, 20.08, 2),
    (50.3, 42.755, 2),    # A = 85 exactly: category 2 (A > 85 only for category 1)
    (50.4, 42.84, 2),
    (50.2, 20.0799, 3),   # just below 40 stays category 3
    (50.3, 42.7551, 1),   # just above 85 is category 1
])
def test_category_edges_after_regrading(p4_pct, p200_pct, category):
    res = call_api("evaluate", sample=FILTER_D15_06, base=_gravelly_base(p4_pct, p200_pct))["result"]
    assert res["base_category"] == category


def test_category_edge_from_masses():
    # 1000.0 g dry; 498.0 g retained down to 4.75 mm (P = 50.2 %), 200.8 g passing 0.075 mm (P = 20.08 %):
    # A = 200.8 / 502.0 = 40 % exactly, category 2.
    base = {"sieves": [{"opening_mm": 19.0, "retained_g": 0.0}, {"opening_mm": 9.5, "retained_g": 250.0},
                       {"opening_mm": 4.75, "retained_g": 248.0}, {"opening_mm": 0.425, "retained_g": 150.6},
                       {"opening_mm": 0.075, "retained_g": 150.6}],
            "dry_mass_g": 1000.0, "washed_dry_mass_g": 800.0, "pan_g": 0.8}
    res = call_api("evaluate", sample=FILTER_D15_06, base=base)["result"]
    assert res["base"]["points"][2]["passing_pct"] == 50.2
    assert res["base"]["fines_pct"] == pytest.approx(20.08, abs=1e-12)
    assert res["base_category"] == 2


def test_dispersive_base_at_a_40_takes_the_category_2_limit():
    # NEH 633-26 category 2 with a dispersive base: D15F <= 0.5 mm (from memory). On the wrong side of the
    # edge (category 3, no dispersive variant known) the filter with D15 = 0.6 mm would only warn.
    res = call_api("evaluate", sample=FILTER_D15_06, base=_gravelly_base(50.1, 20.04, dispersive=True))["result"]
    ret = [c for c in res["checks"] if c["id"] == "filter.retention"][0]
    assert res["base_category"] == 2
    assert ret["limit"] == 0.5
    assert ret["status"] == "fail"


# ASTM D2487 (read in published reproductions): a soil with cobbles is classified on its minus-75 mm fraction
# (D2487-17 §1.2); clean below 5 % fines, dual symbols from 5 to 12 %, fine-grained from 50 %; gravel when
# more than half of the coarse fraction is retained on No. 4 (equal shares make a sand). In each case below
# the minus-75 mm share is exactly on an edge in decimal; scaling by the float 100 / P(75) used to put it
# one unit in the last place on the wrong side ("fines 5.00 % < 5 %", "fines 12.00 % > 12 %",
# "fines 50.00 % < 50 %"). Expected symbols: the independent computation in exact decimal.
def _with_cobbles(p75_pct, p200_pct):
    p4 = round((p75_pct + p200_pct) / 2, 1)
    pts = [(100.0, 100.0), (75.0, p75_pct), (19.0, (p75_pct + p4) / 2), (4.75, p4), (0.425, (p4 + p200_pct) / 2),
           (0.15, (p4 + 3 * p200_pct) / 4), (0.075, p200_pct), (0.002, p200_pct / 20)]
    return _passing(pts, plasticity={"nonplastic": True})


@pytest.mark.parametrize("p75_pct, p200_pct, symbol", [
    (90.0, 10.8, "SP-SM"),   # fines 12 % of the minus-75 mm part (dual); gravel = sand = 44 % (sand)
    (90.9, 4.545, "GP-GM"),  # fines 5 % (dual); gravel 47.52 % > sand 47.48 %
    (91.2, 4.56, "SP-SM"),   # fines 5 % (dual)
    (90.9, 45.45, "ML"),     # fines 50 %: fine-grained, nonplastic fines
])
def test_uscs_edges_on_the_minus_75_mm_fraction(p75_pct, p200_pct, symbol):
    res = call_api("gradation", test=_with_cobbles(p75_pct, p200_pct))["result"]
    assert res["cobbles_pct"] == pytest.approx(100.0 - p75_pct, abs=1e-9)
    assert res["uscs"]["symbol"] == symbol
