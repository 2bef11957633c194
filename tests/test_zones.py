"""Zone sequences: each adjacent pair checked with the finer zone as base.

Scenario: INVENTED (a four-zone section core -> filter sand -> drain gravel ->
rockfill shell of an invented dam, "Larchfield"); the drain gravel is too
coarse for the filter sand, so the middle interface fails retention.

Rules: NRCS NEH 633-26 (October 1994) categories, D15F max (cat 2: 0.7 mm;
cat 4: 4 x d85B) and D15F min (4 x d15B, 0.1 mm), FROM MEMORY. The
intermediate-zone window is DERIVED from the same rules (see
``tamis.project.zones.intermediate_window``). Expected numbers below are computed
independently with numpy (log-linear interpolation), not by the code under test.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from tamis import SCREENING_NOTICE, api

CORE = {"passing": [{"opening_mm": 4.75, "passing_pct": 100}, {"opening_mm": 2.0, "passing_pct": 98},
                    {"opening_mm": 0.425, "passing_pct": 90}, {"opening_mm": 0.075, "passing_pct": 62},
                    {"opening_mm": 0.005, "passing_pct": 25}, {"opening_mm": 0.001, "passing_pct": 12}],
        "plasticity": {"liquid_limit": 32, "plasticity_index": 14}}
FILTER_SAND = {"passing": [{"opening_mm": 4.75, "passing_pct": 100}, {"opening_mm": 2.36, "passing_pct": 96},
                           {"opening_mm": 1.18, "passing_pct": 80}, {"opening_mm": 0.6, "passing_pct": 50},
                           {"opening_mm": 0.3, "passing_pct": 20}, {"opening_mm": 0.15, "passing_pct": 6},
                           {"opening_mm": 0.075, "passing_pct": 2}], "plasticity": {"nonplastic": True}}
DRAIN = {"passing": [{"opening_mm": 37.5, "passing_pct": 100}, {"opening_mm": 25.0, "passing_pct": 90},
                     {"opening_mm": 19.0, "passing_pct": 70}, {"opening_mm": 12.5, "passing_pct": 40},
                     {"opening_mm": 9.5, "passing_pct": 22}, {"opening_mm": 4.75, "passing_pct": 5},
                     {"opening_mm": 2.36, "passing_pct": 2}, {"opening_mm": 0.075, "passing_pct": 0.5}],
         "plasticity": {"nonplastic": True}}
SHELL = {"passing": [{"opening_mm": 300, "passing_pct": 100}, {"opening_mm": 200, "passing_pct": 80},
                     {"opening_mm": 100, "passing_pct": 45}, {"opening_mm": 50, "passing_pct": 20},
                     {"opening_mm": 25, "passing_pct": 8}, {"opening_mm": 4.75, "passing_pct": 2}]}

REQUEST = {"_source": "invented scenario (Larchfield dam section), not measured data",
           "zones": [{"name": "core", "test": CORE}, {"name": "filter sand", "test": FILTER_SAND},
                     {"name": "drain gravel", "test": DRAIN}, {"name": "shell", "role": "shell", "test": SHELL}],
           "rules": {"criteria": "nrcs-1994"}}


def _size(test, pct):
    pts = sorted((p["opening_mm"], p["passing_pct"]) for p in test["passing"])
    return float(np.exp(np.interp(pct, [p for _, p in pts], np.log([d for d, _ in pts]))))


def _call(req):
    return json.loads(api.handle(json.dumps({"schema": 1, "op": "zones", "id": 1, **req})))


def test_middle_interface_fails_and_names_it():
    r = _call(REQUEST)
    assert r["ok"], r
    res = r["result"]
    assert [(i["base"], i["filter"]) for i in res["interfaces"]] == [
        ("core", "filter sand"), ("filter sand", "drain gravel"), ("drain gravel", "shell")]
    assert [i["verdict"] for i in res["interfaces"]] == ["accept", "reject", "accept"]
    assert res["failing_interfaces"] == ["filter sand -> drain gravel"]
    assert res["verdict"] == "reject" and res["notice"] == SCREENING_NOTICE


def test_interface_limits_agree_with_independent_computation():
    res = _call(REQUEST)["result"]
    core_if, mid, outer = res["interfaces"]
    assert core_if["base_category"] == 2 and core_if["limits"]["d15_max_mm"] == 0.7
    assert core_if["limits"]["d15_min_mm"] == 0.1                      # 4 x d15B < 0.1 mm: the floor
    d85_fs = _size(FILTER_SAND, 85)
    assert mid["base_category"] == 4
    assert mid["limits"]["d15_max_mm"] == pytest.approx(4 * d85_fs, rel=1e-6)
    assert mid["limits"]["d15_min_mm"] == pytest.approx(4 * _size(FILTER_SAND, 15), rel=1e-6)
    ret = next(c for c in mid["checks"] if c["id"] == "filter.retention")
    assert ret["status"] == "fail" and ret["value"] == pytest.approx(_size(DRAIN, 15), rel=1e-6)
    # the drain gravel, a filter zone, is the shell's base: not regraded, category 4 on its own curve
    assert outer["base_category"] == 4 and outer["base_regraded"] is None
    assert outer["limits"]["d15_max_mm"] == pytest.approx(4 * _size(DRAIN, 85), rel=1e-6)
    # the core is the first zone: it has no gravel, so nothing to regrade either
    assert core_if["a_pct"] == pytest.approx(62.0)


def test_intermediate_zone_window_derived():
    res = _call(REQUEST)["result"]
    mid = res["interfaces"][1]
    win = mid["intermediate"]
    d15_drain = _size(DRAIN, 15)
    assert win["needed"] is True and win["feasible"] is True
    assert win["d15_min_mm"] == pytest.approx(4 * _size(FILTER_SAND, 15), rel=1e-6)
    assert win["d15_max_mm"] == pytest.approx(min(4 * _size(FILTER_SAND, 85), d15_drain / 4), rel=1e-6)
    assert win["d85_min_mm"] == pytest.approx(d15_drain / 4, rel=1e-6)
    assert res["interfaces"][0]["intermediate"] is None


def test_three_zone_sequence_second_interface_fails():
    req = {"zones": REQUEST["zones"][:3], "rules": {"criteria": "usbr-2011"}}
    res = _call(req)["result"]
    assert [i["verdict"] for i in res["interfaces"]][1] == "reject"
    assert res["interfaces"][0]["limits"]["d15_min_mm"] == 0.1


def test_zone_roles_decide_own_checks():
    res = _call(REQUEST)["result"]
    by = {z["name"]: z for z in res["zones"]}
    assert not any(c["id"].startswith("filter.") for c in by["core"]["checks"])
    assert not any(c["id"].startswith("filter.") for c in by["shell"]["checks"])
    assert any(c["id"] == "filter.fines" for c in by["filter sand"]["checks"])
    assert any(c["id"] == "stability.kezdi" for c in by["drain gravel"]["checks"])


@pytest.mark.parametrize("req,field", [
    ({"zones": [{"name": "a", "test": CORE}]}, "zones"),
    ({"zones": [{"name": "a", "test": CORE}, {"test": FILTER_SAND}]}, "zones[1].name"),
    ({"zones": [{"name": "a", "test": CORE}, {"name": "b"}]}, "zones[1].test"),
    ({"zones": [{"name": "a", "test": CORE}, {"name": "b", "role": "drain", "test": FILTER_SAND}]},
     "zones[1].role"),
    ({"zones": [{"name": "a", "test": CORE}, {"name": "b", "test": {"passing": [{"opening_mm": 1,
                                                                                 "passing_pct": 120}]}}]},
     "zones[1].test.passing"),
    ({"zones": REQUEST["zones"], "rules": {"criteria": "nrcs-2099"}}, "rules.criteria"),
])
def test_bad_input_names_the_field(req, field):
    r = _call(req)
    assert r["ok"] is False and r["error"]["field"].startswith(field), r["error"]


def test_cli_gives_the_same_answer(tmp_path):
    f = tmp_path / "zones.json"
    f.write_text(json.dumps(REQUEST), encoding="utf-8")
    out = subprocess.run([sys.executable, "-m", "tamis", "zones", str(f), "--compact"], capture_output=True,
                         text=True, check=False)
    assert out.returncode == 0, out.stderr
    assert json.loads(out.stdout) == json.loads(api.handle(json.dumps({"schema": 1, "op": "zones", "id": None,
                                                                       **REQUEST})))


def test_findings_name_their_zone_and_are_not_repeated():
    r = _call(REQUEST)
    fs = r["findings"]
    keys = [(f["code"], f["message"], f["field"]) for f in fs]
    assert len(keys) == len(set(keys))
    crit = [f for f in fs if f["code"] in ("wan_fell_range", "hazen_range")]
    assert crit and all(f["field"].startswith("zones[") for f in crit)


def test_gravelly_filter_zone_base_is_not_regraded_but_the_regraded_limit_is_reported():
    r = _call(REQUEST)
    notes = [f for f in r["findings"] if f["code"] == "zone_base_not_regraded"]
    assert len(notes) == 1 and notes[0]["field"] == "zones[2].test"     # the drain gravel under the shell
    forced = _call({**REQUEST, "rules": {"criteria": "nrcs-1994", "regrade": True}})["result"]
    outer = forced["interfaces"][2]
    assert outer["base_regraded"] is not None
    assert f"{outer['limits']['d15_max_mm']:.4g} mm" in notes[0]["message"]
