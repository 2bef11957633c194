"""Sieve masses -> percent passing, and the lab QA checks.

Sources named beside each test:
- ASTM C136/C136M-14 laboratory checklist (read): item 9, the mass after sieving
  within 0.3 % of the original dry mass; item 11, percentages on the original dry
  mass including the washed fines; item 7, 200 g on an 8 in (203 mm) and 469 g
  on a 12 in (305 mm) sieve below 4.75 mm.
- ASTM C136/C136M-19 §8.3 (read): 7 kg/m2 below 4.75 mm; 2.5 x opening(mm) x
  area(m2) kg at and above 4.75 mm. Frame areas from memory.
- Published mass table W2 (a student laboratory report quoting FEMA 2011 steps
  1-2; secondary source), which divides by the summed mass 499.6 g.
- A constructed worked example (not from a published source, worked by hand),
  with its table printed to 0.1 %.
"""

import math
from decimal import Decimal

import pytest

from conftest import EXAMPLE_29, mass_test
from tamis.lab import sieve_analysis
from tamis.errors import InputError
from tamis.lab.reduction import reduce_test
from tamis.checks import FAIL, NEEDS_DATA, PASS, WARN

# W2: (opening mm, retained g), pan 20.8 g, total 499.6 g; printed % passing.
W2 = [(4.75, 4.2), (2.0, 58.4), (0.85, 105.8), (0.425, 111.9), (0.25, 88.3), (0.106, 94.4), (0.075, 15.8)]
W2_PRINTED = [99.15932746, 87.46997598, 66.29303443, 43.89511609, 26.22097678, 7.325860689, 4.163330665]


def test_w2_published_masses_give_the_printed_percent_passing():
    # W2 (student report quoting FEMA 2011 steps 1-2): divides by the summed mass 499.6 g.
    t = mass_test(dict(W2), 499.6, pan_g=20.8)
    red = reduce_test(t, "test")
    passing = [r["passing_pct"] for r in red.table]
    for got, printed in zip(passing, W2_PRINTED):
        assert got == pytest.approx(printed, abs=1e-8)  # printed to 10 significant digits
    assert red.checks[0].id == "qa.mass_balance" and red.checks[0].status == PASS
    assert red.gradation["fines_pct"] == pytest.approx(4.16, abs=0.005)  # printed 4.16 %
    # The top sieve (No. 4) retains 4.2 g, so what lies above 75 mm is not measured: tamis
    # leaves gravel unknown rather than assume it. The report states there is nothing
    # coarser; with an empty 9.5 mm sieve on top its printed gravel 0.84 % follows.
    assert red.gradation["gravel_pct"] is None
    t["sieves"].append({"opening_mm": 9.5, "retained_g": 0.0})
    g = reduce_test(t, "test").gradation
    assert g["gravel_pct"] == pytest.approx(0.84, abs=0.005)
    assert g["sand_pct"] == pytest.approx(95.0, abs=0.5)  # printed "95 %"


def test_worked_example_29_constructed_data_table():
    # The constructed example, worked by hand: % retained, cumulative and passing printed to 0.1 %.
    red = reduce_test(EXAMPLE_29, "test")
    printed = [(0.0, 0.0, 100.0), (3.0, 3.0, 97.0), (4.0, 7.0, 93.0), (12.0, 19.0, 81.0), (14.0, 33.1, 66.9),
               (15.4, 48.4, 51.6), (16.7, 65.1, 34.9), (16.0, 81.2, 18.8), (10.7, 91.8, 8.2), (3.7, 95.6, 4.4)]
    for row, (r, cr, p) in zip(red.table, printed):
        assert row["retained_pct"] == pytest.approx(r, abs=0.05)
        assert row["cum_retained_pct"] == pytest.approx(cr, abs=0.05)
        assert row["passing_pct"] == pytest.approx(p, abs=0.05)
    m = red.mass
    # Sieving loss L = (1440.0 - 1438.5) / 1500 = 0.10 % (printed), reported separately.
    assert m["sieving_loss_g"] == pytest.approx(1.5, abs=1e-9)
    assert m["sieving_loss_pct"] == pytest.approx(0.10, abs=0.005)
    assert m["wash_loss_g"] == pytest.approx(60.0, abs=1e-9)
    # The cumulative method gives 4.44 % passing 75 um; wash loss + pan would give 4.34 % (§2.9).
    assert red.table[-1]["passing_pct"] == pytest.approx(4.44, abs=0.005)
    assert 100 * (60.0 + 5.1) / 1500.0 == pytest.approx(4.34, abs=0.005)
    # D-values of §3.1 from this example, printed to 3 decimals (D85 to 2).
    d = red.gradation["d_mm"]
    for key, printed_mm in (("D10", 0.169), ("D15", 0.234), ("D30", 0.486), ("D50", 1.108), ("D60", 1.726)):
        assert d[key] == pytest.approx(printed_mm, abs=0.0005)
    assert d["D85"] == pytest.approx(6.00, abs=0.005)
    assert red.gradation["cu"] == pytest.approx(10.2, abs=0.05)  # §3.2
    assert red.gradation["cc"] == pytest.approx(0.81, abs=0.005)
    assert red.gradation["uscs"]["symbol"] == "SP"  # §3.3 example
    assert red.gradation["uscs"]["name"] == "poorly graded sand with gravel"


@pytest.mark.parametrize("diff_g, status", [(2.9, PASS), (3.1, FAIL), (-2.9, PASS), (-3.1, FAIL)])
def test_c136_mass_balance_on_each_side_of_0_3_percent(diff_g, status):
    # ASTM C136/C136M-14 checklist item 9: over 0.3 % of the original dry mass fails.
    # 1000 g dry, unwashed: sum + pan = 1000 + diff; 2.9 g = 0.29 %, 3.1 g = 0.31 %.
    t = mass_test({4.75: 100.0, 2.0: 400.0, 0.425: 300.0 + min(diff_g, 0.0), 0.075: 150.0},
                  1000.0, pan_g=50.0 + max(diff_g, 0.0))
    c = reduce_test(t, "test").checks[0]
    assert c.id == "qa.mass_balance"
    assert c.value == pytest.approx(abs(diff_g) / 10.0, abs=1e-9)
    assert c.status == status


@pytest.mark.parametrize("masses, dry, status", [
    ((219.08, 4716.07, 0.0), 4950.0, PASS),   # 14.85 g short of 4950.0 g: exactly 0.3 %
    ((219.08, 4716.06, 0.0), 4950.0, FAIL),   # 14.86 g: just over
    ((733.78, 1708.87, 0.0), 2450.0, PASS),   # 7.35 g: exactly 0.3 %
    ((733.78, 1700.0, 15.78), 2442.65, PASS),  # 6.91 g gained (pan included): 0.283 %
    ((733.78, 1700.0, 16.2), 2442.65, FAIL),   # 7.33 g gained: 0.3001 %
])
def test_exactly_0_3_percent_passes_and_just_over_fails(masses, dry, status):
    # C136: a difference of "more than 0.3 %" fails, so exactly 0.3 % passes. In binary floats
    # 219.08 + 4716.07 - 4950.0 gives 0.3000000000000073 %: the decision is made on the masses as
    # typed (exact decimals), never tipped over by float rounding.
    t = mass_test({4.75: masses[0], 0.075: masses[1]}, dry, pan_g=masses[2])
    c = reduce_test(t, "test").checks[0]
    exact = abs(sum(Decimal(repr(m)) for m in masses) - Decimal(repr(dry))) * 1000 <= Decimal(repr(dry)) * 3
    assert (PASS if exact else FAIL) == status
    assert c.status == status
    assert c.value == pytest.approx(abs(sum(masses) - dry) / dry * 100.0, rel=1e-9)


def test_mass_balance_uses_the_washed_mass_but_the_original_dry_mass_as_base():
    # ASTM C136 with C117 (docs/methods.md): mass on the sieves is the washed dry mass;
    # the 0.3 % is of the original dry mass (2000 g: 6 g allowed).
    t = mass_test({4.75: 500.0, 0.075: 1294.5}, 2000.0, pan_g=0.0, washed_dry_mass_g=1800.0)
    c = reduce_test(t, "test").checks[0]
    assert c.value == pytest.approx(5.5 / 2000 * 100)
    assert c.status == PASS
    t["sieves"][1]["retained_g"] = 1293.5  # 6.5 g short: 0.325 %
    assert reduce_test(t, "test").checks[0].status == FAIL


def test_c136_overload_limits_for_the_203_and_305_mm_frames():
    # ASTM C136-14 checklist item 7: about 200 g (203 mm) and 469 g (305 mm) below 4.75 mm.
    assert sieve_analysis.overload_limit_g(2.36, "203") == pytest.approx(200.0, abs=0.5)
    assert sieve_analysis.overload_limit_g(0.075, "305") == pytest.approx(469.0, abs=0.5)
    # C136-19 §8.3 rule with the 203 mm area 0.0285 m2 (from memory): 4.75 mm -> 0.34 kg,
    # 9.5 mm -> 0.68 kg, 37.5 mm -> 2.67 kg (computed by hand from the rule, 0.01 kg).
    assert sieve_analysis.overload_limit_g(4.75, "203") == pytest.approx(340.0, abs=5.0)
    assert sieve_analysis.overload_limit_g(9.5, "203") == pytest.approx(680.0, abs=5.0)
    assert sieve_analysis.overload_limit_g(37.5, "203") == pytest.approx(2670.0, abs=5.0)
    assert sieve_analysis.overload_limit_g(19.0, "372x580") == pytest.approx(10250.0, abs=5.0)
    assert sieve_analysis.overload_limit_g(0.6, "254") == pytest.approx(320.0, abs=5.0)


def test_overload_check_lists_each_overloaded_sieve():
    # 210 g on No. 8 over the 199.5 g limit; 199 g on No. 16 under it (C136-19 §8.3).
    t = mass_test({4.75: 300.0, 2.36: 210.0, 1.18: 199.0, 0.075: 100.0}, 820.0, pan_g=11.0)
    c = reduce_test(t, "test").checks[1]
    assert c.id == "qa.sieve_overload" and c.status == FAIL
    assert [o["opening_mm"] for o in c.extra["overloaded"]] == [2.36]
    t["frame_diameter_mm"] = 305  # 469 g limit: nothing overloaded
    c = reduce_test(t, "test").checks[1]
    assert c.status == PASS and c.extra["frame"] == "305"
    t["sieved_in_portions"] = True
    t["frame_diameter_mm"] = 203
    assert reduce_test(t, "test").checks[1].status == "not_applicable"


def test_specimen_mass_warning_by_nominal_maximum_size():
    # ASTM C136 minimum masses (from memory): 300 g for fine aggregate, 1 kg for 9.5 mm; nominal
    # maximum size one sieve above the first to retain more than 10 % (WAQTC FOP for AASHTO T 2, read).
    fine = mass_test({4.75: 0.0, 2.36: 50.0, 0.6: 150.0, 0.075: 60.0}, 290.0, pan_g=30.0)
    c = reduce_test(fine, "test").checks[2]
    assert c.id == "qa.specimen_mass" and c.status == WARN and c.limit == 300.0
    fine2 = mass_test({4.75: 0.0, 2.36: 50.0, 0.6: 160.0, 0.075: 60.0}, 300.0, pan_g=30.0)
    assert reduce_test(fine2, "test").checks[2].status == PASS
    coarse = mass_test({12.5: 0.0, 9.5: 60.0, 4.75: 300.0, 0.075: 540.0}, 999.0, pan_g=99.0)
    c = reduce_test(coarse, "test").checks[2]  # 9.5 mm retains 6 %, 4.75 mm 30 %: NMS 9.5 mm
    assert c.status == WARN and c.limit == 1000.0 and c.extra["nominal_max_size_mm"] == 9.5
    coarse["dry_mass_g"], coarse["pan_g"] = 1000.0, 100.0
    assert reduce_test(coarse, "test").checks[2].status == PASS
    top_retains = mass_test({9.5: 200.0, 4.75: 500.0, 0.075: 200.0}, 1000.0, pan_g=100.0)
    assert reduce_test(top_retains, "test").checks[2].status == NEEDS_DATA


def test_cumulative_entry_equals_retained_entry():
    # Same test as §2.9, entered as cumulative mass retained.
    cum, t = 0.0, {"entry": "cumulative", "sieves": [], "pan_g": 5.1, "dry_mass_g": 1500.0,
                   "washed_dry_mass_g": 1440.0}
    for s in EXAMPLE_29["sieves"]:
        cum += s["retained_g"]
        t["sieves"].append({"opening_mm": s["opening_mm"], "cumulative_retained_g": cum})
    a, b = reduce_test(EXAMPLE_29, "test"), reduce_test(t, "test")
    for ra, rb in zip(a.table, b.table):
        assert rb["passing_pct"] == pytest.approx(ra["passing_pct"], abs=1e-9)
    t["sieves"][3]["cumulative_retained_g"] = 10.0
    with pytest.raises(InputError) as e:
        reduce_test(t, "test")
    assert e.value.code == "cumulative_decreases" and e.value.field == "test.sieves[3].cumulative_retained_g"


def test_moist_mass_and_moisture_content_give_the_dry_mass():
    # Dry mass = moist / (1 + w/100) (definition of water content, ASTM D2216, from memory).
    t = dict(EXAMPLE_29)
    del t["dry_mass_g"]
    t.update(moist_mass_g=1575.0, moisture_pct=5.0)
    red = reduce_test(t, "test")
    assert red.mass["dry_mass_g"] == pytest.approx(1500.0, rel=1e-12)
    assert red.mass["moisture"] == {"moist_mass_g": 1575.0, "moisture_pct": 5.0, "dry_mass_g": red.mass["dry_mass_g"]}
    assert any(f.code == "moisture_conversion" for f in red.findings)
    t["dry_mass_g"] = 1500.0
    with pytest.raises(InputError) as e:
        reduce_test(t, "test")
    assert e.value.code == "conflicting_fields"


def test_sieves_by_designation_and_in_any_order():
    t = {"sieves": [{"sieve": "No. 200", "retained_g": 20.0}, {"sieve": "No. 4", "retained_g": 0.0},
                    {"sieve": "No. 40", "retained_g": 70.0}], "pan_g": 10.0, "dry_mass_g": 100.0}
    red = reduce_test(t, "test")
    assert [r["opening_mm"] for r in red.table] == [4.75, 0.425, 0.075]
    assert [r["passing_pct"] for r in red.table] == [100.0, 30.0, 10.0]


def test_passing_form_skips_mass_checks_and_keeps_hydrometer_points():
    t = {"passing": [{"opening_mm": 0.005, "passing_pct": 18.0}, {"opening_mm": 4.75, "passing_pct": 100.0},
                     {"opening_mm": 0.075, "passing_pct": 62.0}]}
    red = reduce_test(t, "test")
    assert [c.status for c in red.checks] == ["not_applicable"] * 3
    assert red.curve.points == ((4.75, 100.0), (0.075, 62.0), (0.005, 18.0))
    assert red.table[0]["retained_g"] is None


@pytest.mark.parametrize("mutate, code, field", [
    (lambda t: t["sieves"][2].update(retained_g=-1.0), "negative_mass", "test.sieves[2].retained_g"),
    (lambda t: t["sieves"][2].update(retained_g="12"), "not_a_number", "test.sieves[2].retained_g"),
    (lambda t: t["sieves"][2].update(retained_g=True), "not_a_number", "test.sieves[2].retained_g"),
    (lambda t: t["sieves"][2].pop("retained_g"), "missing_field", "test.sieves[2].retained_g"),
    (lambda t: t.update(dry_mass_g=0), "zero_dry_mass", "test.dry_mass_g"),
    (lambda t: t.pop("dry_mass_g"), "missing_field", "test.dry_mass_g"),
    (lambda t: t.update(pan_g=-0.1), "negative_mass", "test.pan_g"),
    (lambda t: t["sieves"][3].update(opening_mm=12.5), "duplicate_opening", "test.sieves[3].opening_mm"),
    (lambda t: t["sieves"][1].update(opening_mm=0), "out_of_range", "test.sieves[1].opening_mm"),
    (lambda t: t.update(washed_dry_mass_g=1600.0), "washed_exceeds_dry", "test.washed_dry_mass_g"),
    (lambda t: t["sieves"][5].update(retained_g=1400.0), "retained_exceeds_mass", "test.sieves[5].retained_g"),
    (lambda t: t.update(sieves=t["sieves"][:1]), "too_few_points", "test.sieves"),
    (lambda t: t.update(sieves="abc"), "not_a_list", "test.sieves"),
    (lambda t: t["sieves"].__setitem__(4, 7), "not_an_object", "test.sieves[4]"),
    (lambda t: t.update(entry="sum"), "unknown_choice", "test.entry"),
    (lambda t: t.update(frame_diameter_mm=200), "unknown_choice", "test.frame_diameter_mm"),
    (lambda t: t.update(passing=[]), "conflicting_fields", "test.passing"),
])
def test_malformed_mass_tests_raise_with_the_field(mutate, code, field):
    import copy
    t = copy.deepcopy(EXAMPLE_29)
    mutate(t)
    with pytest.raises(InputError) as e:
        reduce_test(t, "test")
    assert (e.value.code, e.value.field) == (code, field)
    assert e.value.message


@pytest.mark.parametrize("points, code, field", [
    ([(4.75, 100.0), (0.075, 101.0)], "passing_out_of_range", "test.passing[1].passing_pct"),
    ([(4.75, 90.0), (0.075, 95.0)], "passing_rises", "test.passing[1].passing_pct"),
    ([(0.075, 95.0), (4.75, 90.0)], "passing_rises", "test.passing[0].passing_pct"),
    ([(4.75, 90.0), (4.75, 80.0)], "duplicate_opening", "test.passing[1].opening_mm"),
    ([(4.75, 90.0)], "too_few_points", "test.passing"),
])
def test_malformed_passing_tests_raise_with_the_field(points, code, field):
    t = {"passing": [{"opening_mm": d, "passing_pct": p} for d, p in points]}
    with pytest.raises(InputError) as e:
        reduce_test(t, "test")
    assert (e.value.code, e.value.field) == (code, field)


def test_no_percentage_is_ever_negative_or_nan():
    t = mass_test({4.75: 0.0, 0.425: 300.0, 0.075: 700.0}, 1000.0)
    red = reduce_test(t, "test")
    assert red.table[-1]["passing_pct"] == 0.0
    assert all(math.isfinite(r["passing_pct"]) and r["passing_pct"] >= 0 for r in red.table)


def test_percentages_are_the_exact_decimal_ratios_rounded_once():
    # 55.8 g of 1500.0 g is exactly 3.72 %; 150.0 g of 1000.0 g leaves exactly 10 % passing, so the
    # finest sieve is D10 (no binary-rounding drift pushes 10 % outside the measured range).
    red = reduce_test(EXAMPLE_29, "test")
    assert red.table[-1]["retained_pct"] == 3.72 and red.table[-1]["passing_pct"] == 4.44
    assert red.mass["sieving_loss_g"] == 1.5 and red.mass["sieving_loss_pct"] == 0.1
    t = mass_test({4.75: 0.0, 0.6: 350.1, 0.3: 399.9, 0.075: 150.0}, 1000.0, pan_g=100.0)
    red = reduce_test(t, "test")
    assert red.table[-1]["passing_pct"] == 10.0
    assert red.gradation["d_mm"]["D10"] == 0.075
