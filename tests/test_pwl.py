"""Percent within limits (``tamis.project.pwl``) against scipy and the published FHWA table.

Sources:

- FHWA Technical Advisory T 5080.12, "Specification Conformity Analysis" (June 23, 1989), Table 1B
  "Quality index values for estimating PWL" (rows PU 73, 70, 65 and 60 read, n = 3, 4, 5, 7, 9 and the
  infinite column; read in the table's web copy). The table gives the quality index Q needed for a given
  P_U at two decimals. Known misprints of that table: PU 67, n = 5 prints 0.47 where the estimator gives
  0.484; ".031" at PU 62, n = 12-14 is 0.31. Neither row is asserted as printed.
- The estimator P_U = 100 I_x((n-2)/2, (n-2)/2), x = 1/2 + Q sqrt(n)/(2(n-1)): jaspAcceptanceSampling,
  R/decideVariableLots.R (read); after Lieberman and Resnikoff (1955) (title only).
- "For negative values of QL, PL is equal to 100 minus the table PL": City of Everett amendments to the
  WSDOT standard specifications (read).
- scipy.special.betainc and scipy.stats.beta as the numerical oracle (test-only dependency).
"""

from __future__ import annotations

import json
import math
import random
from statistics import NormalDist

import pytest
from scipy import special, stats

from tamis import api
from tamis.project.pwl import percent_within_one_limit, pwl, reg_inc_beta

# T 5080.12 Table 1B: PU -> Q for n = 3, 4, 5, 7, 9, infinity (as printed).
TABLE_1B = {
    73: (0.76, 0.69, 0.66, 0.64, 0.63, 0.61),
    70: (0.68, 0.60, 0.57, 0.55, 0.54, 0.52),
    65: (0.52, 0.45, 0.43, 0.41, 0.40, 0.39),
    60: (0.36, 0.30, 0.28, 0.27, 0.26, 0.25),
}
TABLE_N = (3, 4, 5, 7, 9)


def q_for_pu(pu: float, n: int) -> float:
    """The Q at which our estimator gives ``pu`` (bisection: P_U rises with Q)."""
    lo, hi = -5.0, 5.0
    for _ in range(200):
        mid = (lo + hi) / 2
        if percent_within_one_limit(mid, n) < pu:
            lo = mid
        else:
            hi = mid
    return (lo + hi) / 2


def test_incomplete_beta_equals_scipy():
    rng = random.Random(14)
    worst = 0.0
    for _ in range(5000):
        a = rng.choice((0.5, 1.0, 1.5, 2.0, 3.5, 10.0, 49.0)) if rng.random() < 0.5 else 0.05 + rng.random() * 80
        b = a if rng.random() < 0.5 else 0.05 + rng.random() * 80
        x = rng.random()
        worst = max(worst, abs(reg_inc_beta(x, a, b) - special.betainc(a, b, x)))
    assert worst < 1e-12
    assert reg_inc_beta(0.0, 2, 2) == 0.0 and reg_inc_beta(1.0, 2, 2) == 1.0


@pytest.mark.parametrize("n", [3, 4, 5, 6, 7, 8, 10, 15, 20, 30, 50])
def test_percent_within_equals_scipy_beta_cdf(n):
    a = (n - 2) / 2
    for q in [i / 20 for i in range(-50, 51)]:
        x = min(1.0, max(0.0, 0.5 + q * math.sqrt(n) / (2 * (n - 1))))
        want = 100 * stats.beta.cdf(x, a, a)
        assert percent_within_one_limit(q, n) == pytest.approx(want, abs=1e-9)


@pytest.mark.parametrize("pu", sorted(TABLE_1B))
def test_fhwa_table_1b_rows_at_printed_precision(pu):
    row = TABLE_1B[pu]
    for n, printed in zip(TABLE_N, row):
        q = q_for_pu(pu, n)
        assert abs(q - printed) <= 0.005 + 1e-9, (pu, n, q, printed)
        # the same inverse from scipy's beta distribution
        a = (n - 2) / 2
        x = stats.beta.ppf(pu / 100, a, a)
        assert q == pytest.approx((x - 0.5) * 2 * (n - 1) / math.sqrt(n), abs=1e-7)
    # the infinite column is the normal quantile
    assert abs(NormalDist().inv_cdf(pu / 100) - row[-1]) <= 0.005


def test_known_misprint_pu67_n5():
    # Table 1B prints 0.47; the estimator (ours and scipy's) gives 0.484, so the printed value is not a check.
    q = q_for_pu(67, 5)
    assert q == pytest.approx(0.4836, abs=5e-4)
    assert abs(q - 0.47) > 0.01


def test_closed_forms_and_negative_q():
    # n = 4: a = 1, I_x(1, 1) = x, so P_U = 100 (1/2 + Q/3)
    for q in (-1.2, -0.3, 0.0, 0.45, 1.1):
        assert percent_within_one_limit(q, 4) == pytest.approx(100 * (0.5 + q / 3), abs=1e-12)
    # P_U reaches 100 at Q = (n - 1)/sqrt(n): 1.1547 (n = 3), 1.7889 (n = 5), 2.8460 (n = 10)
    for n, q100 in ((3, 1.1547), (5, 1.7889), (10, 2.8460)):
        assert percent_within_one_limit((n - 1) / math.sqrt(n), n) == 100.0
        assert round((n - 1) / math.sqrt(n), 4) == q100
        assert percent_within_one_limit(q100 - 0.01, n) < 100.0
    # negative Q: 100 minus the value at |Q|
    for n in (3, 5, 9):
        for q in (0.2, 0.77, 1.0):
            assert percent_within_one_limit(-q, n) == pytest.approx(100 - percent_within_one_limit(q, n), abs=1e-9)


def test_two_sided_pwl_is_pu_plus_pl_minus_100():
    vals = [3.2, 4.1, 2.7, 3.9, 4.6, 3.3]
    r = pwl(vals, 2.0, 5.0)
    n, m, s = len(vals), sum(vals) / len(vals), stats.tstd(vals)
    assert r["sd"] == pytest.approx(s, rel=1e-12)
    a = (n - 2) / 2
    pu = 100 * stats.beta.cdf(0.5 + (5.0 - m) / s * math.sqrt(n) / (2 * (n - 1)), a, a)
    pl = 100 * stats.beta.cdf(0.5 + (m - 2.0) / s * math.sqrt(n) / (2 * (n - 1)), a, a)
    assert r["pu_pct"] == pytest.approx(pu, abs=1e-9) and r["pl_pct"] == pytest.approx(pl, abs=1e-9)
    assert r["pwl_pct"] == pytest.approx(pu + pl - 100, abs=1e-9)
    # one-sided: PWL is the percent within that limit
    assert pwl(vals, None, 5.0)["pwl_pct"] == pytest.approx(pu, abs=1e-9)


def test_not_estimated_below_three_tests_and_without_spread():
    assert pwl([3.0, 4.0], None, 5.0)["pwl_pct"] is None
    assert "at least 3" in pwl([3.0, 4.0], None, 5.0)["note"]
    r = pwl([100.0] * 4, 100.0, 100.0)
    assert r["pwl_pct"] is None and "no spread" in r["note"]


def test_op_pwl_through_the_api_and_its_errors():
    resp = json.loads(api.handle(json.dumps({"op": "pwl", "values": [4.2, 5.7, 3.1, 4.8], "upper": 5.0})))
    assert resp["ok"], resp
    assert "not an acceptance rule" in resp["result"]["notice"]
    assert resp["result"]["n"] == 4
    bad = json.loads(api.handle(json.dumps({"op": "pwl", "values": [1, "2"], "upper": 5})))
    assert not bad["ok"] and bad["error"]["field"] == "values[1]"
    inv = json.loads(api.handle(json.dumps({"op": "pwl", "values": [1, 2, 3], "lower": 5, "upper": 4})))
    assert not inv["ok"] and inv["error"]["code"] == "limits_inverted"
