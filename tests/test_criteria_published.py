"""Published pairwise filter checks (worked example W1: two solved problems).

Source (READ, web copy): Section 6.11 "Solved problems for filter design (SI)",
Tables 6.4 and 6.5, of a US government river and riprap design manual (its
title was not visible in the copy read; problem 2 is credited there to
Anderson et al., 1968). Its criteria are D15F/D85B < 5 and D15F/D15B > 5
(with an upper ratio of 40 that tamis does not implement), i.e. the Terzaghi
ratios with R = 5 (``rules.criteria = "terzaghi"``, ``terzaghi_ratio = 5``).

Published numbers used as published: problem 1 D15R/D85B = 6/1.5 = 4 (< 5)
and D15R/D15B = 6/0.38 (printed 16); problem 2 D15R/D85B = 100/1.5 = 67
(> 5), filter limits D15F < 5 x 1.5 = 7.5 mm and D15F > 5 x 0.17 = 0.85 mm.
The D85F > 20 mm of the intermediate filter is DERIVED by us from the same
manual's fourth check (D15R/D85F < 5).
"""

from __future__ import annotations

import json

import pytest

from tamis import api

RULES = {"criteria": "terzaghi", "terzaghi_ratio": 5}


def _test_from_d(d15, d50, d85):
    """A curve through the published D15, D50, D85 [mm] (the points between are log-linear)."""
    return {"passing": [{"opening_mm": d85 * 4, "passing_pct": 100}, {"opening_mm": d85, "passing_pct": 85},
                        {"opening_mm": d50, "passing_pct": 50}, {"opening_mm": d15, "passing_pct": 15},
                        {"opening_mm": d15 / 4, "passing_pct": 0}], "plasticity": {"nonplastic": True}}


P1_BASE, P1_RIPRAP = _test_from_d(0.38, 0.75, 1.50), _test_from_d(6.0, 12.0, 24.0)
P2_BASE, P2_RIPRAP = _test_from_d(0.17, 0.5, 1.5), _test_from_d(100.0, 200.0, 400.0)


def _evaluate(sample, base):
    r = json.loads(api.handle(json.dumps({"schema": 1, "op": "evaluate", "id": 1, "sample": sample, "base": base,
                                          "rules": RULES})))
    assert r["ok"], r
    return {c["id"]: c for c in r["result"]["checks"]}, r["result"]["limits"]


def test_problem_1_no_filter_needed():
    checks, limits = _evaluate(P1_RIPRAP, P1_BASE)
    ret, perm = checks["filter.retention"], checks["filter.permeability"]
    assert ret["status"] == "pass" and ret["value"] / limits["d85b_mm"] == pytest.approx(4.0, rel=1e-9)
    assert perm["status"] == "pass"
    assert perm["value"] / limits["d15b_mm"] == pytest.approx(16, abs=0.5)     # printed 16 (exact 15.8)


def test_problem_2_riprap_on_base_fails_and_filter_limits():
    checks, limits = _evaluate(P2_RIPRAP, P2_BASE)
    assert checks["filter.retention"]["status"] == "fail"
    assert checks["filter.retention"]["value"] / limits["d85b_mm"] == pytest.approx(67, abs=0.5)
    assert limits["d15_max_mm"] == pytest.approx(7.5, rel=1e-9)
    assert limits["d15_min_mm"] == pytest.approx(0.85, rel=1e-9)


def test_problem_2_as_a_zone_sequence_asks_for_an_intermediate_filter():
    req = {"schema": 1, "op": "zones", "id": 1, "rules": RULES,
           "zones": [{"name": "base sand", "test": P2_BASE},
                     {"name": "riprap", "role": "shell", "test": P2_RIPRAP}]}
    r = json.loads(api.handle(json.dumps(req)))
    assert r["ok"], r
    inter = r["result"]["interfaces"][0]["intermediate"]
    assert inter["needed"] and inter["feasible"]
    assert inter["d15_min_mm"] == pytest.approx(0.85, rel=1e-9)        # published: D15F > 0.85 mm
    assert inter["d15_max_mm"] == pytest.approx(7.5, rel=1e-9)         # published: D15F < 7.5 mm
    assert inter["d85_min_mm"] == pytest.approx(20.0, rel=1e-9)        # derived: D85F > 100 / 5
