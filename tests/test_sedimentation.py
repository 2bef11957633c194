"""Hydrometer (sedimentation) reduction and the combined sieve + sedimentation curve.

Published checks, each at its printed precision:
- envalysis (R package), vignettes/texture.md, ``clayloam`` data: a complete 152H reduction;
- atechcenter hydrometer procedure (atechcenter.com/hyd11.html, hyd12.html), Steps II and III;
- ASTM D422 K table (Gs 2.65, 16-30 C) as copied in envalysis sysdata.rda;
- the 152H a-factor table (atechcenter hyd11);
- the diameter example of the lab-methods reference (20 C, Gs 2.65, R 30, 60 min -> 0.0059 mm).
"""

from __future__ import annotations

import copy
import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from tamis import api
from tamis.errors import InputError
from tamis.lab.reduction import reduce_test
from tamis.lab.sedimentation import a_factor, reduce_sedimentation, stokes_k, viscosity_poise

# envalysis vignettes/texture.md, clayloam: 152H, Gs 2.65, 50 g, 23 C, blank 2, C_T +0.7, K 0.01317 (printed)
ENVALYSIS_K = 0.01317
ENVALYSIS = [  # t min, R, Rc, L cm, D mm, P (fraction)
    (0.66, 39, 37.7, 10.112, 0.05155, 0.754),
    (2, 33, 31.7, 11.096, 0.03102, 0.634),
    (5, 29, 27.7, 11.752, 0.02019, 0.554),
    (15, 23, 21.7, 12.736, 0.01214, 0.434),
    (30, 22, 20.7, 12.900, 0.00864, 0.414),
    (60, 20, 18.7, 13.228, 0.00618, 0.374),
    (180, 18, 16.7, 13.556, 0.00361, 0.334),
]


def envalysis_sheet() -> dict:
    # envalysis takes L = 16.2946 - 0.164 Rc from the fully corrected reading; with a meniscus
    # correction of -1.3 (= -composite) the depth argument R + C_m is that Rc.
    return {"hydrometer": "152H", "specific_gravity": 2.65, "dry_mass_g": 50.0, "split_mm": 2.0,
            "composite_correction": 2 - 0.7, "meniscus_correction": -1.3,
            "depth_calibration": [{"reading": 0, "depth_cm": 16.2946}, {"reading": 50, "depth_cm": 16.2946 - 8.2}],
            "readings": [{"time_min": t, "reading": r, "temperature_c": 23} for t, r, *_ in ENVALYSIS]}


def test_envalysis_clayloam_at_printed_precision():
    sed = reduce_sedimentation(envalysis_sheet(), "s", 100.0)
    assert abs(sed.readings[0].k - ENVALYSIS_K) <= 5e-5  # ICT viscosity vs the D422 K table
    for r, (t, _, rc, big_l, d, p) in zip(sed.readings, ENVALYSIS):
        assert round(r.corrected_reading, 1) == rc
        assert round(r.effective_depth_cm, 3) == pytest.approx(big_l, abs=1e-9)
        # the printed D uses the printed K: compare sqrt(L/t) through it
        assert round(ENVALYSIS_K * r.diameter_mm / r.k, 5) == pytest.approx(d, abs=1e-12)
        assert abs(r.diameter_mm - d) <= 0.002 * d + 0.5e-5  # ours (ICT K) within 0.2 % plus the printed rounding
        assert round(r.finer_suspension_pct / 100, 3) == pytest.approx(p, abs=1e-12)
        assert r.finer_pct == pytest.approx(r.finer_suspension_pct)


def test_atechcenter_steps_two_and_three():
    # R = 38.0 - 7.5 = 30.5, a = 1.00, W = 81.09 g -> 37.6 %; 42 % retained on 2 mm -> 21.8 %
    sheet = {"hydrometer": "152H", "specific_gravity": 2.65, "dry_mass_g": 81.09, "split_mm": 2.0,
             "composite_correction": 7.5, "readings": [{"time_min": 60, "reading": 38.0, "temperature_c": 20}]}
    r = reduce_sedimentation(sheet, "s", 58.0).readings[0]
    assert round(r.finer_suspension_pct, 1) == 37.6
    assert round(r.finer_pct, 1) == 21.8


D422_K_265 = [0.01435, 0.01417, 0.01399, 0.01382, 0.01365, 0.01348, 0.01332, 0.01317, 0.01301, 0.01286,
              0.01272, 0.01258, 0.01244, 0.01230, 0.01217]


@pytest.mark.parametrize("temp, k", list(zip(range(16, 31), D422_K_265)))
def test_k_against_d422_table(temp, k):
    assert abs(stokes_k(float(temp), 2.65) - k) <= 5e-5


def test_k_das_table_2_9():
    # Das & Sobhan, Principles of Geotechnical Engineering, 9th ed., Table 2.9: K 0.01272 at 26 C, Gs 2.65
    assert abs(stokes_k(26.0, 2.65) - 0.01272) <= 5e-5


@pytest.mark.parametrize("gs, a", [(2.85, 0.96), (2.75, 0.98), (2.65, 1.00), (2.55, 1.02)])
def test_a_factor_table(gs, a):
    assert round(a_factor(gs), 2) == a


def test_diameter_example_152h():
    sheet = {"hydrometer": "152H", "specific_gravity": 2.65, "dry_mass_g": 50.0, "split_mm": 2.0,
             "composite_correction": 0.0, "readings": [{"time_min": 60, "reading": 30, "temperature_c": 20}]}
    r = reduce_sedimentation(sheet, "s", 100.0).readings[0]
    assert round(r.effective_depth_cm, 2) == 11.38
    assert abs(r.k - 0.01363) <= 1e-4  # the example prints K 0.01363 where the D422 table has 0.01365
    assert round(0.01363 * r.diameter_mm / r.k, 4) == 0.0059  # D through the printed K


def test_independent_numpy_stokes():
    """Stokes' law in SI with numpy (ln-interpolated ICT viscosity, g = 9.80 m/s2, water 1000 kg/m3)."""
    t_c = np.array([16, 18, 20, 22, 23, 24, 25, 26, 28, 30.0])
    eta_cp = np.array([1.1156, 1.0603, 1.0087, 0.9608, 0.9380, 0.9161, 0.8949, 0.8746, 0.8363, 0.8004])
    rng = np.random.default_rng(7)
    for _ in range(200):
        temp = rng.uniform(16, 30)
        gs = rng.uniform(2.4, 2.9)
        reading = rng.uniform(5, 50)
        t_min = rng.uniform(1, 1440)
        w = rng.uniform(30, 100)
        eta = float(np.exp(np.interp(temp, t_c, np.log(eta_cp)))) * 1e-3  # Pa s
        big_l = (16.3 - 0.1641 * reading) / 100  # m
        v = big_l / (t_min * 60)
        d = math.sqrt(18 * eta * v / ((gs - 1) * 1000 * 9.80)) * 1000  # mm
        p = 100 * (1.65 * gs / ((gs - 1) * 2.65)) * (reading - 1.5) / w * 0.8
        sheet = {"hydrometer": "152H", "specific_gravity": gs, "dry_mass_g": w, "split_mm": 0.075,
                 "composite_correction": 1.5,
                 "readings": [{"time_min": t_min, "reading": reading, "temperature_c": temp}]}
        r = reduce_sedimentation(sheet, "s", 80.0).readings[0]
        assert viscosity_poise(temp) * 0.1 == pytest.approx(eta, rel=1e-12)
        assert r.diameter_mm == pytest.approx(d, rel=1e-9)
        assert r.finer_pct == pytest.approx(p, rel=1e-9)


def test_correction_calibration_interpolated():
    sheet = {"hydrometer": "152H", "specific_gravity": 2.65, "dry_mass_g": 50.0, "split_mm": 2.0,
             "correction_calibration": [{"temperature_c": 18, "composite_correction": 6.0},
                                        {"temperature_c": 26, "composite_correction": 4.0}],
             "readings": [{"time_min": 2, "reading": 30, "temperature_c": 22},
                          {"time_min": 5, "reading": 28, "temperature_c": 30}]}
    sed = reduce_sedimentation(sheet, "s", 100.0)
    assert sed.readings[0].composite_correction == pytest.approx(5.0)
    assert sed.readings[1].composite_correction == pytest.approx(3.0)  # extrapolated, warned
    assert "sed_correction_extrapolated" in [f.code for f in sed.findings]


def _sheet(**kw):
    base = {"hydrometer": "152H", "specific_gravity": 2.7, "dry_mass_g": 50.0, "split_mm": 2.0,
            "composite_correction": 5.0,
            "readings": [{"time_min": 2, "reading": 40, "temperature_c": 20},
                         {"time_min": 30, "reading": 30, "temperature_c": 20}]}
    base.update(kw)
    return base


@pytest.mark.parametrize("reading0, code", [
    ({"time_min": 0.5, "reading": 40, "temperature_c": 20}, "sed_early_reading"),
    ({"time_min": 2, "reading": 40, "temperature_c": 12}, "sed_temperature_range"),
    ({"time_min": 2, "reading": 20, "temperature_c": 20}, "sed_reading_rises"),
])
def test_warnings(reading0, code):
    sheet = _sheet()
    sheet["readings"][0] = reading0
    codes = [f.code for f in reduce_sedimentation(sheet, "s", 100.0).findings]
    assert code in codes


def test_stokes_range_warning_and_no_clamp():
    sheet = _sheet(readings=[{"time_min": 1, "reading": 40, "temperature_c": 20},
                             {"time_min": 20000, "reading": 2, "temperature_c": 20}])
    sed = reduce_sedimentation(sheet, "s", 100.0)
    assert sed.readings[0].diameter_mm > 0.02
    assert sed.readings[1].finer_suspension_pct < 0  # reading below the correction: not clamped
    codes = [f.code for f in sed.findings]
    assert "sed_percent_range" in codes


@pytest.mark.parametrize("change, field", [
    ({"hydrometer": "150X"}, "s.hydrometer"),
    ({"hydrometer": "151H"}, "s.depth_calibration"),
    ({"specific_gravity": 1.0}, "s.specific_gravity"),
    ({"dry_mass_g": 0}, "s.dry_mass_g"),
    ({"split_mm": 0.425}, "s.split_mm"),
    ({"composite_correction": None}, "s.readings[0].composite_correction"),
    ({"readings": [{"time_min": 5, "reading": 40, "temperature_c": 20},
                   {"time_min": 5, "reading": 30, "temperature_c": 20}]}, "s.readings[1].time_min"),
    ({"readings": [{"time_min": 5, "reading": "40", "temperature_c": 20}]}, "s.readings[0].reading"),
])
def test_errors_have_field_paths(change, field):
    with pytest.raises(InputError) as e:
        reduce_sedimentation(_sheet(**change), "s", 100.0)
    assert e.value.field == field


def test_151h_with_calibration():
    sheet = {"hydrometer": "151H", "specific_gravity": 2.65, "dry_mass_g": 50.0, "split_mm": 2.0,
             "composite_correction": 0.001,
             "depth_calibration": [{"reading": 1.000, "depth_cm": 16.3}, {"reading": 1.038, "depth_cm": 6.3}],
             "readings": [{"time_min": 2, "reading": 1.020, "temperature_c": 20}]}
    r = reduce_sedimentation(sheet, "s", 100.0).readings[0]
    assert r.effective_depth_cm == pytest.approx(16.3 - 10 * 0.020 / 0.038)
    assert r.finer_suspension_pct == pytest.approx(100000 * 2.65 / 1.65 * 0.019 / 50)


# --- the combined curve -------------------------------------------------------------------------------

CLAY_SIEVES = {  # invented data (not measured): a clay core, 500 g, split at 2 mm
    "dry_mass_g": 500.0, "pan_g": 0.0, "washed_dry_mass_g": 120.0,
    "sieves": [{"opening_mm": 4.75, "retained_g": 0.0}, {"opening_mm": 2.0, "retained_g": 10.0},
               {"opening_mm": 0.425, "retained_g": 30.0}, {"opening_mm": 0.075, "retained_g": 80.0}],
    "plasticity": {"liquid_limit": 42, "plasticity_index": 22},
}
CLAY_SED = {"hydrometer": "152H", "specific_gravity": 2.70, "dry_mass_g": 50.0, "split_mm": 2.0,
            "composite_correction": 5.5,
            "readings": [{"time_min": 1, "reading": 44, "temperature_c": 21},
                         {"time_min": 4, "reading": 38, "temperature_c": 21},
                         {"time_min": 15, "reading": 31, "temperature_c": 21.5},
                         {"time_min": 60, "reading": 24, "temperature_c": 22},
                         {"time_min": 240, "reading": 18, "temperature_c": 22},
                         {"time_min": 1440, "reading": 13, "temperature_c": 21}]}
SAND_FILTER = {"passing": [{"opening_mm": 4.75, "passing_pct": 100}, {"opening_mm": 2.36, "passing_pct": 95},
                           {"opening_mm": 1.18, "passing_pct": 75}, {"opening_mm": 0.6, "passing_pct": 45},
                           {"opening_mm": 0.3, "passing_pct": 18}, {"opening_mm": 0.15, "passing_pct": 5},
                           {"opening_mm": 0.075, "passing_pct": 1}], "plasticity": {"nonplastic": True}}


def clay_core() -> dict:
    return dict(copy.deepcopy(CLAY_SIEVES), sedimentation=copy.deepcopy(CLAY_SED))


def evaluate(base: dict) -> dict:
    req = {"schema": 1, "op": "evaluate", "id": "x", "sample": SAND_FILTER, "base": base,
           "rules": {"criteria": "nrcs-1994"}}
    out = json.loads(api.handle(json.dumps(req)))
    assert out["ok"], out
    return out["result"]


def test_combined_points_say_their_source():
    red = reduce_test(clay_core(), "base")
    pts = red.gradation["points"]
    assert [p["source"] for p in pts] == ["sieve"] * 4 + ["sedimentation"] * 6
    ds = [p["opening_mm"] for p in pts]
    assert ds == sorted(ds, reverse=True)
    # split sieve 2 mm passes 98 %: the whole-specimen percent is the suspension's x 0.98
    for r in red.sedimentation["readings"]:
        assert r["finer_pct"] == pytest.approx(r["finer_suspension_pct"] * 0.98)


def test_clay_core_masses_plus_hydrometer_equals_typed_sheet():
    """Done-when: the same category, d85B and filter limits from the masses + readings and from the
    percent-finer sheet the reduction prints (typed at full precision, and as a lab types it: 0.1 %,
    four significant digits in the diameter)."""
    combined = evaluate(clay_core())
    pts = combined["base"]["points"]
    typed = {"passing": [{"opening_mm": p["opening_mm"], "passing_pct": p["passing_pct"]} for p in pts],
             "plasticity": CLAY_SIEVES["plasticity"]}
    same = evaluate(typed)
    assert combined["base_category"] == same["base_category"]
    assert combined["base"]["d_mm"]["D85"] == same["base"]["d_mm"]["D85"]
    assert combined["limits"] == same["limits"]
    assert combined["verdict"] == same["verdict"]
    sheet = {"passing": [{"opening_mm": float(f"{p['opening_mm']:.4g}"), "passing_pct": round(p["passing_pct"], 1)}
                         for p in pts], "plasticity": CLAY_SIEVES["plasticity"]}
    lab = evaluate(sheet)
    assert lab["base_category"] == combined["base_category"]
    assert lab["base"]["d_mm"]["D85"] == pytest.approx(combined["base"]["d_mm"]["D85"], rel=2e-3)
    assert lab["verdict"] == combined["verdict"]
    assert combined["base"]["d_mm"]["D15"] is not None  # the hydrometer made the fine D-values determinable
    assert evaluate(dict(CLAY_SIEVES))["base"]["d_mm"]["D15"] is None


def test_split_sieve_must_be_in_the_test():
    core = clay_core()
    core["sedimentation"]["split_mm"] = 0.075
    core["sieves"] = [s for s in core["sieves"] if s["opening_mm"] != 0.075] + [
        {"opening_mm": 0.15, "retained_g": 80.0}]
    with pytest.raises(InputError) as e:
        reduce_test(core, "base")
    assert e.value.field == "base.sedimentation.split_mm"


def test_sedimentation_point_above_sieve_curve_is_an_error_on_its_reading():
    core = clay_core()
    core["sedimentation"]["readings"][0]["reading"] = 60  # 0.98 x ~106 % > 76 % at 0.075 mm
    with pytest.raises(InputError) as e:
        reduce_test(core, "base")
    assert e.value.field.startswith("base.sedimentation.readings[0]")


@settings(max_examples=200, deadline=None)
@given(st.lists(st.floats(0.0, 8.0), min_size=2, max_size=8), st.floats(2.4, 2.9), st.floats(16, 30),
       st.floats(30, 100))
def test_property_monotone_readings_give_monotone_curve(drops, gs, temp, w):
    """Readings that never rise with time: a finer diameter never gets a higher percent finer."""
    r, times, readings = 50.0, [], []
    for i, dr in enumerate(drops):
        r -= dr
        times.append(2.0 ** i)
        readings.append(r)
    sheet = {"hydrometer": "152H", "specific_gravity": gs, "dry_mass_g": w, "split_mm": 2.0,
             "composite_correction": 3.0,
             "readings": [{"time_min": t, "reading": x, "temperature_c": temp} for t, x in zip(times, readings)]}
    out = reduce_sedimentation(sheet, "s", 90.0).readings
    for a, b in zip(out, out[1:]):
        assert b.diameter_mm < a.diameter_mm
        assert b.finer_pct <= a.finer_pct


@settings(max_examples=200, deadline=None)
@given(st.floats(2.4, 2.9), st.floats(30, 50), st.floats(20, 100), st.floats(-0.5, 0.5))
def test_property_continuous_at_split(gs, w, passing_split, off):
    """A reading whose corrected value means all of the suspension (P = 100 %) gives the split sieve's
    percent passing, within the percent one half division of the hydrometer stands for."""
    a = 1.65 * gs / ((gs - 1) * 2.65)
    full = w / a  # corrected reading for 100 % of the suspension
    sheet = {"hydrometer": "152H", "specific_gravity": gs, "dry_mass_g": w, "split_mm": 2.0,
             "composite_correction": 0.0,
             "readings": [{"time_min": 1, "reading": full + off, "temperature_c": 20}]}
    r = reduce_sedimentation(sheet, "s", passing_split).readings[0]
    resolution = 100 * a * 0.5 / w * passing_split / 100
    assert abs(r.finer_pct - passing_split) <= resolution * (1 + 1e-9)


def test_an_undetermined_fine_d_value_asks_for_a_later_reading_once_readings_are_given():
    """The finest point of a combined curve is a hydrometer reading: the note asks for a later reading,
    not for the analysis that was given; without the readings it asks for the analysis (ASTM D7928)."""
    req = json.loads((Path(__file__).parent / "golden" / "gradation-sedimentation-clay-core.request.json")
                     .read_text(encoding="utf-8"))
    with_sed = json.loads(api.handle(json.dumps(req)))
    (note,) = [f for f in with_sed["findings"] if f["code"] == "d_below_range"]
    assert "last hydrometer reading" in note["message"] and "D7928" not in note["message"]
    req["test"].pop("sedimentation")
    sieves_only = json.loads(api.handle(json.dumps(req)))
    (note,) = [f for f in sieves_only["findings"] if f["code"] == "d_below_range"]
    assert "finest sieve" in note["message"] and "D7928" in note["message"]
