"""Lots: testing frequency, stage comparison (creep), drift, the ``lot_summary`` op, the lot record in CSV,
and ``python -m tamis lots``.

The testing rules, margins and k are the project's numbers; the values used here are the examples of
``tamis.project.lots`` (common practice, no source). Each rule is checked at, just inside and just outside
its threshold. The demo figures are invented (demo_data/make_demo.py).
"""

from __future__ import annotations

import copy
import json
import subprocess
import sys
from pathlib import Path

import pytest

from tamis import api, demo
from tamis.project import lots as L

ROOT = Path(__file__).resolve().parent.parent
DEMO_CSV = ROOT / "demo_data" / "demo_project.csv"
RULE = L.Rule(150.0, "m3", True, True)


def tp(rid, day, stage="delivery", source="Pit A", fines=3.0, d15=0.3, d85=2.0, counted=None, note=None, q=None,
       ticket=None):
    if counted is None:
        counted = stage in L.COUNTED_STAGES
    return L.TestPoint(rid, rid, f"{day}T10:00:00Z", day, stage, source, q, "m3" if q is not None else None, ticket,
                       fines, d15, d85, 5.0, {}, "accept", (), {}, counted, note)


def P(day, q, source=None):
    return L.Placement(day, q, source)


# ------------------------------------------------------------ frequency

@pytest.mark.parametrize("placed, n, want", [
    (0.0, 0, "ok"),          # nothing placed, nothing needed
    (150.0, 1, "ok"),        # exactly one increment, tested
    (150.5, 1, "due"),       # the second increment has started without its test
    (299.9, 1, "due"),
    (300.0, 1, "overdue"),   # the second increment is complete without a test
    (10.0, 0, "due"),        # the first load placed: a test is needed now
])
def test_quantity_rule(placed, n, want):
    rule = L.Rule(150.0, "m3", False, False)
    tests = [tp(f"t{i}", "2026-10-01") for i in range(n)]
    f = L.frequency_status(rule, "m3", [P("2026-10-01", placed)] if placed else [], tests, "2026-10-01", False)
    assert f.status == want


def test_closed_lot_short_of_tests_is_overdue():
    rule = L.Rule(150.0, "m3", False, False)
    f = L.frequency_status(rule, "m3", [P("2026-10-01", 160.0)], [tp("a", "2026-10-01")], None, True)
    assert f.status == "overdue" and f.tests_required == 2


def test_day_rule_today_due_earlier_overdue():
    rule = L.Rule(None, None, True, False)
    placed = [P("2026-10-01", 50.0), P("2026-10-02", 50.0)]
    tests = [tp("a", "2026-10-01")]
    assert L.frequency_status(rule, "m3", placed, tests, "2026-10-02", False).status == "due"
    later = L.frequency_status(rule, "m3", placed, tests, "2026-10-03", False)
    assert later.status == "overdue" and later.items[0]["day"] == "2026-10-02"
    both = L.frequency_status(rule, "m3", placed, tests + [tp("b", "2026-10-02")], "2026-10-09", False)
    assert both.status == "ok"


def test_source_rule_change_of_source():
    rule = L.Rule(None, None, False, True)
    tests = [tp("a", "2026-10-01", source="Pit A")]
    placed = [P("2026-10-01", 50.0, "Pit A"), P("2026-10-02", 50.0, "Pit B")]
    assert L.frequency_status(rule, "m3", placed, tests, None, False).status == "due"
    placed.append(P("2026-10-03", 50.0, "Pit A"))  # back to A: B was placed and never tested
    f = L.frequency_status(rule, "m3", placed, tests, None, False)
    assert f.status == "overdue" and f.items[0]["source"] == "Pit B"


def test_stockpile_and_superseded_tests_do_not_count():
    rule = L.Rule(150.0, "m3", False, False)
    tests = [tp("s", "2026-10-01", stage="stockpile"), tp("x", "2026-10-01", counted=False, note="superseded")]
    f = L.frequency_status(rule, "m3", [P("2026-10-01", 100.0)], tests, None, False)
    assert f.tests_counted == 0 and f.status == "due"


def test_quantity_from_tests_counts_a_ticket_once():
    rule = L.Rule(150.0, "m3", False, False)
    tests = [tp("d", "2026-10-01", q=140.0, ticket="T1"), tp("c", "2026-10-01", stage="compacted", q=140.0,
                                                               ticket="T1")]
    f = L.frequency_status(rule, "m3", [], tests, None, False)
    assert f.placed_quantity == 140.0 and f.quantity_from == "tests" and f.status == "ok"


def test_no_rule():
    assert L.frequency_status(None, "m3", [], [], None, False).status == "no_rule"


# ------------------------------------------------------------ creep and drift

def test_creep_margin_boundary_and_limit_crossing():
    def run(delivered, compacted, fmax=5.0):
        ts = [tp("d", "2026-10-01", fines=delivered), tp("c", "2026-10-02", stage="compacted", fines=compacted)]
        return [w["code"] for w in L.stage_comparison(ts, fmax, 1.0, 0.2)[1]]
    assert run(3.0, 4.0) == []              # a rise of exactly the margin: no warning
    assert run(3.0, 4.01) == ["creep"]      # just above it
    assert run(4.9, 5.05) == ["creep"]      # a small rise, but past the limit the delivered sand met
    assert run(5.2, 5.6) == []              # already past the limit on delivery: not creep (the test fails itself)


def test_coarse_loss():
    ts = [tp("d", "2026-10-01", d85=2.0), tp("c", "2026-10-02", stage="compacted", d85=1.61)]
    assert [w["code"] for w in L.stage_comparison(ts, 5.0, 1.0, 0.2)[1]] == []
    ts[1] = tp("c", "2026-10-02", stage="compacted", d85=1.59)
    assert [w["code"] for w in L.stage_comparison(ts, 5.0, 1.0, 0.2)[1]] == ["coarse_loss"]


def test_drift_last_k_toward_limit():
    limits = {"fines_max_pct": 5.0, "d15_max_mm": 0.7, "d15_min_mm": 0.1}
    rising = [tp(f"t{i}", f"2026-10-0{i + 1}", fines=f) for i, f in enumerate((2.0, 2.5, 3.1, 3.8))]
    assert [w["measure"] for w in L.drift_warnings(rising, limits, 3)] == ["fines_pct"]
    wobble = [tp(f"t{i}", f"2026-10-0{i + 1}", fines=f) for i, f in enumerate((2.0, 3.1, 2.9, 3.8))]
    assert L.drift_warnings(wobble, limits, 3) == []
    assert L.drift_warnings(rising[:2], limits, 3) == []
    d15 = [tp(f"t{i}", f"2026-10-0{i + 1}", fines=3.0, d15=d) for i, d in enumerate((0.40, 0.52, 0.61))]
    w = L.drift_warnings(d15, limits, 3)
    assert [x["measure"] for x in w] == ["d15_mm"] and w[0]["limit"] == 0.7


# ------------------------------------------------------------ the op on the demo

def summary(records, **kw):
    resp = json.loads(api.handle(json.dumps({"op": "lot_summary", "records": records, **kw})))
    assert resp["ok"], resp
    return resp["result"]


def test_demo_lots():
    res = summary(demo.load_records(), as_of="2026-12-02")
    by = {x["lot"]: x for x in res["lots"]}
    assert sorted(by) == ["G1", "L10", "L11", "L12"]
    l11 = by["L11"]
    creep = [w for w in l11["warnings"] if w["code"] == "creep"]
    assert creep and creep[0]["crossed_limit"] and creep[0]["after"] == "compacted"
    assert [t["sample_id"] for t in l11["tests"]] == ["Q-L11-SP", "Q-L11-DL", "Q-L11-CP"]
    assert [t["failed"] for t in l11["tests"]] == [False, False, True]
    assert l11["frequency"]["status"] == "ok"
    l12 = by["L12"]
    assert l12["frequency"]["status"] == "overdue" and l12["frequency"]["tests_required"] == 6
    assert [d["lot"] for d in res["due"]] == ["L12"]
    l10 = by["L10"]
    assert l10["n_tests"] == 7 and l10["n_counted"] == 6  # the failed mass balance is replaced by its retest
    fines = next(p for p in l10["pwl"] if p["measure"] == "fines_pct")
    assert fines["n"] == 6 and 0 < fines["pwl_pct"] < 100
    assert res["unassigned_tests"] == 2


def test_lazy_migration_by_lot_code():
    recs = [r for r in demo.load_records() if r["kind"] != "lot"]
    for r in recs:
        r["meta"].pop("lot_id", None)
    res = summary(recs)
    by = {x["lot"]: x for x in res["lots"]}
    assert by["L11"]["has_record"] is False and by["L11"]["frequency"]["status"] == "no_rule"
    assert any(w["code"] == "creep" for w in by["L11"]["warnings"])


def test_a_lot_without_a_rule_takes_its_materials_rule():
    recs = copy.deepcopy(demo.load_records())
    l12 = next(r for r in recs if r["kind"] == "lot" and r["meta"]["lot"] == "L12")
    del l12["meta"]["test_frequency"]
    by = {x["lot"]: x for x in summary(recs, as_of="2026-12-02")["lots"]}
    assert by["L12"]["rule"]["from"] == "material (lot L10)" and by["L12"]["frequency"]["status"] == "overdue"
    assert by["L11"]["rule"]["from"] == "lot"
    l12["meta"]["material"] = "another sand"
    by = {x["lot"]: x for x in summary(recs, as_of="2026-12-02")["lots"]}
    assert by["L12"]["rule"] is None and by["L12"]["frequency"]["status"] == "no_rule"


def test_light_summary_same_frequency():
    recs = demo.load_records()
    full, light = summary(recs, as_of="2026-12-02"), summary(recs, as_of="2026-12-02", trends=False)
    assert [x["frequency"] for x in full["lots"]] == [x["frequency"] for x in light["lots"]]


@pytest.mark.parametrize("key, value, field, code", [
    ("quantity_unit", "yd3", "meta.quantity_unit", "unknown_choice"),
    ("status", "done", "meta.status", "unknown_choice"),
    ("planned_quantity", "600", "meta.planned_quantity", "not_a_number"),
    ("placements", [{"date": "29/09/2026", "quantity": 1}], "meta.placements[0].date", "bad_date"),
    ("test_frequency", {"per_quantity": 150}, "meta.test_frequency.quantity_unit", "missing_field"),
    ("test_frequency", {"per_qty": 150}, "meta.test_frequency.per_qty", "unknown_field"),
])
def test_bad_lot_fields_name_their_path(key, value, field, code):
    recs = copy.deepcopy(demo.load_records())
    i = next(i for i, r in enumerate(recs) if r["kind"] == "lot")
    recs[i]["meta"][key] = value
    resp = json.loads(api.handle(json.dumps({"op": "lot_summary", "records": recs})))
    assert not resp["ok"]
    assert resp["error"]["field"] == f"records[{i}].{field}" and resp["error"]["code"] == code


def test_bad_test_quantity_names_its_path():
    recs = copy.deepcopy(demo.load_records())
    i = next(i for i, r in enumerate(recs) if r["meta"].get("sample_id") == "Q-L11-DL")
    recs[i]["meta"]["quantity"] = -3
    resp = json.loads(api.handle(json.dumps({"op": "lot_summary", "records": recs})))
    assert resp["error"]["field"] == f"records[{i}].meta.quantity"


# ------------------------------------------------------------ the lot record travels in CSV

def test_lot_records_round_trip_and_merge_through_csv():
    recs = demo.load_records()
    out = json.loads(api.handle(json.dumps({"op": "records_export_csv", "records": recs})))["result"]["csv"]
    back = json.loads(api.handle(json.dumps({"op": "records_import_csv", "csv": out, "existing": []})))["result"]
    lots_in = {r["record_id"]: r for r in recs if r["kind"] == "lot"}
    lots_back = {r["record_id"]: r for r in back["records"] if r["kind"] == "lot"}
    assert len(lots_in) == 4 and lots_back.keys() == lots_in.keys()
    for rid, r in lots_in.items():
        assert lots_back[rid]["meta"] == r["meta"]
    # an edited lot on one device merges over the original
    edited = copy.deepcopy(next(iter(lots_in.values())))
    edited.update(rev=2, updated_at="2026-10-20T08:00:00Z", updated_by="TV")
    edited["meta"]["status"] = "closed"
    edited["history"] = edited["history"] + [{"rev": 2, "at": "2026-10-20T08:00:00Z", "by": "TV",
                                              "summary": "closed", "changes": []}]
    two = json.loads(api.handle(json.dumps({"op": "records_export_csv", "records": [edited]})))["result"]["csv"]
    merged = json.loads(api.handle(json.dumps({"op": "records_merge", "files": [out, two]})))["result"]
    assert merged["conflicts"] == []
    again = json.loads(api.handle(json.dumps({"op": "records_import_csv", "csv": merged["csv"],
                                              "existing": []})))["result"]["records"]
    assert next(r for r in again if r["record_id"] == edited["record_id"])["meta"]["status"] == "closed"


# ------------------------------------------------------------ the command line

def _cli(*args):
    return subprocess.run([sys.executable, "-m", "tamis", "lots", *args], capture_output=True, text=True,
                          cwd=ROOT)


def test_cli_text_and_json_agree_with_the_api():
    js = _cli(str(DEMO_CSV), "--json", "--as-of", "2026-12-02")
    assert js.returncode == 0, js.stderr
    res = json.loads(js.stdout)["result"]
    assert res == summary(demo.load_records(), as_of="2026-12-02") | {"as_of": "2026-12-02"}
    txt = _cli(str(DEMO_CSV), "--lot", "L11", "--as-of", "2026-12-02")
    assert txt.returncode == 0
    assert "WARNING: Fines creep" in txt.stdout and "Q-L11-CP" in txt.stdout
    assert "5.7   0.186" in txt.stdout  # fines % and D15 of the compacted test, as the app shows them
    due = _cli(str(DEMO_CSV), "--fail-on-due", "--as-of", "2026-12-02")
    assert due.returncode == 1 and "Lot L12" in due.stdout and "TESTING OVERDUE" in due.stdout


def test_cli_bad_lot_field_names_the_row(tmp_path):
    recs = copy.deepcopy(demo.load_records())
    lot = next(r for r in recs if r["kind"] == "lot")
    lot["meta"]["status"] = "finished"
    out = json.loads(api.handle(json.dumps({"op": "records_export_csv", "records": recs})))["result"]["csv"]
    f = tmp_path / "bad.csv"
    f.write_text(out, encoding="utf-8", newline="")
    r = _cli(str(f))
    assert r.returncode == 2 and "Row " in r.stderr and "meta.status" in r.stderr


def test_the_same_record_twice_counts_once_and_a_clash_is_refused():
    recs = demo.load_records()
    l12 = next(r for r in recs if r["kind"] == "test" and r["meta"]["sample_id"] == "Q-1005-1")
    twice = summary(recs + [copy.deepcopy(l12)], as_of="2026-12-02")
    assert next(x for x in twice["lots"] if x["lot"] == "L12")["n_tests"] == 2
    other = copy.deepcopy(l12)
    other["meta"]["ticket"] = "QB-99999"
    resp = json.loads(api.handle(json.dumps({"op": "lot_summary", "records": recs + [other]})))
    assert resp["error"]["code"] == "duplicate_id" and resp["error"]["field"] == f"records[{len(recs)}].record_id"


@pytest.mark.parametrize("settings, field", [
    ({"creep_margin": 1.0}, "settings.creep_margin"),
    ({"drift_k": 1}, "settings.drift_k"),
    ({"drift_k": 2.5}, "settings.drift_k"),
    ({"d85_loss_share": 1.5}, "settings.d85_loss_share"),
    ({"creep_margin_pct": -1}, "settings.creep_margin_pct"),
])
def test_bad_settings_name_their_field(settings, field):
    resp = json.loads(api.handle(json.dumps({"op": "lot_summary", "records": [], "settings": settings})))
    assert not resp["ok"] and resp["error"]["field"] == field


def test_settings_change_the_creep_verdict():
    recs = demo.load_records()
    wide = summary(recs, lot_id="L11", settings={"creep_margin_pct": 2.0})["lots"][0]
    # 1.5 points is inside a 2-point margin, but the compacted fines still pass the limit the delivered sand met
    creep = [w for w in wide["warnings"] if w["code"] == "creep"]
    assert creep and "margin" not in creep[0]["message"].split(";")[0] and creep[0]["crossed_limit"]
    assert summary(recs, lot_id="L11", settings={"drift_k": 4})["lots"][0]["warnings"][1:] == []


def test_frequency_presets_are_examples():
    resp = json.loads(api.handle(json.dumps({"op": "frequency_presets"})))
    assert resp["ok"] and all(p["example"] and p["label"].startswith("Example") for p in resp["result"]["presets"])
    assert "not standards" in resp["result"]["note"]


def test_unknown_lot_id():
    resp = json.loads(api.handle(json.dumps({"op": "lot_summary", "records": demo.load_records(), "lot_id": "L99"})))
    assert resp["error"]["code"] == "unknown_lot" and resp["error"]["field"] == "lot_id"


def test_office_check_counts_the_lots():
    r = subprocess.run([sys.executable, "-m", "tamis", "check", str(DEMO_CSV)], capture_output=True, text=True,
                       cwd=ROOT)
    assert r.returncode == 0 and "20 tests, 2 bands, 5 base soils, 4 lots; 0 deleted" in r.stdout
