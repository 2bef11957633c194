"""Rejected files: each malformed file gives one located error and changes nothing.

A located error names ``csv.row[<n>].<column>``, with rows numbered as a
spreadsheet shows them (header = row 1), and a message that starts with the
same place. "Changes nothing": the response carries no result, so the app has
nothing to store, and the device's records handed in are not modified.

Sources: RFC 4180 (IETF, Oct 2005) section 2 for what a well-formed file is
(same number of fields on every line, quotes closed); RFC 3629 (IETF, Nov
2003) for UTF-8 (a Latin-1 byte 0xE9 alone is not a UTF-8 sequence).
"""

from __future__ import annotations

import copy
import json

import pytest

from tamis import api
from tamis.exchange import csv_read, csv_write, record
from tamis.errors import InputError
from test_records import UID2, parse_rfc4180, rec


def call(op, **fields):
    return json.loads(api.handle(json.dumps({"schema": 1, "op": op, "id": 1, **fields})))


def good_file() -> str:
    band = rec(record_id=UID2, kind="band", test=None,
               band={"name": "F1", "limits": [{"opening_mm": 9.5, "min_pct": 100.0, "max_pct": 100.0}]})
    return csv_write.write_csv([record.check_record(rec(meta={"sample_id": "S-1", "notes": "two\nlines"})),
                        record.check_record(band)])


def edit(text: str, row: int, column: str, value: str) -> str:
    """Set one cell (spreadsheet numbering) and write the file back with the codec's quoting."""
    rows = parse_rfc4180(text)
    rows[row - 1][rows[0].index(column)] = value
    return "\r\n".join(",".join(csv_write.quote(c) for c in r) for r in rows) + "\r\n"


def reject(text: str, field: str, code: str, *words):
    existing = [rec(rev=1)]
    before = copy.deepcopy(existing)
    out = call("records_import_csv", csv=text, existing=existing)
    assert out["ok"] is False and "result" not in out
    err = out["error"]
    assert err["field"] == field, err
    assert err["code"] == code, err
    for w in words:
        assert w in err["message"], err
    assert existing == before
    return err


def test_the_good_file_is_accepted():
    out = call("records_import_csv", csv=good_file(), existing=[])
    assert out["ok"] and out["result"]["rows"] == 2
    # The band is on row 2 (bands first), the test with a two-line note on row 3.
    assert [r["kind"] for r in out["result"]["records"]] == ["band", "test"]


def test_wrong_header():
    text = good_file().replace("tamis_csv,", "format,", 1)
    reject(text, "csv.row[1]", "not_tamis_csv", "Row 1")


def test_unknown_column():
    text = good_file().replace("sample_id", "sampel_id", 1)
    reject(text, "csv.row[1].sampel_id", "unknown_column", "sampel_id")


def test_bare_sieve_label_as_a_column_is_refused():
    text = good_file().replace("retained_g@4.75mm", "No. 4", 1)
    reject(text, "csv.row[1].No. 4", "unknown_column")


def test_missing_required_column():
    rows = parse_rfc4180(good_file())
    i = rows[0].index("rev")
    text = "\r\n".join(",".join(csv_write.quote(c) for j, c in enumerate(r) if j != i) for r in rows) + "\r\n"
    reject(text, "csv.row[1].rev", "missing_column")


def test_missing_id():
    reject(edit(good_file(), 3, "record_id", ""), "csv.row[3].record_id", "missing_value", "Row 3, column record_id")


def test_id_that_is_not_a_uuid():
    reject(edit(good_file(), 2, "record_id", "S-000123"), "csv.row[2].record_id", "bad_record_id")
    reject(edit(good_file(), 2, "record_id", UID2 + "\n"), "csv.row[2].record_id", "bad_record_id")
    reject(edit(good_file(), 2, "record_id", UID2.upper()), "csv.row[2].record_id", "bad_record_id")


def test_unknown_kind():
    reject(edit(good_file(), 3, "kind", "sample"), "csv.row[3].kind", "bad_kind")


@pytest.mark.parametrize("value,code,hint", [
    ("12,4", "not_a_number", "point as the decimal mark"), ("abc", "not_a_number", "'abc'"),
    ("1e999", "not_finite", "finite"), ("NaN", "not_a_number", "NaN"), ("=12.4", "not_a_number", "=12.4"),
    ("12\n", "not_a_number", "12"), (" 12", "not_a_number", "12"), ("١٢", "not_a_number", "١٢"),
    ("1_000", "not_a_number", "1_000"), ("inf", "not_a_number", "inf"),
])
def test_bad_numbers(value, code, hint):
    reject(edit(good_file(), 3, "retained_g@4.75mm", value), "csv.row[3].retained_g@4.75mm", code, hint)


@pytest.mark.parametrize("value", ["0", "1.5", "-1", "two", "１"])
def test_bad_rev(value):
    reject(edit(good_file(), 3, "rev", value), "csv.row[3].rev", "bad_rev")


def test_bad_boolean():
    reject(edit(good_file(), 3, "deleted", "yes"), "csv.row[3].deleted", "not_a_boolean")


def test_bad_time():
    reject(edit(good_file(), 3, "updated_at", "01/12/2026 09:30"), "csv.row[3].updated_at", "bad_time")


def test_bad_history_json():
    reject(edit(good_file(), 3, "history_json", "[{\"rev\": 1,"), "csv.row[3].history_json", "bad_json")
    reject(edit(good_file(), 3, "history_json", "[{\"rev\": 1, \"at\": \"yesterday\", \"by\": \"AB\"}]"),
           "csv.row[3].history_json", "bad_time", "history[0].at")


def test_unsupported_version():
    reject(edit(good_file(), 2, "tamis_csv", "2"), "csv.row[2].tamis_csv", "unsupported_version")


def test_duplicated_id_with_different_content():
    rows = parse_rfc4180(good_file())
    twin = rows[2][:]
    twin[rows[0].index("updated_by")] = "CD"
    text = "\r\n".join(",".join(csv_write.quote(c) for c in r) for r in rows + [twin]) + "\r\n"
    reject(text, "csv.row[4].record_id", "duplicate_id", "row 3")


def test_duplicated_id_with_the_same_content_is_read_once():
    rows = parse_rfc4180(good_file())
    text = "\r\n".join(",".join(csv_write.quote(c) for c in r) for r in rows + [rows[2]]) + "\r\n"
    out = call("records_import_csv", csv=text, existing=[])
    assert out["ok"] and len(out["result"]["records"]) == 2


def test_truncated_line():
    text = good_file()
    cut = text[: text.rindex(",12.4,") + 5] + "\r\n"  # the last line stops after a mass
    reject(cut, "csv.row[3]", "wrong_cell_count", "truncated")


def test_truncated_inside_a_quoted_cell():
    text = good_file()
    cut = text[: text.index("two\n") + 3]  # the file ends inside the quoted two-line note
    reject(cut, "csv.row[3]", "bad_csv", "truncated")


def test_text_after_a_closing_quote():
    text = good_file().replace('"two\nlines"', '"two\nlines"x', 1)
    reject(text, "csv.row[3]", "bad_csv")


def test_wrong_encoding_seen_by_the_app_as_replacement_characters():
    text = good_file().replace("S-1", "S-1 \ufffd", 1)
    reject(text, "csv.row[3]", "not_utf8", "UTF-8")


def test_wrong_encoding_bytes_are_refused_with_their_row():
    data = good_file().replace("S-1", "Séché").encode("latin-1")
    with pytest.raises(InputError) as exc:
        csv_read.decode_csv_bytes(data)
    assert exc.value.field == "csv.row[3]" and "0xe9" in exc.value.message
    with pytest.raises(InputError) as exc:
        csv_read.decode_csv_bytes(good_file().encode("utf-16"))
    assert exc.value.code == "not_utf8" and "UTF-16" in exc.value.message
    assert csv_read.decode_csv_bytes(good_file().encode("utf-8-sig")).lstrip("\ufeff") == good_file()


def test_empty_file():
    reject("", "csv", "empty_file")
    reject("\r\n\r\n", "csv", "empty_file")


def test_a_meta_key_given_twice():
    reject(edit(good_file(), 3, "meta_extra_json", '{"sample_id": "S-2"}'), "csv.row[3].meta_extra_json",
           "duplicate_field")


def test_error_in_an_existing_record_names_it():
    out = call("records_import_csv", csv=good_file(), existing=[rec(), rec(record_id=UID2, rev=0)])
    assert out["ok"] is False and out["error"]["field"] == "existing[1].rev"


def test_a_bad_row_late_in_a_long_file_rejects_the_whole_file():
    from test_records_gen import make_records
    recs = [record.check_record(r) for r in make_records(400, seed=12)]
    text = csv_write.write_csv(recs)
    rows = parse_rfc4180(text)
    bad = edit(text, 399, "rev", "x")
    err = reject(bad, "csv.row[399].rev", "bad_rev")
    assert err["message"].startswith("Row 399, column rev")
    assert len(rows) == 401


def test_lf_line_ends_and_a_bom_are_accepted():
    """RFC 4180 asks for CRLF; a file rewritten by a tool with LF line ends is read the
    same, and a UTF-8 BOM is skipped."""
    text = good_file()
    assert "\r\n" in text and "two\nlines" in text  # the note holds a bare LF, kept inside its quotes
    crlf = call("records_import_csv", csv=text, existing=[])
    for variant in ("\ufeff" + text, text.replace("\r\n", "\n")):
        out = call("records_import_csv", csv=variant, existing=[])
        assert out["ok"], out.get("error")
        assert out["result"]["records"] == crlf["result"]["records"]
