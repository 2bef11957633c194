"""Permeability estimates (never verdicts): Hazen and Kozeny-Carman per Carrier (2003).

Source: Carrier, W.D. (2003), Goodbye, Hazen; Hello, Kozeny-Carman, JGGE
129(11):1054-1056: Hazen form k = C_H D10^2 (Eq. 1) READ; C_H = 100, the
Hazen validity range (D10 0.1-3 mm, Cu < 5) and the Kozeny-Carman constants
FROM MEMORY. The worked example below is CONSTRUCTED data (not from a
source); its k values were computed by hand from the same recalled formula,
so they check the arithmetic, not the formula.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import EXAMPLE_29

from tamis.criteria import permeability as pm
from tamis.criteria.rules import parse_rules
from tamis.lab.curve import make_curve
from tamis.lab.reduction import reduce_test


def test_hazen_formula():
    assert pm.hazen_k_cm_s(0.2, 100.0) == pytest.approx(0.04)
    assert pm.hazen_k_cm_s(1.0, 50.0) == pytest.approx(0.5)


def test_hazen_in_range_has_no_warning_and_is_not_a_verdict():
    c = make_curve([(2.0, 100), (0.6, 60), (0.3, 10), (0.15, 0)])   # D10 0.3 mm, Cu = 2
    chk, fnd = pm.hazen_estimate(c)
    assert chk.status == "not_applicable" and chk.extra["estimate"] is True
    assert chk.value == pytest.approx(100 * 0.03 ** 2)
    assert fnd == []


@pytest.mark.parametrize("pts", [[(2.0, 100), (0.6, 60), (0.08, 10), (0.04, 0)],      # D10 below 0.1 mm
                                 [(19.0, 100), (4.75, 60), (0.3, 10), (0.15, 0)]])    # Cu > 5
def test_hazen_out_of_range_warns_without_clamping(pts):
    c = make_curve(pts)
    chk, fnd = pm.hazen_estimate(c)
    assert fnd and all(f.level == "warning" for f in fnd)
    d10 = c.points[-2][0]
    assert chk.value == pytest.approx(100 * (d10 / 10) ** 2)


def test_example_29_hazen_and_kozeny_carman():
    curve = reduce_test(EXAMPLE_29, "test").curve
    chk, _ = pm.hazen_estimate(curve)
    assert chk.extra["d10_mm"] == pytest.approx(0.169, abs=5e-4)       # D10 of the constructed example (by hand)
    assert chk.value == pytest.approx(2.9e-2, abs=5e-4)
    for low, k_expect in [(None, 8.4e-2), (0.010, 4.2e-2), (0.002, 1.2e-2)]:
        r = parse_rules({"void_ratio": 0.60, "shape_factor": 7.0, "kc_pan_lower_mm": low})
        kc, _ = pm.kozeny_carman_estimate(curve, {"nonplastic": True}, r)
        assert kc.value == pytest.approx(k_expect, rel=0.06), low    # quoted to 2 figures
    r = parse_rules({"void_ratio": 0.60})
    kc, _ = pm.kozeny_carman_estimate(curve, {}, r)
    assert kc.extra["d_eff_mm"] == pytest.approx(0.39, abs=0.005)


def test_kozeny_carman_against_numpy():
    pts = [(9.5, 100), (4.75, 85), (2.36, 60), (1.18, 35), (0.6, 18), (0.3, 8), (0.15, 3), (0.075, 1)]
    c = make_curve(pts)
    d = np.array([p[0] for p in pts] + [0.0375]) / 10.0          # cm, pan fraction down to 0.0375 mm
    p = np.array([p[1] for p in pts] + [0.0])
    f = p[:-1] - p[1:]
    d_eff_cm = 100.0 / np.sum(f / (d[:-1] ** 0.404 * d[1:] ** 0.595))
    e, sf = 0.5, 6.4
    k = 1.99e4 * d_eff_cm ** 2 / sf ** 2 * e ** 3 / (1 + e)
    kc, _ = pm.kozeny_carman_estimate(c, {"nonplastic": True}, parse_rules({"void_ratio": e, "shape_factor": sf}))
    assert kc.value == pytest.approx(float(k), rel=1e-9)


def test_kozeny_carman_needs_void_ratio_and_a_full_top():
    c = make_curve([(9.5, 100), (0.075, 2)])
    kc, _ = pm.kozeny_carman_estimate(c, {}, parse_rules(None))
    assert kc.value is None and "void_ratio" in kc.message
    c2 = make_curve([(9.5, 90), (0.075, 2)])
    kc2, _ = pm.kozeny_carman_estimate(c2, {}, parse_rules({"void_ratio": 0.5}))
    assert kc2.value is None


def test_kozeny_carman_warns_for_plastic_fines_and_odd_shape():
    c = make_curve([(9.5, 100), (0.075, 2)])
    _, fnd = pm.kozeny_carman_estimate(c, {"plasticity_index": 8}, parse_rules({"void_ratio": 0.5,
                                                                                "shape_factor": 9.0}))
    assert len(fnd) == 2


def test_ratio_estimate():
    assert pm.ratio_estimate(1.0, 0.2).value == pytest.approx(25.0)
    assert pm.ratio_estimate(None, 0.2).value is None
