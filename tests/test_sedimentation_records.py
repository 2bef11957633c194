"""A hydrometer sheet in stored records: CSV export and import, office merge, calc columns.

The test's ``sedimentation`` key (docs/json-contract.md) has no columns of its own: it is a nested
object (sheet fields, calibration tables, a list of readings), and docs/csv.md keeps any key the
columns do not hold verbatim in ``test_extra_json``. These tests show that this carries every sheet
exactly: records -> CSV -> records gives the same records, the same file again gives the same bytes,
the app's API ops (``records_export_csv``, ``records_import_csv``, ``records_merge``) keep it, a
newer revision of a reading wins a merge and two different edits of one sheet are a conflict, and the
calc columns of a base soil are those of its combined sieve + hydrometer curve.

Data: invented for the tests (a clay core and a silty foundation), not measured. RFC 4180 (IETF,
Oct 2005) section 2 for the file's quoting; the reduction itself is tested against published
examples in tests/test_sedimentation.py.
"""

from __future__ import annotations

import copy
import csv
import io
import json

from tamis import api
from tamis.exchange import csv_read, csv_write, record

BASE_ID = "7d1e6f0a-3b2c-4d5e-8f90-a1b2c3d4e5f6"
BASE2_ID = "8e2f7a1b-4c3d-4e6f-9a01-b2c3d4e5f607"
TEST_ID = "9f3a8b2c-5d4e-4f70-8b12-c3d4e5f60718"
AT1, AT2 = "2026-12-01T09:30:00Z", "2026-12-02T07:45:00Z"

#: A clay core from masses plus a 152H sheet with one measured composite correction (typed integers
#: stay integers in JSON, as the app sends them).
CLAY = {"dry_mass_g": 500.0, "pan_g": 0.9, "washed_dry_mass_g": 117.1,
        "sieves": [{"opening_mm": 4.75, "retained_g": 0.0}, {"opening_mm": 2.0, "retained_g": 9.6},
                   {"opening_mm": 0.85, "retained_g": 14.2}, {"opening_mm": 0.425, "retained_g": 17.5},
                   {"opening_mm": 0.25, "retained_g": 21.3}, {"opening_mm": 0.15, "retained_g": 24.8},
                   {"opening_mm": 0.106, "retained_g": 13.1}, {"opening_mm": 0.075, "retained_g": 15.4}],
        "plasticity": {"liquid_limit": 44, "plasticity_index": 23}, "dispersive": False,
        "sedimentation": {"hydrometer": "152H", "specific_gravity": 2.7, "dry_mass_g": 50, "split_mm": 2,
                          "composite_correction": 5.5,
                          "readings": [{"time_min": t, "reading": r, "temperature_c": c} for t, r, c in
                                       [(1, 43, 21), (2, 40.5, 21), (4, 37, 21), (8, 34, 21.5), (15, 31, 21.5),
                                        (30, 28, 22), (60, 25, 22), (120, 22, 22.5), (240, 19.5, 22.5),
                                        (1440, 12.5, 15.5)]]}}
#: A silty foundation given as percent passing plus a 151H sheet: a correction calibration at
#: temperatures, a meniscus correction, a depth calibration, one reading with its own correction
#: and a key the app does not show (kept as it is).
SILT = {"passing": [{"opening_mm": 4.75, "passing_pct": 100.0}, {"opening_mm": 2.0, "passing_pct": 99.2},
                    {"opening_mm": 0.425, "passing_pct": 93.0}, {"opening_mm": 0.075, "passing_pct": 71.5}],
        "sedimentation": {"hydrometer": "151H", "specific_gravity": 2.68, "dry_mass_g": 50.0, "split_mm": 0.075,
                          "correction_calibration": [{"temperature_c": 18, "composite_correction": 1.0045},
                                                     {"temperature_c": 24, "composite_correction": 1.0032}],
                          "meniscus_correction": 0.0005,
                          "depth_calibration": [{"reading": 1.0, "depth_cm": 16.3}, {"reading": 1.031, "depth_cm": 8.1}],
                          "readings": [{"time_min": 2, "reading": 1.0205, "temperature_c": 20.5},
                                       {"time_min": 30, "reading": 1.0150, "temperature_c": 21.0,
                                        "composite_correction": 1.0040},
                                       {"time_min": 1440, "reading": 1.0085, "temperature_c": 19.0}],
                          "cylinder": "No. 3"}}
#: A filter sand given as percent passing (the sample checked against the clay core).
SAND = {"passing": [{"opening_mm": 4.75, "passing_pct": 100.0}, {"opening_mm": 2.36, "passing_pct": 95.0},
                    {"opening_mm": 1.18, "passing_pct": 75.0}, {"opening_mm": 0.6, "passing_pct": 45.0},
                    {"opening_mm": 0.3, "passing_pct": 18.0}, {"opening_mm": 0.15, "passing_pct": 5.0},
                    {"opening_mm": 0.075, "passing_pct": 1.0}], "plasticity": {"nonplastic": True}}


def rec(record_id, kind, test, *, rev=1, meta=None, history=None, at=AT1):
    return {"record_id": record_id, "kind": kind, "rev": rev, "updated_at": at, "updated_by": "LT",
            "deleted": False, "exported_at": None, "meta": meta or {"sample_id": record_id[:4]}, "test": test,
            "band": None,
            "history": history or [{"rev": 1, "at": AT1, "by": "LT", "summary": "created", "changes": []}]}


def corrected(r):
    """The clay core at revision 2: reading 4 re-read, with the history entry the app writes."""
    out = copy.deepcopy(r)
    out["rev"], out["updated_at"] = 2, AT2
    out["test"]["sedimentation"]["readings"][3]["reading"] = 33.5
    out["history"].append({"rev": 2, "at": AT2, "by": "LT", "summary": "edited",
                           "changes": [{"field": "test.sedimentation.readings[3].reading", "old": 34, "new": 33.5}]})
    return out


def records():
    return [record.check_record(r) for r in (
        rec(BASE_ID, "base", copy.deepcopy(CLAY), meta={"sample_id": "CORE-7", "material": "clay core"}),
        rec(BASE2_ID, "base", copy.deepcopy(SILT), meta={"sample_id": "FDN-2", "material": "silty foundation"}),
        rec(TEST_ID, "test", copy.deepcopy(SAND), meta={"sample_id": "F-0012", "base_id": BASE_ID,
                                                         "rules": {"criteria": "nrcs-1994"}}))]


def call(op, **fields):
    out = json.loads(api.handle(json.dumps({"schema": 1, "op": op, "id": 1, **fields})))
    assert out["ok"], out
    return out["result"]


def rows_of(text):
    table = list(csv.reader(io.StringIO(text, newline="")))
    return [dict(zip(table[0], r)) for r in table[1:]]


def test_csv_to_records_is_identical():
    recs = records()
    text = csv_write.write_csv(recs)
    back, _ = csv_read.read_csv(text)
    by_id = {r["record_id"]: r for r in back}
    for r in recs:
        assert by_id[r["record_id"]] == r
        # The sheet, number for number and key for key (ints stay ints inside the JSON cell).
        assert json.dumps(by_id[r["record_id"]]["test"].get("sedimentation"), sort_keys=True) == \
            json.dumps(r["test"].get("sedimentation"), sort_keys=True)
    # The same records written again: the same bytes.
    assert csv_write.write_csv(back) == text


def test_the_sheet_is_verbatim_in_test_extra_json_and_the_sieves_keep_their_columns():
    text = csv_write.write_csv(records())
    rows = {r["record_id"]: r for r in rows_of(text)}
    clay = rows[BASE_ID]
    assert json.loads(clay["test_extra_json"]) == {"sedimentation": CLAY["sedimentation"]}
    assert clay["retained_g@0.106mm"] == "13.1" and clay["dry_mass_g"] == "500"
    silt = rows[BASE2_ID]
    assert json.loads(silt["test_extra_json"]) == {"sedimentation": SILT["sedimentation"]}
    assert silt["passing_pct@0.075mm"] == "71.5"
    assert rows[TEST_ID]["test_extra_json"] == ""  # a test without a sheet: nothing added


def test_a_row_edited_in_a_spreadsheet_to_a_bad_sheet_is_refused_at_its_cell():
    table = list(csv.reader(io.StringIO(csv_write.write_csv(records()), newline="")))
    col = table[0].index("test_extra_json")
    row = next(i for i, r in enumerate(table) if r[1] == BASE_ID)
    table[row][col] = table[row][col][:-1]  # the closing brace lost
    broken = "\r\n".join(",".join(csv_write.quote(c) for c in r) for r in table) + "\r\n"
    out = json.loads(api.handle(json.dumps({"schema": 1, "op": "records_import_csv", "id": 1, "csv": broken,
                                            "existing": []})))
    assert out["ok"] is False
    assert out["error"]["field"] == f"csv.row[{row + 1}].test_extra_json" and out["error"]["code"] == "bad_json"
    assert out["error"]["message"].startswith(f"Row {row + 1}, column test_extra_json")


def test_api_export_then_import_gives_the_same_records():
    recs = records()
    exported = call("records_export_csv", records=recs, bom=False, context=[])
    assert exported["count"] == 3
    first = call("records_import_csv", csv=exported["csv"], existing=[])
    assert sorted(first["added"]) == sorted(r["record_id"] for r in recs)
    stored = {r["record_id"]: r for r in first["records"]}
    assert all(stored[r["record_id"]] == r for r in recs)
    again = call("records_import_csv", csv=exported["csv"], existing=first["records"])
    assert again["added"] == [] and again["updated"] == [] and again["conflicts"] == []
    assert sorted(again["unchanged"]) == sorted(stored)


def test_a_corrected_reading_wins_the_merge_and_two_edits_of_one_sheet_conflict():
    v1 = records()[0]
    v2 = record.check_record(corrected(v1))
    file1 = csv_write.write_csv([v1])
    file2 = csv_write.write_csv([v2])
    # The office merge of the two files keeps revision 2, its reading and both history entries.
    merged = call("records_merge", files=[file1, file2])
    assert merged["conflicts"] == [] and merged["count"] == 1
    (m,), _ = csv_read.read_csv(merged["csv"])
    assert m["rev"] == 2 and m["test"]["sedimentation"]["readings"][3]["reading"] == 33.5
    assert m["history"] == v2["history"]
    # A device still at revision 1 takes the file's revision 2.
    out = call("records_import_csv", csv=file2, existing=[v1])
    assert out["updated"] == [BASE_ID]
    assert next(r for r in out["records"] if r["record_id"] == BASE_ID) == v2
    # The device changed another reading from revision 1 meanwhile: both changed the sheet, a conflict.
    other = copy.deepcopy(v1)
    other["rev"], other["updated_at"] = 2, "2026-12-02T08:10:00Z"
    other["test"]["sedimentation"]["readings"][5]["temperature_c"] = 22.5
    other["history"].append({"rev": 2, "at": other["updated_at"], "by": "JR", "summary": "edited", "changes": [
        {"field": "test.sedimentation.readings[5].temperature_c", "old": 22, "new": 22.5}]})
    other = record.check_record(other)
    out = call("records_import_csv", csv=file2, existing=[other])
    assert [c["record_id"] for c in out["conflicts"]] == [BASE_ID]
    kept = next(r for r in out["records"] if r["record_id"] == BASE_ID)
    assert kept == other  # the device's version stays untouched until someone chooses


def test_calc_columns_of_a_base_soil_come_from_its_combined_curve():
    recs = records()
    rows = {r["record_id"]: r for r in rows_of(call("records_export_csv", records=recs, bom=False, context=[])["csv"])}
    grad = call("gradation", test=CLAY)
    assert grad["d_mm"]["D15"] is not None  # determinable only with the hydrometer points
    for key, col in (("D10", "calc_d10_mm"), ("D15", "calc_d15_mm"), ("D85", "calc_d85_mm")):
        want = grad["d_mm"][key]
        assert (rows[BASE_ID][col] == "") == (want is None), (key, rows[BASE_ID][col], want)
        if want is not None:
            assert float(rows[BASE_ID][col]) == float(f"{want:.6g}")
    no_sheet = {k: v for k, v in CLAY.items() if k != "sedimentation"}
    assert call("gradation", test=no_sheet)["d_mm"]["D15"] is None
    # The test's calc verdict is the evaluate op's against the base with its sheet.
    ev = call("evaluate", sample=SAND, base=CLAY, rules={"criteria": "nrcs-1994"})
    assert rows[TEST_ID]["calc_verdict"] == ev["verdict"]
    assert ev["base"]["points"][-1]["source"] == "sedimentation"
