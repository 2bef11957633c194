"""The CSV read by a person: percent passing beside the masses, names beside ids, reasons in
words, empty text left empty, and the decimal-comma variant that reads back as the same records.

Sources checked against:
- RFC 4180 (IETF, Oct 2005), section 2: the separator is the comma; the decimal-comma variant
  keeps every other rule of it with a semicolon between cells (the convention of spreadsheets
  whose locale writes the decimal mark as a comma), read here by Python's ``csv`` module with
  ``delimiter=";"`` as the independent parser.
- ASTM C136/C136M-14, section 9 (calculation): percent passing = 100 x (mass passing) / (original
  dry mass); the calc columns are compared with the core's ``evaluate`` points, which are
  checked against that formula in ``tests/test_sieve_analysis.py``.
"""

from __future__ import annotations

import copy
import csv
import io

import pytest

from tamis import demo
from tamis.exchange import csv_read, csv_write, ops, record
from test_records import UID, call, rec
from test_records_gen import make_records


def demo_records():
    return [record.check_record(r) for r in demo.load_records()]


def rows_of(text: str, sep: str = ","):
    header, *rows = list(csv.reader(io.StringIO(text, newline=""), strict=True, delimiter=sep))
    return [dict(zip(header, r)) for r in rows], header


def by_sample(rows, sample_id):
    return next(r for r in rows if r["sample_id"] == sample_id)


def test_percent_passing_sits_beside_each_mass_and_equals_the_cores_curve():
    recs = demo_records()
    rows, header = rows_of(ops.export_csv(recs))
    r = by_sample(rows, "Q-L11-CP")
    i = header.index("retained_g@2.36mm")
    assert header[i + 1] == "calc_passing_pct@2.36mm"
    src = next(x for x in recs if x["meta"].get("sample_id") == "Q-L11-CP")
    idx = {x["record_id"]: x for x in recs}
    got = call("evaluate", sample=src["test"], base=idx[src["meta"]["base_id"]]["test"],
               band=idx[src["meta"]["band_id"]]["band"], rules=src["meta"]["rules"])
    points = got["result"]["sample"]["points"]
    assert len(points) == 8
    for p in points:
        cell = r[csv_write.column_name("calc_passing_pct", p["opening_mm"])]
        assert cell and float(cell) == pytest.approx(p["passing_pct"], rel=1e-5, abs=1e-9)
    # C136 section 9 by hand at No. 8: 107.9 g retained of 1037.6 g dry mass (washing loss passes No. 200).
    assert float(r["calc_passing_pct@2.36mm"]) == pytest.approx(100 * (1037.6 - 107.9) / 1037.6, rel=1e-5)
    # A passing-entered base soil gets the column too: its own figures.
    base = by_sample(rows, "CORE-C1")
    assert float(base["calc_passing_pct@0.075mm"]) == 66.0


def test_band_and_base_names_beside_their_ids():
    rows, header = rows_of(ops.export_csv(demo_records()))
    assert header[header.index("band_id") + 1] == "calc_band_name"
    assert header[header.index("base_id") + 1] == "calc_base_name"
    r = by_sample(rows, "Q-L11-CP")
    assert r["calc_band_name"] == "Zone 2 fine filter band (spec. TD-02)"
    assert r["calc_base_name"] == "CORE-C1, Zone 1 core, sandy lean clay"


def test_reasons_in_words_count_only_the_deciding_checks():
    recs = demo_records()
    d = next(x for x in recs if x["meta"].get("sample_id") == "S-0918-T")
    d = copy.deepcopy(d)
    d["meta"]["rules"] = dict(d["meta"].get("rules") or {}, stability=True)  # Kezdi runs, advisory
    recs = [d if x["record_id"] == d["record_id"] else x for x in recs]
    rows, _ = rows_of(ops.export_csv(recs))
    r = by_sample(rows, "S-0918-T")
    assert r["calc_verdict"] == "reject"
    assert r["calc_reasons"] == "D15 0.742 mm > 0.7 mm (retention)"
    assert r["calc_failing_checks"] == "filter.retention"  # stability.kezdi fails but is advisory
    assert "stability" not in r["calc_reasons"]
    assert r["calc_advisory"].startswith("Internal stability: Kezdi split test: ")
    assert r["calc_advisory"].endswith("(advisory, not counted)")
    rows_ok = [x for x in rows if x["calc_verdict"] == "accept"]
    assert rows_ok and all(x["calc_reasons"] == "" for x in rows_ok)
    two = by_sample(rows, "Q-L11-CP")
    assert two["calc_reasons"] == "Band: No. 200 passing 5.7 % > 5 %; Fines 5.7 % > 5 %"


def test_a_review_says_why():
    recs = demo_records()
    t = copy.deepcopy(next(x for x in recs if x["meta"].get("sample_id") == "Q-0907-1"))
    t["meta"].pop("base_id")
    t["test"] = {"passing": [{"opening_mm": 4.75, "passing_pct": 100}, {"opening_mm": 1.18, "passing_pct": 60},
                             {"opening_mm": 0.3, "passing_pct": 20}, {"opening_mm": 0.15, "passing_pct": 8}]}
    rows, _ = rows_of(ops.export_csv([t], context=recs))
    r = rows[0]
    assert r["calc_verdict"] == "review"
    assert "Specification band: needs data (The sample's curve does not reach No. 200" in r["calc_reasons"]
    assert "Fines content of the filter: needs data" in r["calc_reasons"]


def test_a_review_with_no_counted_check_says_so():
    # verdict() on no applicable check gives review (tamis.checks.verdict): the reason must say it.
    from tamis.exchange.wording import verdict_reasons
    assert verdict_reasons("review", []) == ["No counted check applies to this input: nothing was shown to pass."]
    assert verdict_reasons("accept", []) == []


def test_a_failing_value_is_never_shown_equal_to_its_limit():
    from tamis.exchange.wording import reason_line
    c = {"id": "filter.fines", "status": "fail", "value": 5.0004, "limit": 5.0, "relation": "<=", "unit": "%"}
    assert reason_line(c) == "Fines 5.0004 % > 5 %"


def test_empty_text_stays_an_empty_cell_and_round_trips():
    r = rec(updated_by="", meta={"sample_id": "S-1", "notes": "", "tested_by": ""},
            band=None)
    band = rec(record_id="1c8f8d4f-2e3b-4d9f-8b62-3a4c5d6e7f80", kind="band", test=None,
               band={"name": "", "limits": [{"opening_mm": 4.75, "min_pct": 90.0, "max_pct": 100.0}]})
    recs = [record.check_record(r), record.check_record(band)]
    text = ops.export_csv(recs)
    rows, _ = rows_of(text)
    assert all(cell != "'" for row in rows for cell in row.values())
    t = next(x for x in rows if x["record_id"] == UID)
    assert t["updated_by"] == "" and t["notes"] == "" and t["tested_by"] == ""
    back, _ = csv_read.read_csv(text)
    rid = lambda x: x["record_id"]  # noqa: E731
    assert sorted(back, key=rid) == sorted(recs, key=rid)
    # Files written before (an empty text as a lone quote) still read as the same empty text.
    old = text.replace(",,false,", ",',false,", 1)
    assert [x["updated_by"] for x in csv_read.read_csv(old)[0] if x["record_id"] == UID] == [""]


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_both_variants_read_back_as_the_same_records(seed):
    recs = [record.check_record(r) for r in make_records(150, seed)]
    std = csv_write.write_csv(recs)
    comma = csv_write.write_csv(recs, dialect="decimal_comma")
    a, _ = csv_read.read_csv(std)
    b, _ = csv_read.read_csv(comma)
    assert [record.dump_json(x) for x in a] == [record.dump_json(x) for x in b]
    assert sorted(record.dump_json(x) for x in a) == sorted(
        record.dump_json(csv_read.read_csv(csv_write.write_csv([x]))[0][0]) for x in recs)
    # The variant is RFC 4180 with ';': the same cells, numbers with a comma, nothing else changed.
    rs, hs = rows_of(std)
    rc, hc = rows_of(comma, ";")
    assert hs == hc and len(rs) == len(rc)
    from tamis.exchange.csv_format import is_number_column
    changed = 0
    for x, y in zip(rs, rc):
        for col in hs:
            if is_number_column(col):
                assert y[col] == x[col].replace(".", ","), col
                assert "." not in y[col]
                changed += "," in y[col]
            else:
                assert y[col] == x[col], col
    assert changed > 100


def test_demo_file_both_variants_identical_records_through_the_api():
    recs = demo_records()
    texts = []
    for dialect in ("standard", "decimal_comma"):
        out = call("records_export_csv", records=recs, dialect=dialect)
        assert out["ok"], out
        texts.append(out["result"]["csv"])
    assert texts[1].startswith("tamis_csv;record_id;")
    got = [call("records_import_csv", csv=t, existing=[])["result"] for t in texts]
    assert got[0]["records"] == got[1]["records"] and len(got[0]["records"]) == len(recs)
    bad = call("records_export_csv", records=recs, dialect="excel")
    assert not bad["ok"] and bad["error"]["field"] == "dialect"


def test_a_point_in_the_decimal_comma_variant_is_refused_at_its_cell():
    recs = [record.check_record(rec())]
    text = csv_write.write_csv(recs, dialect="decimal_comma")
    assert ";3,1;" in text
    with pytest.raises(Exception) as exc:
        csv_read.read_csv(text.replace(";3,1;", ";3.1;"))
    assert exc.value.field == "csv.row[2].pan_g" and "decimal comma" in exc.value.message


def test_calc_columns_are_never_read():
    recs = demo_records()
    text = ops.export_csv(recs)
    rows, header = rows_of(text)
    edited = text.replace("Zone 2 fine filter band (spec. TD-02),", "edited by hand,")
    assert edited != text
    a = csv_read.read_csv(text)[0]
    b = csv_read.read_csv(edited)[0]
    # band_name holds the same text: only the calc cells change, the records come back identical
    assert [record.dump_json(x) for x in a if x["kind"] == "test"] == \
        [record.dump_json(x) for x in b if x["kind"] == "test"]
