"""The calc columns of the CSV exchange (tamis.exchange.summaries) against the JSON boundary.

The summaries call the core directly (tamis.project.evaluate.evaluate_reduced, with
each band parsed and each base soil reduced once per file). They must say
exactly what the app's path says: the ``evaluate`` and ``gradation`` ops
through ``tamis.api.handle``. :func:`json_summary` below is that path, written
as the calc columns were computed before the direct call (one request per
record); every comparison is on the JSON text of the summaries and of their
cells, so 1 and 1.0, or 0.0 and -0.0, would differ too.

No published source is involved: these tests compare two routes through the
same core, and the demo and generated records are invented data.
"""

from __future__ import annotations

import copy
import json
import random
import subprocess
import sys

import pytest

from tamis import api, demo
from tamis.lab import reduction
from tamis.exchange import summaries as S
from tamis.exchange import csv_write, record, wording
from test_records_gen import make_records


def json_summary(rec: dict, index: dict) -> dict:
    """A record's summary through ``tamis.api.handle`` (the reference path)."""
    def call(op, fields):
        return json.loads(api.handle(json.dumps({"schema": api.SCHEMA, "op": op, "id": None, **fields})))

    out = {"d_mm": None, "cu": None, "fines_pct": None, "verdict": None, "failing_checks": [],
           "reasons": [], "advisory": [], "passing": [], "band_name": None, "base_name": None,
           "note": None, "core_version": None}
    test = rec["test"]
    if rec["kind"] in ("band", "lot"):  # a lot has no gradation of its own
        return out
    if rec["deleted"]:
        out["note"] = "deleted record: not computed"
        return out
    if test is None:
        out["note"] = "no test data yet"
        return out
    fields, missing = {"sample": test}, []
    if rec["kind"] == "test":
        meta = rec["meta"]
        for key, kind, field, part in (("band_id", "band", "band", "band"), ("base_id", "base", "base", "test")):
            ref = meta.get(key)
            if ref is None:
                continue
            other = index.get(ref) if isinstance(ref, str) else None
            if other is None or other["kind"] != kind or other["deleted"] or other[part] is None:
                missing.append(f"meta.{key} names {ref}, which is not a {kind} record with data in this file")
            else:
                fields[field] = other[part]
                out[f"{kind}_name"] = S.record_label(other)
        if isinstance(meta.get("rules"), dict):
            fields["rules"] = meta["rules"]
    if rec["kind"] == "base" or missing:
        resp = call("gradation", {"test": test})
        grad = resp.get("result") if resp.get("ok") else None
    else:
        resp = call("evaluate", fields)
        res = resp.get("result") if resp.get("ok") else None
        grad = res.get("sample") if res else None
        if res:
            out["verdict"] = res.get("verdict")
            checks = res.get("checks", [])
            out["failing_checks"] = sorted({c.get("id") for c in checks
                                            if c.get("status") == "fail" and not c.get("advisory")})
            out["reasons"] = wording.verdict_reasons(res.get("verdict"), checks)
            out["advisory"] = wording.advisory_lines(checks)
    if not resp.get("ok"):
        err = resp.get("error", {})
        out["note"] = f"not computed: {err.get('field') or 'test'}: {err.get('message')}"
        return out
    out["core_version"] = resp.get("core_version")
    if isinstance(grad, dict):
        out["passing"] = [(p["opening_mm"], p["passing_pct"]) for p in grad.get("points") or ()
                          if p.get("passing_pct") is not None]
        d = grad.get("d_mm") or {}
        out["d_mm"] = {k: d.get(k) for k in ("D10", "D15", "D60", "D85")}
        out["cu"] = grad.get("cu")
        out["fines_pct"] = grad.get("fines_pct")
    if missing:
        out["note"] = "no verdict: " + "; ".join(missing)
    return out


def text(obj) -> str:
    return json.dumps(obj, allow_nan=False, sort_keys=False)


def assert_same_as_json_path(recs: list[dict], context=()) -> dict:
    """Summary by summary, then cell by cell, the direct path equals the JSON path."""
    index = {r["record_id"]: r for r in context}
    index.update({r["record_id"]: r for r in recs})
    parts = S.FileParts(index)
    for r in recs:
        ref = text(json_summary(r, index))
        assert text(S.compute_summary(r, index)) == ref, r["record_id"]
        assert text(S.compute_summary(r, index, parts)) == ref, r["record_id"]
    cells = S.summaries_for(recs, context)
    want = {r["record_id"]: S.summary_cells(json_summary(r, index)) for r in recs if r["kind"] != "band"}
    assert text(cells) == text(want)
    return cells


def _id(i: int) -> str:
    return f"{i:08x}-0000-4000-8000-000000000000"


def demo_records() -> list[dict]:
    return [record.check_record(r) for r in demo.load_records()]


def varied_records(n: int = 300, seed: int = 11) -> list[dict]:
    """Demo tests with varied masses, each naming one of: a good, bad, deleted, empty,
    absent or interpolated-only band; a good, refused, deleted, empty or absent base (or a record of
    the wrong kind); one of several rule sets (some refused). A few are deleted,
    have no test, are refused themselves, or are base soils."""
    rng = random.Random(seed)
    pool = demo_records()
    bands = [r for r in pool if r["kind"] == "band"]
    bases = [r for r in pool if r["kind"] == "base"]
    tests = [r for r in pool if r["kind"] == "test"]
    refs = list(pool)

    def variant(src, i, **changes):
        r = copy.deepcopy(src)
        r["record_id"] = _id(i)
        r.update(changes)
        refs.append(record.check_record(r))
        return r["record_id"]

    bad_band = copy.deepcopy(bands[0]["band"])
    bad_band["limits"][2]["max_pct"] = 50.0          # below its min_pct (65): band_inverted
    bad_base = copy.deepcopy(bases[0]["test"])
    bad_base["passing"][3]["passing_pct"] = 101.0     # more than 100 % passing
    ids = {
        "bad_band": variant(bands[0], 1, band=bad_band),
        "deleted_band": variant(bands[1], 2, deleted=True),
        "empty_band": variant(bands[0], 3, band=None),
        "bad_base": variant(bases[0], 4, test=bad_base),
        "deleted_base": variant(bases[1], 5, deleted=True),
        "empty_base": variant(bases[2], 6, test=None),
        # one sieve the demo stacks lack: read by interpolation, so at best a warning (review)
        "interp_band": variant(bands[0], 7, band={"name": "wide", "limits": [
            {"opening_mm": 0.425, "min_pct": 0.0, "max_pct": 100.0}]}),
    }
    band_choices = [None] + [b["record_id"] for b in bands] * 3 + [ids["interp_band"]] * 3 + [
        ids["bad_band"], ids["deleted_band"], ids["empty_band"], _id(999), bases[0]["record_id"], 17]
    base_choices = [None] + [b["record_id"] for b in bases] * 2 + [
        ids["bad_base"], ids["deleted_base"], ids["empty_base"], _id(998), bands[0]["record_id"],
        tests[0]["record_id"]]
    rule_choices = [None, {}, {"criteria": "nrcs-1994", "stability": False}, {"criteria": "terzaghi"},
                    {"criteria": "usbr-2011"}, {"criteria": "fema-2011", "stability_in_verdict": True},
                    {"kenney_lau_boundary": 1.3}, {"regrade": False}, {"hazen_c": 120.0},
                    {"not_a_rule": 1}, {"kenney_lau_boundary": 2.0}, {"criteria": "nope"}, "not an object"]
    out = []
    for i in range(n):
        t = copy.deepcopy(rng.choice(tests))
        t["record_id"] = _id(1000 + i)
        for s in (t["test"] or {}).get("sieves", []):
            s["retained_g"] = s["retained_g"] * (1 + rng.uniform(-0.03, 0.03))
        meta = t["meta"]
        for key, choices in (("band_id", band_choices), ("base_id", base_choices), ("rules", rule_choices)):
            v = rng.choice(choices)
            if v is None:
                meta.pop(key, None)
            else:
                meta[key] = copy.deepcopy(v)
        roll = rng.random()
        if roll < 0.03:
            t["deleted"] = True
        elif roll < 0.06:
            t["test"] = None
        elif roll < 0.10:
            t["test"]["sieves"][1]["retained_g"] = -4.0    # refused: negative mass
        elif roll < 0.13:
            t["kind"] = "base"
        out.append(record.check_record(t))
    return refs + out


def test_demo_records_give_the_json_paths_summaries():
    recs = demo_records()
    cells = assert_same_as_json_path(recs)
    assert sum(1 for c in cells.values() if "calc_verdict" in c) == 20     # every demo test gets a verdict


def test_varied_records_give_the_json_paths_summaries():
    recs = varied_records()
    cells = assert_same_as_json_path(recs)
    notes = [c.get("calc_note", "") for c in cells.values()]
    # the variety is really there: verdicts, refusals of each kind, missing references
    verdicts = {c.get("calc_verdict") for c in cells.values()}
    assert {"accept", "reject", "review"} <= verdicts
    for part in ("not computed: band.limits[2].min_pct:", "not computed: base.passing[3].passing_pct:",
                 "not computed: rules.not_a_rule:", "not computed: rules.kenney_lau_boundary:",
                 "not computed: rules.criteria:", "not computed: sample.sieves[1].retained_g:",
                 "not computed: test.sieves[1].retained_g:", "no verdict: meta.band_id names",
                 "no verdict: meta.base_id names", "deleted record: not computed", "no test data yet"):
        assert any(n.startswith(part) for n in notes), part


def test_generated_records_give_the_json_paths_summaries():
    """The codec's invented records: mostly odd or refused tests, references between them."""
    recs = [record.check_record(r) for r in make_records(300, seed=4)]
    assert_same_as_json_path(recs[150:], context=recs[:150])


def test_a_refused_base_gives_its_note_on_every_test_naming_it():
    recs = varied_records(200)
    index = {r["record_id"]: r for r in recs}
    bad = _id(4)
    naming = [r for r in recs if r["kind"] == "test" and r["meta"].get("base_id") == bad and not r["deleted"]
              and r["test"] is not None and r["meta"].get("band_id") in (None, recs[0]["record_id"],
                                                                         recs[1]["record_id"], _id(1), _id(7))]
    assert len(naming) >= 3
    cells = S.summaries_for(recs)
    want = "not computed: base.passing[3].passing_pct: "
    for r in naming:
        note = cells[r["record_id"]].get("calc_note", "")
        if note.startswith("not computed: sample."):      # the sample's own refusal comes first
            continue
        assert note.startswith(want), note
        assert note == S.summary_cells(json_summary(r, index))["calc_note"]
        assert "calc_verdict" not in cells[r["record_id"]] and "calc_d10_mm" not in cells[r["record_id"]]


def test_nothing_is_modified_records_nor_shared_parts():
    recs = varied_records(200)
    before = copy.deepcopy(recs)
    index = {r["record_id"]: r for r in recs}
    parts = S.FileParts(index)
    first = [S.compute_summary(r, index, parts) for r in recs]
    shared = copy.deepcopy((parts._bases, parts._bands))
    again = [S.compute_summary(r, index, parts) for r in reversed(recs)][::-1]
    assert text(first) == text(again)
    assert recs == before
    for (a, b) in zip(shared, (parts._bases, parts._bands)):        # the cached reductions are unchanged
        assert a.keys() == b.keys()
        for k in a:
            (x, nx), (y, ny) = a[k], b[k]
            assert nx == ny
            if x is not None and hasattr(x, "gradation"):
                assert (x.gradation, x.checks, x.findings, x.props) == (y.gradation, y.checks, y.findings, y.props)
            else:
                assert x == y


def test_parts_of_another_index_are_refused():
    recs = demo_records()
    index = {r["record_id"]: r for r in recs}
    with pytest.raises(ValueError):
        S.compute_summary(recs[10], dict(index), S.FileParts(index))


def test_an_unexpected_error_gives_the_internal_error_note_of_the_api(monkeypatch):
    """A defect in the core (here: one made to raise) never stops the calc columns;
    the note is the one the JSON boundary gives, for a test and for a base soil."""
    recs = demo_records()
    index = {r["record_id"]: r for r in recs}
    real = reduction.parse_test
    base_id = recs[9]["meta"]["base_id"]
    marker = index[base_id]["test"]["passing"][0]["opening_mm"]

    def broken(test_obj, path):
        if path == "base" and test_obj.get("passing", [{}])[0].get("opening_mm") == marker:
            raise ZeroDivisionError("made to fail")
        return real(test_obj, path)

    monkeypatch.setattr(reduction, "parse_test", broken)
    cells = assert_same_as_json_path(recs)
    want = ("not computed: test: tamis could not compute this request (ZeroDivisionError: made to fail). "
            "Please report it with the input.")
    named = [r for r in recs if r["kind"] == "test" and r["meta"].get("base_id") == base_id]
    assert named and all(cells[r["record_id"]]["calc_note"] == want for r in named)
    others = [r for r in recs if r["kind"] == "test" and r["meta"].get("base_id") != base_id]
    assert others and all("calc_verdict" in cells[r["record_id"]] for r in others)


def test_no_nan_or_infinity_reaches_a_summary(monkeypatch):
    """The JSON boundary writes null for a non-finite number; so do the summaries."""
    recs = demo_records()
    real = reduction.gradation_of

    def with_nan(curve, props, path="test.sieves", **kw):
        g, f = real(curve, props, path, **kw)
        return {**g, "cu": float("nan"), "d_mm": {**g["d_mm"], "D10": float("inf")}}, f

    monkeypatch.setattr(reduction, "gradation_of", with_nan)
    cells = assert_same_as_json_path(recs)
    index = {r["record_id"]: r for r in recs}
    s = S.compute_summary(recs[9], index)
    assert s["cu"] is None and s["d_mm"]["D10"] is None and s["d_mm"]["D60"] is not None
    assert all("calc_cu" not in c and "calc_d10_mm" not in c for c in cells.values())


def test_progress_counts_up_to_the_total():
    recs = varied_records(250)
    calls = []
    cells = S.summaries_for(recs, progress=lambda done, total: calls.append((done, total)))
    total = sum(1 for r in recs if r["kind"] != "band")
    assert len(cells) == total
    assert len(calls) >= 2 and all(t == total for _, t in calls)
    dones = [d for d, _ in calls]
    assert dones == sorted(set(dones)) and dones[-1] == total and dones[0] > 0
    assert all(b - a <= S.PROGRESS_STEP for a, b in zip([0] + dones, dones))
    calls.clear()
    assert S.summaries_for([], progress=lambda d, t: calls.append((d, t))) == {} and calls == [(0, 0)]


def test_progress_lines_are_rate_limited_and_end_with_the_total():
    from tamis.exchange.office import Progress

    class Out:
        def __init__(self):
            self.text = ""

        def write(self, s):
            self.text += s

        def flush(self):
            pass

    now = [0.0]
    out = Out()
    p = Progress("calc columns", "records", stream=out, clock=lambda: now[0])
    for done in range(1, 12_001):
        now[0] = done * 0.001            # 1 ms per record: 12 s in all
        p(done, 12_000)
    lines = out.text.splitlines()
    assert lines[-1] == "calc columns: 12,000 of 12,000 records (100 %)"
    assert lines[0] == "calc columns: 2,000 of 12,000 records (16 %)"
    assert len(lines) == 6                 # at 2, 4, 6, 8 and 10 s, and the last one (12 s)
    small = Out()
    q = Progress("report", "tests", stream=small, clock=lambda: now[0])
    for done in range(1, 2001):
        now[0] += 10.0
        q(done, 2000)
    assert small.text == ""                # 2,000 records or fewer: silent


def many_tests_csv(tmp_path, n: int = 2_100):
    pool = demo_records()
    refs = [r for r in pool if r["kind"] != "test"]
    tests = [r for r in pool if r["kind"] == "test"]
    recs = []
    for i in range(n):
        t = copy.deepcopy(tests[i % len(tests)])
        t["record_id"] = _id(10_000 + i)
        recs.append(t)
    path = tmp_path / "many.csv"
    path.write_bytes(csv_write.write_csv(refs + recs).encode("utf-8"))
    return path, len(refs) + n


def test_cli_prints_progress_on_stderr_only(tmp_path):
    path, n = many_tests_csv(tmp_path)
    run = lambda *a: subprocess.run([sys.executable, "-m", "tamis", *map(str, a)],  # noqa: E731
                                    capture_output=True, text=True, timeout=300, cwd=tmp_path)
    p = run("report", "--json", path)
    assert p.returncode == 0, p.stderr
    doc = json.loads(p.stdout)                              # stdout is clean JSON
    assert doc["summary"]["tests"] == 2_100
    assert "report: 2,100 of 2,100 tests (100 %)" in p.stderr.splitlines()
    p = run("merge", path, "-o", tmp_path / "out.csv")
    assert p.returncode == 0, p.stderr
    assert p.stdout == ""
    computed = n - 2                                        # the two bands have no calc columns
    assert f"calc columns: {computed:,} of {computed:,} records (100 %)" in p.stderr.splitlines()
    p = subprocess.run([sys.executable, "-m", "tamis", "merge", str(path), "-o", "-"], capture_output=True,
                       timeout=300, cwd=tmp_path)
    assert p.stdout == (tmp_path / "out.csv").read_bytes()    # the CSV, and nothing else, on stdout
    assert f"calc columns: {computed:,} of {computed:,} records (100 %)" in p.stderr.decode().splitlines()
    p = run("merge", path, "-o", tmp_path / "plain.csv", "--no-calc")
    assert "calc columns" not in p.stderr
