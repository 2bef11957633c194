"""The reader and the merge: faults named at their cell, and the two speed shortcuts
that are kept (docs/records.md) giving the answers of the plain rules.

- Rows: a row that does not fit the record must be refused at its cell, with
  its code, as ``docs/csv.md`` describes (header = row 1); times are real
  instants of the calendar (the standard library's ``datetime``, proleptic
  Gregorian calendar, years 1-9999, Python documentation).
- History union: ``merge_history`` returns the longer history as it is when
  the others are spelled as its first entries; the expected unions below are
  computed independently from the rule in its docstring (an entry once, the
  int/float spellings of one number the same entry, the spelling that is the
  smallest text kept, ordered by rev then time then content).
- Rows shared between files: ``read_files`` reads a row repeated in several
  files once; each file must still give what it gives alone.
"""

from __future__ import annotations

import json
import random

import pytest

from tamis import api
from tamis.exchange import csv_read, csv_write, merge, record
from tamis.errors import InputError
from test_records import UID, UID2, parse_rfc4180, rec
from test_records_import import edit, good_file, reject


# ------------------------------------------------------------ rows refused at the same cell

def test_a_leap_day_is_read_and_an_impossible_day_refused():
    ok = edit(good_file(), 3, "updated_at", "2024-02-29T09:30:00Z")
    out = json.loads(api.handle(json.dumps({"schema": 1, "op": "records_import_csv", "id": 1, "csv": ok})))
    assert out["ok"], out
    assert {r["updated_at"] for r in out["result"]["records"]} >= {"2024-02-29T09:30:00Z"}
    reject(edit(good_file(), 3, "updated_at", "2026-02-29T09:30:00Z"), "csv.row[3].updated_at", "bad_time",
           "Row 3, column updated_at", "2026-02-29")
    reject(edit(good_file(), 2, "updated_at", "2026-04-31T09:30:00Z"), "csv.row[2].updated_at", "bad_time")
    reject(edit(good_file(), 3, "exported_at", "2026-12-01T24:00:00Z"), "csv.row[3].exported_at", "bad_time",
           "Row 3, column exported_at")


@pytest.mark.parametrize("history,code,words", [
    ([{"rev": 0, "at": "2026-12-01T09:30:00Z", "by": "AB"}], "bad_rev", ("history[0].rev",)),
    ([{"rev": True, "at": "2026-12-01T09:30:00Z", "by": "AB"}], "bad_rev", ("history[0].rev",)),
    ([{"rev": 1.0, "at": "2026-12-01T09:30:00Z", "by": "AB"}], "bad_rev", ("history[0].rev",)),
    ([{"rev": 1, "at": "2026-12-01T09:30:00Z", "by": "AB"}, {"rev": 2, "at": "2026-06-31T09:30:00Z", "by": "AB"}],
     "bad_time", ("history[1].at", "2026-06-31")),
    ([{"rev": 1, "at": "2026-12-01T09:30:00Z", "by": 7}], "not_a_string", ("history[0].by",)),
    ([{"rev": 1, "at": "2026-12-01T09:30:00Z"}], "not_a_string", ("history[0].by",)),
    ([7], "not_an_object", ("history[0]",)),
])
def test_history_faults_are_refused_in_the_history_column(history, code, words):
    text = edit(good_file(), 3, "history_json", record.dump_json(history))
    reject(text, "csv.row[3].history_json", code, "Row 3, column history_json", *words)


def test_a_fault_on_a_later_row_is_still_the_one_named():
    text = edit(edit(good_file(), 3, "updated_at", "2026-11-31T00:00:00Z"), 2, "kind", "sample")
    reject(text, "csv.row[2].kind", "bad_kind")  # row 2 is read first


# ------------------------------------------------------------ history union

def entry(rev, at, by="AB", **more):
    return {"rev": rev, "at": at, "by": by, "summary": "edit", "changes": [], **more}


def _floats(v):
    if type(v) is int:
        return float(v)
    if isinstance(v, dict):
        return {k: _floats(x) for k, x in v.items()}
    if isinstance(v, list):
        return [_floats(x) for x in v]
    return v


def reference_union(*histories):
    """The rule of merge_history, written out: one entry per content (numbers
    compared as floats), the entry whose compact JSON text is the smallest
    (compared as text) kept, ordered by rev, time, content."""
    best = {}
    for hist in histories:
        for h in hist:
            canon = json.dumps(_floats(h), ensure_ascii=False, separators=(",", ":"))
            text = json.dumps(h, ensure_ascii=False, separators=(",", ":"))
            if canon not in best or text < best[canon][0]:
                best[canon] = (text, h)
    return [json.loads(best[c][0]) for c in sorted(best, key=lambda c: (best[c][1]["rev"], best[c][1]["at"], c))]


def spelled(hist):
    return record.dump_json(hist)


def test_an_older_revisions_history_is_the_start_of_the_newer_one():
    newer = [entry(1, "2026-12-01T09:00:00Z"), entry(2, "2026-12-02T09:00:00Z"), entry(3, "2026-12-03T09:00:00Z")]
    older = json.loads(json.dumps(newer[:2]))  # another file's copy: equal, not the same objects
    for args in ((newer, older), (older, newer), (older, newer, older[:1]), (newer,)):
        got = merge.merge_history(*args)
        assert spelled(got) == spelled(newer) and got is not newer


def test_a_history_spelled_otherwise_is_united_by_content():
    newer = [entry(1, "2026-12-01T09:00:00Z", weight=12.0), entry(2, "2026-12-02T09:00:00Z")]
    older = [entry(1, "2026-12-01T09:00:00Z", weight=12)]  # 12 and 12.0: one entry; "12.0}" < "12}"
    for args in ((newer, older), (older, newer)):
        got = merge.merge_history(*args)
        assert len(got) == 2 and type(got[0]["weight"]) is float
    assert spelled(got) == spelled(reference_union(newer, older))


def test_a_history_that_is_not_in_order_is_sorted_and_deduplicated():
    a, b = entry(1, "2026-12-01T09:00:00Z"), entry(2, "2026-12-02T09:00:00Z")
    got = merge.merge_history([b, a, b], [a])
    assert spelled(got) == spelled([a, b])


def test_random_histories_give_the_reference_union():
    rng = random.Random(404)
    pool = []
    for rev in range(1, 9):
        at = f"2026-12-{rev:02d}T09:00:00Z"
        pool.append([entry(rev, at, n=rev), entry(rev, at, n=float(rev))])  # two spellings of one entry
        if rev % 3 == 0:
            pool.append([entry(rev, at, by="QA")])  # another entry at the same rev and time
    for _ in range(400):
        hists = []
        for _ in range(rng.randint(1, 4)):
            picks = sorted(rng.sample(range(len(pool)), rng.randint(0, len(pool))))
            if rng.random() < 0.5:
                picks = picks[:rng.randint(0, len(picks))]
            h = [json.loads(json.dumps(rng.choice(pool[i]))) for i in picks]
            if rng.random() < 0.2:
                rng.shuffle(h)
            hists.append(h)
        if rng.random() < 0.5 and hists[0]:  # a prefix of the first, as an older revision holds it
            hists.append(json.loads(json.dumps(hists[0][:rng.randint(0, len(hists[0]))])))
        assert spelled(merge.merge_history(*hists)) == spelled(reference_union(*hists)), hists


def test_merge_keeps_the_newer_revision_with_its_whole_history():
    v1 = record.check_record(rec())
    v2 = record.check_record(rec(rev=2, updated_at="2026-12-02T09:30:00Z",
                            history=v1["history"] + [entry(2, "2026-12-02T09:30:00Z")]))
    band = record.check_record(rec(record_id=UID2, kind="band", test=None, band={"name": "F1"}))
    files = [csv_write.write_csv([v1, band]), csv_write.write_csv([v2]), csv_write.write_csv([v1, v2, band][1:])]
    out = json.loads(api.handle(json.dumps({"schema": 1, "op": "records_merge", "id": 1, "files": files})))
    assert out["ok"] and out["result"]["conflicts"] == []
    back = csv_read.read_csv(out["result"]["csv"])[0]
    mine = next(r for r in back if r["record_id"] == UID)
    assert mine["rev"] == 2 and spelled(mine["history"]) == spelled(v2["history"])


# ------------------------------------------------------------ numbers

def test_of_two_bad_numbers_the_first_in_reading_order_is_named():
    # docs/csv.md: a row is read column group by column group, sieves coarsest first.
    text = edit(edit(good_file(), 2, "retained_g@9.5mm", "x"), 2, "retained_g@4.75mm", "1e999")
    reject(text, "csv.row[2].retained_g@9.5mm", "not_a_number", "'x'")
    text = edit(edit(good_file(), 2, "retained_g@9.5mm", "1e999"), 2, "retained_g@4.75mm", "x")
    reject(text, "csv.row[2].retained_g@9.5mm", "not_finite")
    text = edit(edit(good_file(), 2, "retained_g@9.5mm", "x"), 2, "dry_mass_g", "-1e400")
    reject(text, "csv.row[2].dry_mass_g", "not_finite")


@pytest.mark.parametrize("cells", [["1", "2"], ["+1.", ".5e-3"], ["0", "-0.0"], ["12", "7E2"]])
def test_numbers_are_read_as_float_reads_them(cells):
    r = record.check_record(rec())
    text = csv_write.write_csv([r])
    for col, v in zip(("retained_g@9.5mm", "retained_g@4.75mm"), cells):
        text = edit(text, 2, col, v)
    (back,), _ = csv_read.read_csv(text)
    assert [s["retained_g"] for s in back["test"]["sieves"]] == [float(c) for c in cells]


def test_a_header_with_sieves_finest_first_gives_the_same_record():
    r = record.check_record(rec(test={"sieves": [{"opening_mm": o, "retained_g": float(i)} for i, o in
                                            enumerate((37.5, 19.0, 9.5, 4.75, 0.075))], "pan_g": 1.0}))
    rows = parse_rfc4180(csv_write.write_csv([r]))
    sieve_cols = [i for i, c in enumerate(rows[0]) if c.startswith("retained_g@")]
    order = list(range(len(rows[0])))
    order[sieve_cols[0]:sieve_cols[-1] + 1] = reversed(sieve_cols)
    text = "\r\n".join(",".join(csv_write.quote(row[i]) for i in order) for row in rows) + "\r\n"
    (back,), _ = csv_read.read_csv(text)
    (canonical,), _ = csv_read.read_csv(csv_write.write_csv([r]))
    assert record.dump_json(back) == record.dump_json(canonical) and back == r
    assert [s["opening_mm"] for s in back["test"]["sieves"]] == [37.5, 19.0, 9.5, 4.75, 0.075]


# ------------------------------------------------------------ rows shared between files

def _with_calc(text: str, verdict: str) -> str:
    rows = parse_rfc4180(text)
    for row in rows[1:]:
        row[rows[0].index("calc_verdict")] = verdict
    return "\r\n".join(",".join(csv_write.quote(c) for c in r) for r in rows) + "\r\n"


def test_read_files_gives_what_each_file_gives_alone():
    a = record.check_record(rec(meta={"sample_id": "S-1", "notes": "a\ufffe b"}))
    b = record.check_record(rec(record_id=UID2, test={"sieves": [{"opening_mm": 0.075, "retained_g": 2.0}]}))
    band = record.check_record(rec(record_id="0" * 8 + "-0000-4000-8000-" + "0" * 12, kind="band", test=None,
                              band={"name": "F1", "limits": [{"opening_mm": 4.75, "min_pct": 95.0,
                                                              "max_pct": None}]}))
    files = [_with_calc(csv_write.write_csv([a, b]), "accept"), _with_calc(csv_write.write_csv([b, band]), "reject"),
             csv_write.write_csv([a, band])]  # other headers (other sieve columns), other calc cells
    together = csv_read.read_files(files)
    alone = [csv_read.read_csv(t)[0] for t in files]
    memo = {}  # the stored calc cells of each row are those of its own file, memo or not
    assert [csv_read.read_csv(t, memo=memo)[1] for t in files] == [csv_read.read_csv(t)[1] for t in files]
    assert [row["calc"].get("calc_verdict") for t in files for row in csv_read.read_csv(t, memo=memo)[1]] == \
        ["accept", "accept", "reject", "reject", None, None]
    assert [[record.dump_json(r) for r in f] for f in together] == [[record.dump_json(r) for r in f] for f in alone]
    # copies of a row are one object, which the merge then takes as one version
    found = [{r["record_id"]: r for r in f} for f in together]
    assert found[0][b["record_id"]] is found[1][b["record_id"]] and found[0][UID] is found[2][UID]
    assert found[1][band["record_id"]] is found[2][band["record_id"]]
    merged, conflicts = merge.merge_all(together)
    assert conflicts == [] and [r["record_id"] for r in merged] == sorted([a["record_id"], b["record_id"],
                                                                          band["record_id"]],
                                                                         key=lambda i: (i != band["record_id"], i))


@pytest.mark.parametrize("left,right", [
    ({"sample_id": "x"}, {"notes": "x"}),                           # one text in another column
    ({"sample_id": "a\ufffeb", "notes": "c"}, {"sample_id": "a", "notes": "\ufffeb c"}),
    ({"sample_id": "a,b"}, {"sample_id": "a", "notes": "b"}),
    ({"sample_id": "'=1"}, {"sample_id": "=1"}),                    # the escape quote is part of the text
])
def test_rows_that_differ_in_any_cell_are_never_taken_for_each_other(left, right):
    ra, rb = (record.check_record(rec(rev=2, meta=m, history=[])) for m in (left, right))
    files = [csv_write.write_csv([ra]), csv_write.write_csv([rb])]
    got = csv_read.read_files(files)
    assert got[0][0]["meta"] == left and got[1][0]["meta"] == right
    merged, conflicts = merge.merge_all(got)
    assert len(conflicts) == 1  # same id and rev, other content: a conflict, never one silently kept


def test_an_error_in_a_later_file_names_that_file():
    good = csv_write.write_csv([record.check_record(rec())])
    bad = edit(good, 2, "rev", "two")
    with pytest.raises(InputError) as exc:
        csv_read.read_files([good, good, bad])
    assert exc.value.field == "files[2].row[2].rev"
    with pytest.raises(InputError) as exc:
        csv_read.read_files([good, bad], ["phone-a.csv", "phone-b.csv"])
    assert exc.value.field == "phone-b.csv.row[2].rev"
