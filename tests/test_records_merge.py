"""Merging by record id and revision (records_import_csv, records_merge).

The rule under test (docs/records.md): a revision B is superseded by a
revision A when A has the higher rev and A's history holds B's head entry
(same rev, time and author); equal content is one revision; anything else is
a conflict, reported with both versions and never overwritten. The expected
outcomes below are worked out by hand from that rule for each case (no
outside source defines this merge; it is our own format).
"""

from __future__ import annotations

import copy
import itertools
import json
import random

from tamis import api
from tamis.exchange import csv_read, csv_write, merge, record
from test_records import UID, UID2, parse_rfc4180, rec

UID3 = "2d9a9e5a-3f4c-4ea0-9c73-4b5d6e7f8091"


def call(op, **fields):
    out = json.loads(api.handle(json.dumps({"schema": 1, "op": op, "id": 1, **fields})))
    assert out["ok"], out.get("error")
    return out["result"]


def entry(rev, at, by, summary="edit", changes=()):
    return {"rev": rev, "at": at, "by": by, "summary": summary, "changes": list(changes)}


def edited(prev: dict, at: str, by: str, mass: float, **kw) -> dict:
    """The next revision of ``prev``: rev + 1, one mass changed, a history entry added."""
    new = copy.deepcopy(prev)
    old = new["test"]["sieves"][1]["retained_g"]
    new["test"]["sieves"][1]["retained_g"] = mass
    new.update(rev=prev["rev"] + 1, updated_at=at, updated_by=by, **kw)
    new["history"] = prev["history"] + [entry(new["rev"], at, by, "mass corrected",
                                              [{"field": "test.sieves[1].retained_g", "old": old, "new": mass}])]
    return new


V1 = record.check_record(rec())
V2 = edited(V1, "2026-12-02T08:00:00Z", "AB", 12.6)          # the phone's edit of V1
V2_OTHER = edited(V1, "2026-12-02T10:00:00Z", "CD", 11.9)    # another device's edit of V1
V3 = edited(V2, "2026-12-03T08:00:00Z", "EF", 12.7)          # the office's edit of V2
V3_FORK = edited(V2_OTHER, "2026-12-03T09:00:00Z", "CD", 11.8)


def csv_of(*recs):
    return call("records_export_csv", records=list(recs))["csv"]


def import_(incoming, existing):
    return call("records_import_csv", csv=csv_of(*incoming), existing=list(existing))


def test_new_id_is_added():
    res = import_([V1], [])
    assert res["added"] == [UID] and res["records"] == [V1]


def test_newer_revision_made_from_ours_replaces_it_with_history_kept():
    res = import_([V2], [V1])
    assert res["updated"] == [UID] and not res["conflicts"]
    (got,) = res["records"]
    assert got["rev"] == 2 and got["test"]["sieves"][1]["retained_g"] == 12.6
    assert got["history"] == V2["history"] and len(got["history"]) == 2


def test_a_chain_of_revisions_is_recognised():
    res = import_([V3], [V1])
    assert res["updated"] == [UID] and res["records"][0]["rev"] == 3


def test_older_revision_does_not_replace_ours():
    res = import_([V1], [V2])
    assert res["unchanged"] == [UID] and res["records"] == [V2]


def test_same_revision_same_content_is_unchanged_whatever_exported_at():
    mine = dict(V2, exported_at="2026-12-02T09:00:00Z")
    res = import_([dict(V2, exported_at=None)], [mine])
    assert res["unchanged"] == [UID] and res["records"] == [mine]


def test_same_revision_different_content_is_a_conflict_and_ours_is_kept():
    res = import_([V2_OTHER], [V2])
    assert res["updated"] == [] and res["added"] == []
    (c,) = res["conflicts"]
    assert c["record_id"] == UID and c["local"] == V2 and c["incoming"] == V2_OTHER
    assert "rev 2" in c["reason"]
    assert res["records"] == [V2]


def test_both_changed_since_a_common_ancestor_is_a_conflict():
    res = import_([V3_FORK], [V2])
    (c,) = res["conflicts"]
    assert "common ancestor" in c["reason"]
    assert res["records"] == [V2]


def test_a_newer_revision_without_the_history_to_prove_it_is_a_conflict():
    bare = dict(V3, history=[])
    res = import_([bare], [V2])
    (c,) = res["conflicts"]
    assert "does not show" in c["reason"] and res["records"] == [V2]


def test_history_entries_are_united():
    note = entry(2, "2026-12-02T08:05:00Z", "QA", "reviewed")
    theirs = dict(V2, history=V2["history"] + [note])
    res = import_([theirs], [V2])
    assert res["updated"] == [UID]
    assert res["records"][0]["history"] == V2["history"] + [note]


def test_a_newer_tombstone_wins():
    gone = edited(V2, "2026-12-04T08:00:00Z", "AB", 12.6, deleted=True)
    res = import_([gone], [V2])
    assert res["updated"] == [UID] and res["records"][0]["deleted"] is True


def test_merge_keeps_every_record_once_and_reports_conflicts():
    band = record.check_record(rec(record_id=UID2, kind="band", test=None,
                              band={"name": "F1", "limits": [{"opening_mm": 9.5, "min_pct": 90.0,
                                                              "max_pct": 100.0}]}))
    other = record.check_record(rec(record_id=UID3, meta={"sample_id": "S-3"}))
    res = call("records_merge", files=[csv_of(V1, band), csv_of(V2, other), csv_of(V3), csv_of(band)])
    got = call("records_import_csv", csv=res["csv"], existing=[])["records"]
    assert res["count"] == 3 and res["conflicts"] == []
    assert sorted(r["record_id"] for r in got) == sorted([UID, UID2, UID3])
    mine = next(r for r in got if r["record_id"] == UID)
    assert mine["rev"] == 3 and mine["history"] == V3["history"]


def test_merge_with_a_conflict_keeps_the_highest_and_lists_the_other():
    res = call("records_merge", files=[csv_of(V3), csv_of(V3_FORK)])
    (c,) = res["conflicts"]
    # Both are rev 3; V3_FORK was made later (09:00 > 08:00), so it is the version written.
    assert c["local"]["updated_by"] == "CD" and c["incoming"]["updated_by"] == "EF"
    written = call("records_import_csv", csv=res["csv"], existing=[])["records"][0]
    assert written == c["local"]


def test_merge_output_does_not_depend_on_file_order():
    band = record.check_record(rec(record_id=UID2, kind="band", test=None,
                              band={"name": "F1", "limits": [{"opening_mm": 9.5, "min_pct": 90.0,
                                                              "max_pct": 100.0}]}))
    files = [csv_of(V1, band), csv_of(V2), csv_of(V3_FORK), csv_of(V2_OTHER, dict(band, exported_at=None))]
    first = call("records_merge", files=files)
    assert first["conflicts"]  # V2 line and V2_OTHER line both lead somewhere: a real conflict
    for perm in itertools.permutations(files):
        assert call("records_merge", files=list(perm)) == first


def test_merge_order_independence_on_many_random_versions():
    from test_records_gen import make_records
    rng = random.Random(77)
    base = [record.check_record(r) for r in make_records(60, seed=21) if r["kind"] == "test" and r["test"]
            and "sieves" in r["test"] and len(r["test"]["sieves"]) > 1 and csv_write._pairs_cells(r["test"]["sieves"],
                                                                                         "retained_g")
            is not None]
    versions = []
    for r in base:
        line = [r]
        for k in range(rng.randint(0, 3)):
            line.append(edited(line[-1], f"2027-01-0{k + 1}T08:00:00Z", rng.choice(("AB", "CD")),
                               float(rng.randint(1, 99))))
        if rng.random() < 0.3:
            line.append(edited(line[0], "2027-02-01T08:00:00Z", "ZZ", 1.5))  # a fork
        versions.append(line)
    files = [[] for _ in range(6)]
    for line in versions:
        for v, f in zip(line, rng.sample(range(6), len(line))):  # one version of an id per file
            files[f].append(v)
    texts = [csv_of(*f) if f else csv_of(base[0]) for f in files]
    ref = call("records_merge", files=texts)
    for _ in range(8):
        rng.shuffle(texts)
        assert call("records_merge", files=texts) == ref
    assert ref["count"] == len(base)
    assert ref["conflicts"], "the forks must give conflicts"
    assert len({c["record_id"] for c in ref["conflicts"]}) == len(ref["conflicts"])


def test_field_to_office_to_another_device():
    """A test typed on phone A, edited, exported; merged in the office with phone B's
    file; imported on device C: it arrives intact with its history, once, and the
    office report gives the verdict phone A showed."""
    from tamis.exchange import office
    band = record.check_record(rec(record_id=UID2, kind="band", test=None, updated_by="QA",
                              band={"name": "Filter F1 (invented)",
                                    "limits": [{"opening_mm": 9.5, "min_pct": 100.0, "max_pct": 100.0},
                                               {"opening_mm": 4.75, "min_pct": 0.0, "max_pct": 30.0}]}))
    phone_a = edited(record.check_record(rec(meta={"sample_id": "S-0001", "band_id": UID2})),
                     "2026-12-01T10:00:00Z", "AB", 12.6)
    shown_on_phone = call("evaluate", sample=phone_a["test"], band=band["band"])["verdict"]
    file_a = csv_of(phone_a, band)
    file_b = csv_of(record.check_record(rec(record_id=UID3, meta={"sample_id": "S-0002"})), band)
    office_file = call("records_merge", files=[file_b, file_a])
    assert office_file["conflicts"] == []
    device_c = call("records_import_csv", csv=office_file["csv"], existing=[])
    got = [r for r in device_c["records"] if r["record_id"] == UID]
    assert len(got) == 1 and got[0] == phone_a and len(got[0]["history"]) == 2
    assert len(device_c["records"]) == 3
    recs, rows = csv_read.read_csv(office_file["csv"])
    line = next(e for e in office.report_rows(recs, rows) if e["record_id"] == UID)
    assert line["verdict"] == shown_on_phone and line["stored_verdict"] == shown_on_phone
    assert not line["differs"]
    cells = dict(zip(*[r for r in parse_rfc4180(office_file["csv"]) if r[1] in ("record_id", UID)]))
    assert cells["calc_verdict"] == shown_on_phone


def test_a_resolved_conflict_supersedes_both_versions_everywhere():
    file_text = csv_of(V2_OTHER)
    res = call("records_import_csv", csv=file_text, existing=[V2], resolve={UID: "incoming"},
               at="2026-12-05T07:00:00Z", by="AB")
    assert res["conflicts"] == [] and res["resolved"] == [UID] and res["updated"] == [UID]
    (done,) = res["records"]
    assert done["rev"] == 3 and done["updated_at"] == "2026-12-05T07:00:00Z" and done["updated_by"] == "AB"
    assert done["test"] == V2_OTHER["test"]  # the content chosen
    marks = {(h["rev"], h["at"], h["by"]) for h in done["history"]}
    assert {(2, V2["updated_at"], "AB"), (2, V2_OTHER["updated_at"], "CD"),
            (3, "2026-12-05T07:00:00Z", "AB")} <= marks
    assert merge.descends(done, V2) and merge.descends(done, V2_OTHER)
    # The same file again: nothing to decide any more.
    again = call("records_import_csv", csv=file_text, existing=[done])
    assert again["conflicts"] == [] and again["unchanged"] == [UID]
    # In the office, the resolved revision wins over both old versions, in any order.
    for files in ([csv_of(V2), csv_of(V2_OTHER), csv_of(done)], [csv_of(done), csv_of(V2_OTHER), csv_of(V2)]):
        merged = call("records_merge", files=files)
        assert merged["conflicts"] == []
        assert call("records_import_csv", csv=merged["csv"], existing=[])["records"] == [done]


def test_resolve_needs_a_known_choice_and_an_author():
    for fields, where in (({"resolve": {UID: "mine"}, "at": "2026-12-05T07:00:00Z", "by": "AB"}, f"resolve.{UID}"),
                          ({"resolve": {UID: "local"}, "by": "AB"}, "at"),
                          ({"resolve": {UID: "local"}, "at": "2026-12-05T07:00:00Z"}, "by")):
        out = json.loads(api.handle(json.dumps({"schema": 1, "op": "records_import_csv", "id": 1,
                                                "csv": csv_of(V2_OTHER), "existing": [V2], **fields})))
        assert out["ok"] is False and out["error"]["field"] == where
