"""Shared helpers for the core tests: call the JSON boundary strictly."""

from __future__ import annotations

import copy
import json

import pytest

from tamis import api


def _refuse_constant(name):
    raise AssertionError(f"non-standard JSON constant {name} in output")


def call_api(op: str, **fields) -> dict:
    """Send ``{"schema": 1, "op": op, ...fields}`` through ``tamis.api.handle`` and
    parse the answer strictly (no NaN/Infinity allowed in the output)."""
    out = api.handle(json.dumps({"schema": 1, "op": op, "id": 1, **fields}))
    assert isinstance(out, str)
    return json.loads(out, parse_constant=_refuse_constant)


def dicts_with(obj, keys: set):
    """Every dict inside a JSON value (depth first) that holds all of ``keys``."""
    if isinstance(obj, dict):
        if keys <= obj.keys():
            yield obj
        for v in obj.values():
            yield from dicts_with(v, keys)
    elif isinstance(obj, list):
        for v in obj:
            yield from dicts_with(v, keys)


def mass_test(retained: dict, dry_mass_g: float, pan_g: float = 0.0, washed_dry_mass_g=None, **more) -> dict:
    """A masses-form test from ``{opening_mm: retained_g}``."""
    t = {"sieves": [{"opening_mm": d, "retained_g": r} for d, r in retained.items()],
         "pan_g": pan_g, "dry_mass_g": dry_mass_g}
    if washed_dry_mass_g is not None:
        t["washed_dry_mass_g"] = washed_dry_mass_g
    t.update(more)
    return t


#: A constructed example (not from a published source, worked by hand): ASTM sieves 3/4 in .. No. 200, washed.
EXAMPLE_29 = mass_test({19.0: 0.0, 12.5: 45.2, 9.5: 60.1, 4.75: 180.3, 2.36: 210.4, 1.18: 230.6, 0.6: 250.2,
                        0.3: 240.5, 0.15: 160.3, 0.075: 55.8}, 1500.0, pan_g=5.1, washed_dry_mass_g=1440.0)


@pytest.fixture
def call():
    return call_api


# Malformed inputs shared by test_api.py and test_cli.py: (name, request text, code, field).
def _grad(mutate) -> str:
    t = copy.deepcopy(EXAMPLE_29)
    mutate(t)
    return json.dumps({"schema": 1, "op": "gradation", "id": 3, "test": t})


def _passing(points) -> str:
    return json.dumps({"schema": 1, "op": "gradation", "test": {
        "passing": [{"opening_mm": d, "passing_pct": p} for d, p in points]}})


CASES = [
    ("not json", '{"schema": 1, "op": "gradation", "test": {', "bad_json", ""),
    ("not an object", '[{"op": "gradation"}]', "not_an_object", ""),
    ("unknown op", '{"schema": 1, "op": "sieve_everything", "test": {}}', "unknown_op", "op"),
    ("test not an object", '{"schema": 1, "op": "gradation", "test": [1, 2]}', "not_an_object", "test"),
    ("missing test", '{"schema": 1, "op": "gradation"}', "missing_field", "test"),
    ("missing sieves", '{"schema": 1, "op": "gradation", "test": {"dry_mass_g": 5}}', "missing_field",
     "test.sieves"),
    ("missing retained", _grad(lambda t: t["sieves"][1].pop("retained_g")), "missing_field",
     "test.sieves[1].retained_g"),
    ("text mass", _grad(lambda t: t["sieves"][1].update(retained_g="45.2")), "not_a_number",
     "test.sieves[1].retained_g"),
    ("bool mass", _grad(lambda t: t.update(dry_mass_g=True)), "not_a_number", "test.dry_mass_g"),
    ("NaN mass", _grad(lambda t: None).replace('"pan_g": 5.1', '"pan_g": NaN'), "not_finite", ""),
    ("negative mass", _grad(lambda t: t["sieves"][4].update(retained_g=-3.0)), "negative_mass",
     "test.sieves[4].retained_g"),
    ("zero dry mass", _grad(lambda t: t.update(dry_mass_g=0.0)), "zero_dry_mass", "test.dry_mass_g"),
    ("duplicate opening", _grad(lambda t: t["sieves"][2].update(opening_mm=12.5)), "duplicate_opening",
     "test.sieves[2].opening_mm"),
    ("washed > dry", _grad(lambda t: t.update(washed_dry_mass_g=1500.5)), "washed_exceeds_dry",
     "test.washed_dry_mass_g"),
    ("retained > mass", _grad(lambda t: t["sieves"][9].update(retained_g=500.0)), "retained_exceeds_mass",
     "test.sieves[9].retained_g"),
    ("one sieve", _grad(lambda t: t.update(sieves=t["sieves"][:1])), "too_few_points", "test.sieves"),
    ("unknown sieve", _grad(lambda t: t["sieves"][0].update(opening_mm=None, sieve="No. 999")),
     "unknown_sieve", "test.sieves[0].sieve"),
    ("passing over 100", _passing([(4.75, 100.5), (0.075, 3.0)]), "passing_out_of_range",
     "test.passing[0].passing_pct"),
    ("passing rises", _passing([(4.75, 90.0), (0.425, 40.0), (0.075, 41.0)]), "passing_rises",
     "test.passing[2].passing_pct"),
    ("cumulative decreases", json.dumps({"schema": 1, "op": "gradation", "test": {
        "entry": "cumulative", "dry_mass_g": 100.0, "pan_g": 1.0, "sieves": [
            {"opening_mm": 4.75, "cumulative_retained_g": 10.0},
            {"opening_mm": 0.425, "cumulative_retained_g": 9.0}]}}), "cumulative_decreases",
     "test.sieves[1].cumulative_retained_g"),
    ("evaluate bad base", json.dumps({"schema": 1, "op": "evaluate", "sample": EXAMPLE_29,
                                      "base": {"passing": [{"opening_mm": 1, "passing_pct": -1},
                                                           {"opening_mm": 0.1, "passing_pct": 0}]}}),
     "passing_out_of_range", "base.passing[0].passing_pct"),
    ("evaluate bad band", json.dumps({"schema": 1, "op": "evaluate", "sample": EXAMPLE_29,
                                      "band": {"name": "x", "limits": [{"opening_mm": 4.75, "min_pct": 90,
                                                                        "max_pct": 80}]}}),
     "band_inverted", "band.limits[0].min_pct"),
    ("evaluate missing sample", '{"schema": 1, "op": "evaluate"}', "missing_field", "sample"),
    ("evaluate pi > ll", json.dumps({"schema": 1, "op": "evaluate", "sample": dict(
        EXAMPLE_29, plasticity={"liquid_limit": 20, "plasticity_index": 25})}), "pi_exceeds_ll",
     "sample.plasticity.plasticity_index"),
]
