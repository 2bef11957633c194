"""Sieve series and designations.

Source: ASTM E11 standard openings and alternative designations. The No. 4 =
4.75 mm, No. 10 = 2.00 mm, No. 40 = 425 um and No. 200 = 75 um pairs were read
in published tables; the other pairs are from memory (E11 table). Openings are printed to 3
significant figures, so they are compared exactly as the printed numbers.
"""

import pytest

from tamis.lab import sieves
from tamis.errors import InputError

# (designation, opening mm) as printed in the ASTM E11 table (from memory except
# the four pairs marked "read").
E11_PAIRS = [
    ("3 in", 75.0), ("2 1/2 in", 63.0), ("2 in", 50.0), ("1 1/2 in", 37.5), ("1 1/4 in", 31.5),
    ("1 in", 25.0), ("3/4 in", 19.0), ("5/8 in", 16.0), ("1/2 in", 12.5), ("3/8 in", 9.5),
    ("5/16 in", 8.0), ("1/4 in", 6.3), ("No. 4", 4.75),  # read
    ("No. 5", 4.0), ("No. 8", 2.36), ("No. 10", 2.0),  # No. 10 read
    ("No. 16", 1.18), ("No. 18", 1.0), ("No. 20", 0.85), ("No. 30", 0.6), ("No. 35", 0.5),
    ("No. 40", 0.425),  # read
    ("No. 50", 0.3), ("No. 60", 0.25), ("No. 70", 0.212), ("No. 80", 0.18), ("No. 100", 0.15),
    ("No. 120", 0.125), ("No. 140", 0.106), ("No. 170", 0.09), ("No. 200", 0.075),  # No. 200 read
    ("No. 230", 0.063),
]


@pytest.mark.parametrize("label, mm", E11_PAIRS)
def test_e11_designation_to_opening_and_back(label, mm):
    # ASTM E11 standard opening <-> alternative designation.
    assert sieves.opening_from_label(label) == mm
    assert sieves.label_for(mm) == label


@pytest.mark.parametrize("label, mm", [
    ("No. 40", 0.425), ("no.40", 0.425), ("NO 40", 0.425), ("#40", 0.425), ("# 200", 0.075),
    ("3/8 in", 9.5), ('3/8"', 9.5), ("3/8in", 9.5), ("3/8 IN", 9.5), ("1-1/2 in", 37.5), ("1 1/2in", 37.5),
    ("1\u00bd in", 37.5), ("0.375 in", 9.5), ("4.75 mm", 4.75), ("4.75mm", 4.75), ("425 um", 0.425),
    ("425 \u00b5m", 0.425), ("No. 3 1/2", 5.6),
])
def test_lookup_is_tolerant_of_spacing_case_and_marks(label, mm):
    assert sieves.opening_from_label(label) == mm


@pytest.mark.parametrize("label", ["40", "No. 41", "7/9 in", "", "mm", "No.", "-1 mm"])
def test_unknown_or_ambiguous_designations_are_not_guessed(label):
    # A bare number could be mm or a sieve number: refused rather than guessed.
    assert sieves.opening_from_label(label) is None


def test_en_and_iso_series_hold_the_metric_sizes():
    # EN 933-2 basic set and ISO 3310-1 R20/3 (both from memory).
    assert sieves.EN_BASIC_MM == (125.0, 63.0, 31.5, 16.0, 8.0, 4.0, 2.0, 1.0, 0.5, 0.25, 0.125, 0.063)
    assert sieves.series_of(4.0) == "ASTM E11 / ISO 3310-1 / EN 933-2"
    assert sieves.series_of(0.075) == "ASTM E11"
    assert sieves.series_of(3.0) == "other"
    assert sieves.label_for(3.0) == "3 mm" and sieves.label_for(0.04) == "40 um"


def test_e11_openings_step_by_about_the_fourth_root_of_two():
    # Successive E11 sizes follow the R40/3 ratio 2**(1/4) ~ 1.189 (vendor FAQ, read; from memory).
    fine = [d for d, _ in sieves.ASTM_E11 if d <= 4.75]
    ratios = [a / b for a, b in zip(fine, fine[1:])]
    assert all(1.15 < r < 1.23 for r in ratios), ratios


def test_resolve_opening_rejects_unknown_labels_and_mismatches():
    assert sieves.resolve_opening({"sieve": "No. 4"}, "t.sieves[0]") == 4.75
    assert sieves.resolve_opening({"sieve": "No. 4", "opening_mm": 4.75}, "t") == 4.75
    with pytest.raises(InputError) as e:
        sieves.resolve_opening({"sieve": "No. 4", "opening_mm": 4.0}, "t.sieves[0]")
    assert e.value.code == "sieve_mismatch" and e.value.field == "t.sieves[0].sieve"
    with pytest.raises(InputError) as e:
        sieves.resolve_opening({"sieve": "No. 999"}, "t.sieves[2]")
    assert e.value.code == "unknown_sieve" and e.value.field == "t.sieves[2].sieve"
    with pytest.raises(InputError) as e:
        sieves.resolve_opening({}, "t.sieves[1]")
    assert e.value.field == "t.sieves[1].opening_mm"


def test_presets_op_lists_stacks_with_labels(call):
    r = call("sieve_presets")
    assert r["ok"] is True
    ids = {p["id"] for p in r["result"]["presets"]}
    assert {"soil", "fine_aggregate", "coarse_aggregate", "filter_sand", "drain_gravel", "metric"} <= ids
    for p in r["result"]["presets"]:
        assert p["openings_mm"] == sorted(p["openings_mm"], reverse=True)
        assert len(p["labels"]) == len(p["openings_mm"])
    fa = next(p for p in r["result"]["presets"] if p["id"] == "fine_aggregate")
    assert fa["labels"] == ["3/8 in", "No. 4", "No. 8", "No. 16", "No. 30", "No. 50", "No. 100", "No. 200"]
    known = {s["opening_mm"]: s for s in r["result"]["sieves"]}
    assert known[0.425]["label"] == "No. 40" and known[4.0]["series"].startswith("ASTM E11")
