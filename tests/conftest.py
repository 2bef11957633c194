"""Shared helpers for the core tests: call the JSON boundary strictly."""

from __future__ import annotations

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


def mass_test(retained: dict, dry_mass_g: float, pan_g: float = 0.0, washed_dry_mass_g=None, **more) -> dict:
    """A masses-form test from ``{opening_mm: retained_g}``."""
    t = {"sieves": [{"opening_mm": d, "retained_g": r} for d, r in retained.items()],
         "pan_g": pan_g, "dry_mass_g": dry_mass_g}
    if washed_dry_mass_g is not None:
        t["washed_dry_mass_g"] = washed_dry_mass_g
    t.update(more)
    return t


#: Constructed example of lab-methods.md §2.9 (constructed data, not from a
#: published source): ASTM sieves 3/4 in .. No. 200, washed.
EXAMPLE_29 = mass_test({19.0: 0.0, 12.5: 45.2, 9.5: 60.1, 4.75: 180.3, 2.36: 210.4, 1.18: 230.6, 0.6: 250.2,
                        0.3: 240.5, 0.15: 160.3, 0.075: 55.8}, 1500.0, pan_g=5.1, washed_dry_mass_g=1440.0)


@pytest.fixture
def call():
    return call_api
