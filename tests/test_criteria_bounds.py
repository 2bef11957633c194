"""Bound reasoning: a check whose outcome cannot change over the unmeasured part of a curve is decided.

The rule (docs/decisions.md, "Bound reasoning"): a D-value the curve does not bracket is never extrapolated,
but it is bounded, because percent passing never rises as sizes fall: below the finest point it is at most
that point's size, above the coarsest at least that size. Every limit the rules build from a D-value is
non-decreasing in it (k x D, k x D with a floor, the category-3 line with its 0.7 mm floor, the segregation
table), so the limit is bounded too, and a check is decided when the whole range of the value lies on one
side of the whole range of the limit. Otherwise it stays needs_data. Values are compared unrounded.

Rules quoted (provenance as in docs/criteria.md, all FROM MEMORY unless noted):
- NRCS NEH 633-26 (210-vi-NEH, October 1994), minimum D15F: D15F >= 4 x d15B (before regrading), not less
  than 0.1 mm; USBR DS-13(5)-9 (Nov 2011) and FEMA (Oct 2011): 5 x d15B, not less than 0.1 mm.
- NEH 633-26 (1994) maximum D15F, category 1 (A > 85 %): 9 x d85B, not less than 0.2 mm.
- NEH 633-26 (1994) design step 8: fines (passing 0.075 mm) <= 5 %; D100 <= 75 mm; segregation table
  D10 -> maximum D90 (D10 up to 0.5 mm: 20 mm; ... above 10 mm: 60 mm).
The issue's example (a filter sand on a silty clay core) is invented data, not a published case.
"""

from __future__ import annotations

import json

import pytest

from tamis.api import handle
from tamis.criteria import run_filter_checks
from tamis.criteria.base import analyse_base
from tamis.criteria.checks import Range, d_range, decide
from tamis.criteria.material import fines_check, segregation_check
from tamis.criteria.pairs import permeability_check, permeability_limit, retention_check
from tamis.criteria.rules import parse_rules
from tamis.criteria.tables import RULE_SETS
from tamis.curve import make_curve

NRCS = RULE_SETS["nrcs-1994"]
USBR = RULE_SETS["usbr-2011"]

CORE = [(4.75, 100), (2, 99), (0.425, 96), (0.075, 88), (0.02, 60), (0.005, 38), (0.002, 24)]
SAND = [(9.5, 100), (4.75, 97), (2.36, 82), (1.18, 58), (0.6, 33), (0.3, 13), (0.15, 4), (0.075, 1.9)]


def _pts(pts):
    return [{"opening_mm": d, "passing_pct": p} for d, p in pts]


def _evaluate(sample, base, sample_props=None, base_props=None, rules=None):
    req = {"schema": 1, "op": "evaluate", "sample": {"passing": _pts(sample), **(sample_props or {})},
           "base": {"passing": _pts(base), **(base_props or {})}}
    if rules:
        req["rules"] = rules
    out = json.loads(handle(json.dumps(req)))
    assert out["ok"], out
    return out


def test_issue_example_is_accepted_with_the_floor_governing_permeability():
    # d15B lies below 0.002 mm (24 % still passes it), so 4 x d15B < 4 x 0.002 = 0.008 mm < 0.1 mm: the
    # 0.1 mm floor is the minimum D15F whatever the unmeasured clay fraction is; D15F = 0.32 mm >= 0.1 mm
    out = _evaluate(SAND, CORE, {"plasticity": {"nonplastic": True}},
                    {"plasticity": {"liquid_limit": 38, "plasticity_index": 18}})
    res = out["result"]
    assert res["verdict"] == "accept"
    perm = next(c for c in res["checks"] if c["id"] == "filter.permeability")
    assert perm["status"] == "pass" and perm["limit"] == 0.1
    assert "the floor governs" in perm["message"] and "0.008 mm" in perm["message"]
    assert res["limits"]["d15_min_mm"] == 0.1
    # no internal-stability alarm beside the verdict (each method evaluated within its domain)
    assert not [f for f in out["findings"] if f["code"] == "stability_flag"]
    assert not [f for f in out["findings"] if f["level"] == "warning" and "stability" in f["source"].lower()]
    assert not [c for c in res["checks"] if c["id"].startswith("stability.") and c["status"] in ("fail", "warn")]


@pytest.mark.parametrize("finest,status", [
    (0.025, "pass"),                     # 4 x 0.025 = 0.1 mm: at the floor, the floor still governs
    (0.025 * (1 - 1e-9), "pass"),        # just inside
    (0.025 * (1 + 1e-9), "needs_data"),  # just outside: 4 x d15B may exceed 0.1 mm, D15F 0.1 mm undecided
])
def test_permeability_floor_bound_at_the_threshold(finest, status):
    # base measured down to `finest` with 20 % still passing: d15B <= finest, 4 x d15B <= 4 x finest
    base = analyse_base(make_curve([(0.425, 100), (0.075, 90), (finest, 20)]), False, True, 4.75)
    assert base.d15b_mm is None
    chk = permeability_check(0.1, base, NRCS, parse_rules(None), None)
    assert chk.status == status, chk.message
    if status == "pass":
        assert chk.limit == 0.1 and "floor governs" in chk.message
        assert permeability_limit(base, NRCS, parse_rules(None)) == (0.1, chk.extra["rule"])
        # just below the floor fails, decided by the same bound
        assert permeability_check(0.1 * (1 - 1e-12), base, NRCS, parse_rules(None)).status == "fail"


def test_permeability_bound_decides_beyond_the_floor_and_says_which_bound():
    # USBR 5 x d15B: base finest 0.05 mm with 20 % passing, d15B <= 0.05, the minimum D15F lies in
    # [0.1, 0.25] mm. D15F 0.25 mm passes whatever d15B is; 0.2 mm is undecided; 0.099 mm fails.
    base = analyse_base(make_curve([(0.425, 100), (0.075, 60), (0.05, 20)]), False, True, 4.75)
    r = parse_rules({"criteria": "usbr-2011"})
    ok = permeability_check(0.25, base, USBR, r)
    assert ok.status == "pass" and ok.limit == pytest.approx(0.25) and ok.extra["limit_bound"] == "upper"
    assert ok.extra["limit_range_mm"] == [0.1, pytest.approx(0.25)]
    assert "between 0.1 and 0.25 mm" in ok.message
    assert permeability_check(0.25 * (1 - 1e-9), base, USBR, r).status == "needs_data"
    bad = permeability_check(0.1 * (1 - 1e-9), base, USBR, r)
    assert bad.status == "fail" and bad.extra["limit_bound"] == "lower" and bad.limit == 0.1


def test_filter_d15_below_its_finest_point_decides_retention_and_permeability():
    # the filter's D15 lies below its finest point 0.15 mm (18 % passing): D15F <= 0.15 mm. Against a base
    # whose minimum D15F is 0.2 mm (5 x 0.04), it fails whatever the fines are; its retention limit
    # 0.7 mm (category 2) passes whatever they are
    base = analyse_base(make_curve([(4.75, 100), (0.075, 60), (0.04, 15), (0.002, 5)]), False, True, 4.75)
    assert base.category == 2
    sample = make_curve([(4.75, 100), (1.18, 60), (0.3, 30), (0.15, 18)])
    d15 = d_range(sample, 15.0, "D15 of the filter")
    assert (d15.lo, d15.hi) == (0.0, 0.15)
    r = parse_rules({"criteria": "usbr-2011"})
    perm = permeability_check(None, base, USBR, r, d15)
    assert perm.status == "fail" and perm.value is None and "D15 of the filter lies below" in perm.message
    ret, _ = retention_check(None, base, USBR, r, d15)
    assert ret.status == "pass"


def test_category_1_retention_floor_bound():
    # category 1 (A > 85 %), d85B below the finest point 0.02 mm (90 % passing): 9 x d85B <= 0.18 mm,
    # under the 0.2 mm floor: the maximum D15F is 0.2 mm exactly
    base = analyse_base(make_curve([(0.425, 100), (0.075, 95), (0.02, 90)]), False, True, 4.75)
    assert base.category == 1 and base.d85b_mm is None
    r = parse_rules(None)
    chk, lim = retention_check(0.2, base, NRCS, r)
    assert chk.status == "pass" and lim["limit_mm"] == 0.2 and "floor governs" in chk.message
    assert retention_check(0.2 * (1 + 1e-9), base, NRCS, r)[0].status == "fail"
    # finest 0.03 mm: 9 x d85B <= 0.27 mm, the maximum lies in [0.2, 0.27]: 0.25 mm is undecided
    wide = analyse_base(make_curve([(0.425, 100), (0.075, 95), (0.03, 90)]), False, True, 4.75)
    assert retention_check(0.25, wide, NRCS, r)[0].status == "needs_data"
    assert retention_check(0.2, wide, NRCS, r)[0].status == "pass"
    assert retention_check(0.27 * (1 + 1e-9), wide, NRCS, r)[0].status == "fail"


@pytest.mark.parametrize("finest_pct,status", [(5.0, "pass"), (5.0 - 1e-9, "pass"), (5.0 + 1e-9, "needs_data")])
def test_fines_bound_when_the_curve_stops_above_0075(finest_pct, status):
    # at most P(0.15 mm) passes 0.075 mm: within 5 % it passes, above it stays open
    chk = fines_check(make_curve([(4.75, 100), (0.3, 20), (0.15, finest_pct)]))
    assert chk.status == status
    if status == "pass":
        assert "Decided by bounds" in chk.message and chk.value is None


def test_segregation_bound_on_d10_and_d90():
    # D10 below the finest point 0.6 mm (15 % passing): D10 <= 0.6 mm, D90 max in [20, 25] mm.
    # D90 read on the curve 19 mm passes (<= 20 whatever D10 is); 22 mm is undecided.
    ok = segregation_check(make_curve([(25.0, 100), (19.0, 90), (4.75, 40), (0.6, 15)]))
    assert ok.status == "pass" and "Decided by bounds" in ok.message
    open_ = segregation_check(make_curve([(25.0, 100), (22.0, 90), (4.75, 40), (0.6, 15)]))
    assert open_.status == "needs_data"
    # D90 above the coarsest point 30 mm (85 % passing): D90 >= 30 mm > 25 mm: fails whatever D10 is
    bad = segregation_check(make_curve([(30.0, 85), (4.75, 40), (0.6, 15)]))
    assert bad.status == "fail" and "D90 lies above the coarsest point" in bad.message


def test_decide_never_rounds_toward_a_pass():
    assert decide(Range(0.1, 0.1), ">=", Range(0.1, 0.1)) is True
    assert decide(Range(0.1, 0.1), ">=", Range(0.1, 0.1 + 1e-15)) is None
    assert decide(Range(0.0, 0.15), "<=", Range(0.15, 0.2)) is True
    assert decide(Range(0.0, 0.15), "<=", Range(0.149999999, 0.2)) is None
    assert decide(Range(0.3, float("inf")), "<=", Range(0.2, 0.29)) is False


def test_undecidable_case_stays_needs_data_through_the_api():
    # base measured only to 0.075 mm with 88 % passing: d15B <= 0.075 mm, 4 x d15B <= 0.3 mm; a filter with
    # D15 0.32 mm passes, one with D15 0.2 mm cannot be decided
    base = [(4.75, 100), (0.425, 96), (0.075, 88)]
    res = _evaluate(SAND, base, {"plasticity": {"nonplastic": True}})["result"]
    assert next(c for c in res["checks"] if c["id"] == "filter.permeability")["status"] == "pass"
    fine_sand = [(2.36, 100), (1.18, 90), (0.6, 60), (0.3, 30), (0.15, 12), (0.075, 3)]
    res = _evaluate(fine_sand, base, {"plasticity": {"nonplastic": True}})["result"]
    perm = next(c for c in res["checks"] if c["id"] == "filter.permeability")
    assert perm["status"] == "needs_data" and "bounds leave it open" in perm["message"]
    assert res["verdict"] == "review"


def test_run_filter_checks_limits_carry_the_decided_floor():
    out = run_filter_checks(_reduced(SAND, {"nonplastic": True}), _reduced(CORE, {}))
    assert out.limits["d15_min_mm"] == 0.1


def _reduced(pts, props):
    from tamis.evaluation import reduce_test
    return reduce_test({"passing": _pts(pts), **({"plasticity": props} if props else {})}, "x")


def test_design_band_uses_the_floor_fixed_by_the_bound():
    # the same core: d15B below 0.002 mm, 4 x d15B <= 0.008 mm < 0.1 mm, so the minimum D15F is the floor
    # exactly and the band can be designed (it was refused as base_incomplete before the bound reasoning)
    req = {"schema": 1, "op": "design_band", "bases": [{"passing": _pts(CORE)}]}
    out = json.loads(handle(json.dumps(req)))
    assert out["ok"], out
    step5 = next(s for s in out["result"]["steps"] if s["step"] == 5)
    assert step5["values"]["d15f_min_mm"] == 0.1
    assert out["result"]["feasible"]
    # a base whose bound leaves the minimum open is still refused with its field
    open_base = [(0.425, 100), (0.075, 60), (0.05, 20)]        # 4 x d15B <= 0.2 mm: in [0.1, 0.2]
    out = json.loads(handle(json.dumps({"schema": 1, "op": "design_band", "bases": [{"passing": _pts(open_base)}]})))
    assert not out["ok"] and out["error"]["code"] == "base_incomplete" and out["error"]["field"] == "bases"


def test_limits_block_carries_exact_limits_only():
    # minimum D15F only bounded to [0.1, 0.3] mm (d15B <= 0.075 mm): the check is decided for this sand
    # (D15 0.32 mm) but the D15 window of the result does not show a bound as if it were the limit
    base = [(4.75, 100), (0.425, 96), (0.075, 88)]
    res = _evaluate(SAND, base, {"plasticity": {"nonplastic": True}})["result"]
    perm = next(c for c in res["checks"] if c["id"] == "filter.permeability")
    assert perm["status"] == "pass" and perm["limit_bound"] == "upper" and perm["limit"] == pytest.approx(0.3)
    assert res["limits"]["d15_min_mm"] is None
