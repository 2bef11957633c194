"""The gradation and evaluate ops through tamis.api.handle (docs/json-contract.md, schema 1)."""

import json

import pytest

from conftest import CASES, EXAMPLE_29, call_api
from tamis import SCREENING_NOTICE, api

GRADATION_KEYS = {"points", "d_mm", "cu", "cc", "gravel_pct", "sand_pct", "fines_pct", "uscs"}


def strict(text):
    def refuse(name):
        raise AssertionError(f"non-standard JSON constant {name}")
    return json.loads(text, parse_constant=refuse)


@pytest.mark.parametrize("name, text, code, field", CASES, ids=[c[0] for c in CASES])
def test_every_malformed_input_is_refused_cleanly(name, text, code, field):
    r = strict(api.handle(text))
    assert r["ok"] is False
    assert (r["error"]["code"], r["error"]["field"]) == (code, field)
    assert r["error"]["message"] and "Traceback" not in r["error"]["message"]


def test_gradation_result_has_the_contract_fields():
    r = call_api("gradation", test=EXAMPLE_29)
    assert r["ok"] is True and r["id"] == 1
    res = r["result"]
    assert GRADATION_KEYS <= set(res)
    assert set(res["d_mm"]) >= {"D5", "D10", "D15", "D30", "D50", "D60", "D85", "D90", "D95"}
    assert [c["id"] for c in res["checks"]] == ["qa.mass_balance", "qa.sieve_overload", "qa.specimen_mass"]
    for c in res["checks"]:
        assert set(c) >= {"id", "status", "value", "limit", "relation", "unit", "source", "message"}
    assert res["table"][3] == {"opening_mm": 4.75, "label": "No. 4", "retained_g": 180.3,
                               "retained_pct": pytest.approx(12.02), "cum_retained_pct": pytest.approx(19.04),
                               "passing_pct": pytest.approx(80.96)}
    assert res["mass"]["wash_loss_g"] == pytest.approx(60.0)
    assert res["uscs"]["symbol"] == "SP" and res["notice"] == SCREENING_NOTICE


def test_unrounded_values_cross_the_boundary():
    # Nothing is rounded in the core: 100 * (1 - 45.2/1500) keeps all its digits.
    r = call_api("gradation", test=EXAMPLE_29)
    assert r["result"]["points"][1]["passing_pct"] == 100.0 - 45.2 / 1500.0 * 100.0


def test_null_d_values_come_with_a_finding_and_no_nan():
    t = {"passing": [{"opening_mm": 4.75, "passing_pct": 100.0}, {"opening_mm": 0.075, "passing_pct": 30.0}]}
    r = call_api("gradation", test=t)
    assert r["result"]["d_mm"]["D10"] is None and r["result"]["cu"] is None
    assert any(f["code"] == "d_below_range" and f["field"] == "test.passing" for f in r["findings"])


def test_evaluate_merges_qa_band_and_criteria_checks():
    band = {"name": "F1", "limits": [{"opening_mm": 4.75, "min_pct": 75, "max_pct": 100},
                                     {"opening_mm": 0.075, "min_pct": 0, "max_pct": 5}]}
    base = {"passing": [{"opening_mm": 4.75, "passing_pct": 100.0}, {"opening_mm": 0.425, "passing_pct": 90.0},
                        {"opening_mm": 0.075, "passing_pct": 62.0}, {"opening_mm": 0.005, "passing_pct": 18.0}]}
    r = call_api("evaluate", sample=EXAMPLE_29, base=base, band=band)
    assert r["ok"] is True
    res = r["result"]
    assert set(res) >= {"sample", "base", "base_category", "base_regraded", "a_pct", "limits", "checks",
                        "verdict", "notice"}
    assert GRADATION_KEYS <= set(res["sample"]) and GRADATION_KEYS <= set(res["base"])
    ids = [(c["id"], c.get("subject")) for c in res["checks"]]
    assert ("qa.mass_balance", "sample") in ids and ("qa.mass_balance", "base") in ids
    assert ("band.compliance", "sample") in ids
    # The sample is overloaded on a 203 mm frame (qa.sieve_overload fails): reject.
    assert res["verdict"] == "reject"
    assert res["notice"] == SCREENING_NOTICE


def test_evaluate_verdict_follows_the_checks():
    # Sample only, a clean band pass, every QA check passing: the verdict comes from tamis.checks.verdict.
    t = {"sieves": [{"opening_mm": 4.75, "retained_g": 0.0}, {"opening_mm": 2.36, "retained_g": 100.0},
                    {"opening_mm": 0.6, "retained_g": 150.0}, {"opening_mm": 0.075, "retained_g": 150.0}],
         "pan_g": 9.0, "dry_mass_g": 420.0, "washed_dry_mass_g": 410.0}
    band = {"name": "B", "limits": [{"opening_mm": 4.75, "min_pct": 95, "max_pct": 100}]}
    r = call_api("evaluate", sample=t, band=band)["result"]
    statuses = [c["status"] for c in r["checks"]]
    from tamis.checks import ACCEPT, REJECT, REVIEW
    want = REJECT if "fail" in statuses else (REVIEW if ("warn" in statuses or "needs_data" in statuses)
                                              else ACCEPT)
    assert r["verdict"] == want
    band["limits"][0]["min_pct"] = 100.0
    t["sieves"][0]["retained_g"] = 5.0  # now 98.8 % passes 4.75 mm: the band fails
    t["pan_g"] = 4.0
    r = call_api("evaluate", sample=t, band=band)["result"]
    assert next(c for c in r["checks"] if c["id"] == "band.compliance")["status"] == "fail"
    assert r["verdict"] == "reject"
