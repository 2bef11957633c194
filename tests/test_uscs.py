"""USCS symbols and names at every threshold of ASTM D2487.

Source: ASTM D2487 (Unified Soil Classification System). Read in published
reproductions of its criteria: GW Cu >= 4 and 1 <= Cc <= 3; SW Cu >= 6 and
1 <= Cc <= 3; fines < 5 % clean, 5-12 % dual symbols, > 12 % GM/GC/SM/SC;
A-line PI = 0.73 (LL - 20); LL 50 between L and H. From memory: ">=" at the Cu
limits, the CL-ML zone 4 <= PI <= 7, the second dual symbol for CL-ML fines,
the 15 % / 30 % naming rules, the U-line PI = 0.9 (LL - 8).
Each threshold is tested on its value and just beside it.
"""

import pytest

from tamis.lab.uscs import Plasticity, a_line_pi, above_u_line, classify, classify_coarse, classify_fine, \
    fines_class
from tamis.lab.curve import make_curve

NP = Plasticity(nonplastic=True)
CLAY = Plasticity(liquid_limit=40.0, plasticity_index=20.0)  # CL: above the A-line (14.6)


@pytest.mark.parametrize("cu, cc, symbol", [
    (4.0, 1.5, "GW"), (3.99, 1.5, "GP"),      # Cu 4 for gravels
    (6.0, 1.0, "GW"), (6.0, 0.99, "GP"),      # Cc 1
    (6.0, 3.0, "GW"), (6.0, 3.01, "GP"),      # Cc 3
])
def test_gravel_cu_and_cc_thresholds(cu, cc, symbol):
    u = classify_coarse(gravel=60.0, sand=38.0, fines=2.0, cu=cu, cc=cc, p=Plasticity())
    assert u.symbol == symbol


@pytest.mark.parametrize("cu, cc, symbol", [
    (6.0, 1.5, "SW"), (5.99, 1.5, "SP"), (10.0, 1.0, "SW"), (10.0, 0.99, "SP"), (10.0, 3.0, "SW"),
    (10.0, 3.01, "SP"), (4.5, 1.5, "SP"),     # Cu 4.5 makes a GW gravel but not an SW sand
])
def test_sand_cu_and_cc_thresholds(cu, cc, symbol):
    u = classify_coarse(gravel=20.0, sand=78.0, fines=2.0, cu=cu, cc=cc, p=Plasticity())
    assert u.symbol == symbol


def test_gravel_versus_sand_split_at_half_the_coarse_fraction():
    # D2487: gravel when more than 50 % of the coarse fraction is retained on No. 4.
    assert classify_coarse(49.0, 49.0, 2.0, 7.0, 1.5, Plasticity()).symbol == "SW"
    assert classify_coarse(49.1, 48.9, 2.0, 7.0, 1.5, Plasticity()).symbol == "GW"


@pytest.mark.parametrize("fines, p, symbol", [
    (4.99, NP, "SW"), (5.0, NP, "SW-SM"), (12.0, NP, "SW-SM"), (12.01, NP, "SM"),
    (5.0, CLAY, "SW-SC"), (12.0, CLAY, "SW-SC"), (12.01, CLAY, "SC"),
    (8.0, Plasticity(liquid_limit=20.0, plasticity_index=5.0), "SW-SC"),   # CL-ML fines -> -SC (from memory)
    (20.0, Plasticity(liquid_limit=20.0, plasticity_index=5.0), "SC-SM"),  # CL-ML fines, > 12 %
    (20.0, Plasticity(liquid_limit=60.0, plasticity_index=20.0), "SM"),    # MH fines (below A-line 29.2)
    (20.0, Plasticity(liquid_limit=60.0, plasticity_index=30.0), "SC"),    # CH fines
])
def test_fines_5_and_12_percent_thresholds_and_dual_symbols(fines, p, symbol):
    u = classify_coarse(gravel=20.0, sand=80.0 - fines, fines=fines, cu=8.0, cc=1.5, p=p)
    assert u.symbol == symbol


@pytest.mark.parametrize("gravel, name", [(15.0, "well-graded sand with gravel"), (14.99, "well-graded sand")])
def test_15_percent_naming_rule_for_sands(gravel, name):
    u = classify_coarse(gravel=gravel, sand=97.0 - gravel, fines=3.0, cu=8.0, cc=1.5, p=Plasticity())
    assert u.name == name


@pytest.mark.parametrize("sand, name", [(15.0, "poorly graded gravel with sand"), (14.99, "poorly graded gravel")])
def test_15_percent_naming_rule_for_gravels(sand, name):
    u = classify_coarse(gravel=97.0 - sand, sand=sand, fines=3.0, cu=2.0, cc=1.5, p=Plasticity())
    assert u.name == name


def test_dual_and_silty_names():
    assert classify_coarse(20.0, 72.0, 8.0, 8.0, 1.5, NP).name == "well-graded sand with silt and gravel"
    assert classify_coarse(10.0, 82.0, 8.0, 3.0, 1.5, CLAY).name == "poorly graded sand with clay"
    assert classify_coarse(60.0, 10.0, 30.0, None, None, NP).name == "silty gravel"
    u = classify_coarse(20.0, 60.0, 20.0, None, None, Plasticity(liquid_limit=20.0, plasticity_index=5.0))
    assert u.name == "silty, clayey sand with gravel"


@pytest.mark.parametrize("ll, pi, cls", [
    (40.0, 0.73 * 20.0, "CL"), (40.0, 14.59, "ML"),   # on the A-line is CL; just below it ML
    (60.0, 29.2, "CH"), (60.0, 29.19, "MH"),          # LL >= 50
    (50.0, 21.9, "CH"), (49.99, 21.9, "CL"),          # LL 50 divides L from H
    (20.0, 4.0, "CL-ML"), (20.0, 7.0, "CL-ML"), (20.0, 7.01, "CL"), (20.0, 3.99, "ML"),  # hatched zone
    (30.0, 6.0, "ML"),                                # PI in 4..7 but below the A-line (7.3)
])
def test_plasticity_chart_a_line_and_cl_ml_zone(ll, pi, cls):
    assert fines_class(Plasticity(liquid_limit=ll, plasticity_index=pi))[0] == cls


def test_a_line_equation():
    # D2487 / UBC Table 18-1-A: PI = 0.73 (LL - 20).
    assert a_line_pi(50.0) == pytest.approx(21.9)
    assert a_line_pi(20.0) == 0.0


def test_u_line_upper_limit():
    # U-line PI = 0.9 (LL - 8), vertical at LL = 16 (from memory).
    assert above_u_line(50.0, 37.9) is True and above_u_line(50.0, 37.8) is False
    assert above_u_line(15.0, 1.0) is True


@pytest.mark.parametrize("plus200, gravel_share, name", [
    (14.99, 0.0, "lean clay"), (15.0, 0.0, "lean clay with sand"), (29.99, 1.0, "lean clay with gravel"),
    (30.0, 0.0, "sandy lean clay"), (40.0, 0.375, "sandy lean clay with gravel"),
    (40.0, 0.6, "gravelly lean clay with sand"),
])
def test_fine_grained_names_at_15_and_30_percent_coarse(plus200, gravel_share, name):
    gravel = plus200 * gravel_share
    u = classify_fine(gravel=gravel, sand=plus200 - gravel, fines=100.0 - plus200, p=CLAY)
    assert u.symbol == "CL" and u.name == name


def test_missing_data_gives_needs_not_a_guess():
    u = classify_coarse(20.0, 72.0, 8.0, 8.0, 1.5, Plasticity())
    assert u.symbol is None and "Atterberg" in u.needs[0] and set(u.candidates) == {"SW-SM", "SW-SC"}
    u = classify_fine(0.0, 30.0, 70.0, Plasticity())
    assert u.symbol is None and u.needs
    c = make_curve([(4.75, 100.0), (0.425, 40.0), (0.075, 11.0)])  # 11 % fines: no D10 without a hydrometer
    u = classify(c, NP)
    assert u.symbol is None and any("hydrometer" in n for n in u.needs)
    assert set(u.candidates) == {"SW-SM", "SP-SM"}
    u = classify(make_curve([(4.75, 100.0), (0.425, 40.0)]), NP)  # no No. 200 sieve
    assert u.symbol is None and any("0.075" in n for n in u.needs)


def test_cobbles_are_set_aside_and_named():
    # D2487 §1.2: classify the fraction finer than 75 mm; "with cobbles" added to the name.
    c = make_curve([(150.0, 100.0), (75.0, 80.0), (19.0, 60.0), (4.75, 40.0), (0.425, 8.0), (0.075, 0.8)])
    u = classify(c, NP)
    assert u.symbol in ("GW", "GP", "SW", "SP") and u.name.endswith("with cobbles")
    # Regraded on 75 mm: gravel (80-40)/80 = 50 %, sand (40-0.8)/80 = 49 %: gravel.
    assert u.symbol.startswith("G")


def test_u_line_warning_is_raised():
    c = make_curve([(0.425, 100.0), (0.075, 80.0), (0.002, 30.0)])
    u = classify(c, Plasticity(liquid_limit=30.0, plasticity_index=25.0))
    assert u.symbol == "CL" and u.warnings
