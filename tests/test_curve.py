"""Curve reading: D-values, passing at a size, regrading, fractions, Cu/Cc, FM.

Sources:
- Log-linear interpolation (linear in percent, logarithmic in size), never
  extrapolated: DESIGN.md and common practice (granular-filters.md §1.1, from
  memory). Checked here against numpy's np.interp on log sizes, an
  independent implementation of the same rule.
- W2 D-values and regrading: values derived [D] in granular-filters.md §13 W2
  from the published mass table (printed to 4 significant digits).
- Fineness modulus: ASTM C125 definition (sieves 150 um .. 150 mm); the C33
  fine-aggregate limit curves give FM 2.15 / 3.45 / 2.80 (computed in
  lab-methods.md §4.1: derived, not printed by ASTM).
- Cu = D60/D10, Cc = D30^2/(D10 D60): ASTM D2487 (read in reproductions).
"""

import math
import random

import numpy as np
import pytest

from tamis import curve as cv
from tamis.bands import PRESETS
from tamis.errors import InputError
from tamis.evaluation import reduce_test

W2_PASSING = [(4.75, 99.15932746), (2.0, 87.46997598), (0.85, 66.29303443), (0.425, 43.89511609),
              (0.25, 26.22097678), (0.106, 7.325860689), (0.075, 4.163330665)]


def random_curve(rng: random.Random, n: int):
    sizes = sorted({round(math.exp(rng.uniform(math.log(0.002), math.log(150.0))), 6) for _ in range(n)},
                   reverse=True)
    pct = sorted((rng.uniform(0, 100) for _ in sizes), reverse=True)
    if rng.random() < 0.5:
        pct[0] = 100.0
    return cv.make_curve(list(zip(sizes, pct)))


@pytest.mark.parametrize("seed", range(40))
def test_d_values_match_numpy_interp_on_log_sizes(seed):
    # np.interp needs increasing x: percent passing reversed (fine to coarse) against log size.
    rng = random.Random(seed)
    c = random_curve(rng, rng.randint(2, 14))
    sizes = np.array([d for d, _ in c.points][::-1])
    pct = np.array([p for _, p in c.points][::-1])
    strictly = np.all(np.diff(pct) > 0)
    for x in [rng.uniform(0, 100) for _ in range(30)] + [5, 10, 15, 30, 50, 60, 85, 90, 95]:
        got = cv.size_at(c, x)
        if x < pct[0] or x > pct[-1]:
            assert got is None  # never extrapolated
            continue
        if strictly:
            want = math.exp(np.interp(x, pct, np.log(sizes)))
            assert got == pytest.approx(want, rel=1e-9)
        else:
            assert got is not None and sizes[0] <= got * (1 + 1e-12) and got <= sizes[-1] * (1 + 1e-12)


@pytest.mark.parametrize("seed", range(40))
def test_passing_at_matches_numpy_interp_on_log_sizes(seed):
    rng = random.Random(1000 + seed)
    c = random_curve(rng, rng.randint(2, 14))
    logd = np.log(np.array([d for d, _ in c.points][::-1]))
    pct = np.array([p for _, p in c.points][::-1])
    for _ in range(30):
        size = math.exp(rng.uniform(math.log(0.001), math.log(300.0)))
        got = cv.passing_at(c, size)
        if math.log(size) < logd[0] - 1e-12:
            assert got == (0.0 if pct[0] == 0.0 else None)
        elif math.log(size) > logd[-1] + 1e-12:
            assert got == (100.0 if pct[-1] == 100.0 else None)
        else:
            assert got == pytest.approx(float(np.interp(math.log(size), logd, pct)), abs=1e-9)


def test_w2_log_linear_d_values_derived_in_the_reference():
    # granular-filters.md W2 [D]: D10 0.1197, D15 0.1502, D30 0.2800, D60 0.6996, D85 1.810 mm (4 s.f.).
    c = cv.make_curve(W2_PASSING)
    for pct, mm in ((10, 0.1197), (15, 0.1502), (30, 0.2800), (60, 0.6996), (85, 1.810)):
        assert cv.size_at(c, pct) == pytest.approx(mm, rel=5e-4)
    # The printed (linear) D60 0.7306 differs: log-linear is not linear interpolation.
    assert abs(cv.size_at(c, 60) - 0.7306) > 0.02


def test_w2_regrading_on_no4_derived_in_the_reference():
    # W2 [D]: CF = 100/99.1593 = 1.008478; regraded 88.212 / 66.855 / 44.267 / 26.443 / 7.388 / 4.199.
    rg = cv.regrade(cv.make_curve(W2_PASSING), 4.75)
    assert rg.factor == pytest.approx(1.008478, abs=5e-7)
    got = [p for _, p in rg.curve.points[1:]]
    for g, want in zip(got, (88.212, 66.855, 44.267, 26.443, 7.388, 4.199)):
        assert g == pytest.approx(want, abs=5e-4)
    assert rg.curve.points[0] == (4.75, 100.0)
    # Regraded d85B 1.7585 mm (W2: 4 x 1.7585 = 7.03 mm).
    assert cv.size_at(rg.curve, 85) == pytest.approx(1.7585, rel=5e-4)


def test_d_values_are_null_outside_the_measured_range():
    c = cv.make_curve([(4.75, 100.0), (0.075, 30.0)])
    d = cv.d_values(c)
    assert d["D10"] is None and d["D15"] is None and d["D30"] is not None
    assert cv.coefficient_of_uniformity(d["D60"], d["D10"]) is None
    top = cv.make_curve([(4.75, 80.0), (0.075, 2.0)])
    assert cv.size_at(top, 90) is None and cv.passing_at(top, 10.0) is None
    assert cv.passing_at(cv.make_curve([(4.75, 100.0), (0.075, 2.0)]), 75.0) == 100.0


def test_cu_cc_definitions():
    # ASTM D2487: Cu = D60/D10, Cc = D30^2/(D10*D60).
    assert cv.coefficient_of_uniformity(1.2, 0.2) == pytest.approx(6.0)
    assert cv.coefficient_of_curvature(0.5, 0.2, 1.25) == pytest.approx(1.0)


def test_fractions_use_the_d2487_size_limits():
    # 75 / 4.75 / 0.075 mm (ASTM D2487).
    c = cv.make_curve([(100.0, 100.0), (75.0, 96.0), (4.75, 40.0), (0.075, 7.0)])
    f = cv.fractions(c)
    assert (f.cobbles_pct, f.gravel_pct, f.sand_pct, f.fines_pct) == pytest.approx((4.0, 56.0, 33.0, 7.0))


@pytest.mark.parametrize("side, fm", [("max", 2.15), ("min", 3.45), ("mid", 2.80)])
def test_c125_fineness_modulus_of_the_c33_limit_curves(side, fm):
    # lab-methods.md §4.1 [computed]: FM of the C33 Table 1 limit curves 2.15 / 3.45 / 2.80 (2 decimals).
    limits = next(p for p in PRESETS if p["id"] == "astm-c33-fine")["limits"]
    pick = {"max": lambda x: x["max_pct"], "min": lambda x: x["min_pct"],
            "mid": lambda x: (x["min_pct"] + x["max_pct"]) / 2}[side]
    c = cv.make_curve([(x["opening_mm"], pick(x)) for x in limits])
    assert cv.fineness_modulus(c) == pytest.approx(fm, abs=0.005)


def test_fineness_modulus_by_hand_on_the_29_example():
    # ASTM C125: sum of cumulative % retained on 150 um..150 mm / 100. Example §2.9 (constructed):
    # 0 (37.5 and up) + 0 (19) + 7.0 + 19.0 + 33.1 + 48.4 + 65.1 + 81.2 + 91.8 (table, 0.1 %) = 3.456.
    from conftest import EXAMPLE_29
    red = reduce_test(EXAMPLE_29, "test")
    assert red.gradation["fineness_modulus"] == pytest.approx(3.456, abs=0.0035)
    # Without the 0.15 mm sieve the modulus is not defined (no interpolation).
    assert cv.fineness_modulus(cv.make_curve([(4.75, 100.0), (0.3, 20.0)])) is None


def test_make_curve_refuses_bad_points():
    with pytest.raises(InputError):
        cv.make_curve([(1.0, 50.0)])
    with pytest.raises(InputError) as e:
        cv.make_curve([(1.0, 50.0), (-1.0, 10.0)], "p")
    assert e.value.field == "p[1].opening_mm"


def test_platform_independent_ln_and_exp_agree_with_libm_to_a_few_ulps():
    # curve.ln / curve.exp use only IEEE-754 basic operations so CPython and Pyodide give the same
    # bits; here they are checked against the platform's math.log / math.exp (reference library).
    rng = random.Random(7)
    for _ in range(20000):
        x = math.exp(rng.uniform(-12.0, 12.0))
        assert cv.ln(x) == pytest.approx(math.log(x), rel=1e-15, abs=1e-15)
        y = rng.uniform(-25.0, 25.0)
        assert cv.exp(y) == pytest.approx(math.exp(y), rel=1e-15)
    assert cv.ln(1.0) == 0.0 and cv.exp(0.0) == 1.0 and cv.ln(2.0) == math.log(2.0)


def _size_at_by_scan(curve, pct):
    """The pair-by-pair scan that :func:`tamis.curve.size_at` replaced by a bisection (reference)."""
    pts = curve.points
    for k in range(1, len(pts)):
        p_l, p_s = pts[k - 1][1], pts[k][1]
        if p_l == p_s:
            continue
        if p_s <= pct <= p_l:
            if pct == p_l:
                return pts[k - 1][0]
            if pct == p_s:
                return pts[k][0]
            logs = curve.log_sizes
            t = (pct - p_s) / (p_l - p_s)
            return cv.exp(logs[k] + t * (logs[k - 1] - logs[k]))
    if len(pts) and all(p == pts[0][1] for _, p in pts) and pts[0][1] == pct:
        return pts[-1][0]
    return None


@pytest.mark.parametrize("seed", range(40))
def test_size_at_by_bisection_gives_the_bits_of_the_pair_scan(seed):
    """The bisection of size_at returns exactly what the coarse-to-fine pair scan returned, on curves with
    flat runs (at 100 %, 0 % and in between), on every measured percentage and between them."""
    rng = random.Random(seed)
    n = rng.randint(2, 12)
    sizes = sorted({round(rng.uniform(-3, 2), 3) for _ in range(n + 4)}, reverse=True)[:n]
    pcts = sorted((rng.choice([0.0, 100.0, 50.0, round(rng.uniform(0, 100), 1)]) for _ in sizes), reverse=True)
    c = cv.Curve(tuple((10.0 ** s, p) for s, p in zip(sizes, pcts)))
    probes = {p for _, p in c.points} | {0.0, 100.0, 15.0, 85.0} | {rng.uniform(0, 100) for _ in range(20)}
    for pct in probes:
        assert cv.size_at(c, pct) == _size_at_by_scan(c, pct), (c.points, pct)
