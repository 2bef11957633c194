"""The office commands end to end: python -m tamis merge|report|check.

Exit status: 0 done; 1 conflicts remain (merge) or a stored verdict differs
(report); 2 a file cannot be read (the message names file, row and column).
The verdicts the report prints are checked against the ``evaluate`` op called
directly through tamis.api.handle, the function the app calls.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

from tamis import api, demo
from tamis.exchange import office
from tamis.exchange import summaries as S
from tamis.exchange import csv_read, csv_write, ops, record
from test_records import UID, parse_rfc4180, rec
from test_records_gen import demo_variants
from test_records_merge import V1, V2, V3, V3_FORK, csv_of


def run(*args, cwd):
    return subprocess.run([sys.executable, "-m", "tamis", *map(str, args)], capture_output=True, text=True,
                          timeout=120, cwd=cwd)


def write(path, text: str, encoding="utf-8"):
    path.write_bytes(text.encode(encoding))
    return path


def demo_files(tmp_path):
    recs = [record.check_record(r) for r in demo.load_records()]
    a = write(tmp_path / "phone-a.csv", ops.export_csv(recs[:18]))
    b = write(tmp_path / "phone-b.csv", ops.export_csv(recs[9:]))
    return recs, a, b


def test_check_valid_file(tmp_path):
    recs, a, _ = demo_files(tmp_path)
    p = run("check", a, cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    assert "18 records" in p.stdout
    assert sorted(x.name for x in tmp_path.iterdir()) == ["phone-a.csv", "phone-b.csv"]  # wrote nothing


def test_check_bad_file_names_file_row_and_column(tmp_path):
    recs, a, _ = demo_files(tmp_path)
    text = a.read_text(encoding="utf-8")
    rows = parse_rfc4180(text)
    rows[5][rows[0].index("rev")] = "2.0"
    bad = write(tmp_path / "bad.csv", "\r\n".join(",".join(csv_write.quote(c) for c in r) for r in rows) + "\r\n")
    p = run("check", bad, cwd=tmp_path)
    assert p.returncode == 2
    assert f"{bad}: Row 6, column rev" in p.stderr and "Traceback" not in p.stderr


def test_check_wrong_encoding_and_missing_file(tmp_path):
    latin = write(tmp_path / "latin.csv", csv_of(record.check_record(rec(meta={"notes": "séché"}))), "latin-1")
    p = run("check", latin, cwd=tmp_path)
    assert p.returncode == 2 and "Row 2" in p.stderr and "UTF-8" in p.stderr
    p = run("check", tmp_path / "nope.csv", cwd=tmp_path)
    assert p.returncode == 2 and "nope.csv" in p.stderr and "Traceback" not in p.stderr


def test_merge_is_deterministic_and_matches_the_op(tmp_path):
    recs, a, b = demo_files(tmp_path)
    p1 = run("merge", a, b, "-o", tmp_path / "ab.csv", cwd=tmp_path)
    p2 = run("merge", b, a, "-o", tmp_path / "ba.csv", cwd=tmp_path)
    assert p1.returncode == 0 and p2.returncode == 0, p1.stderr
    ab = (tmp_path / "ab.csv").read_bytes()
    assert ab == (tmp_path / "ba.csv").read_bytes()
    op = json.loads(api.handle(json.dumps({"schema": 1, "op": "records_merge", "id": None,
                                           "files": [a.read_text(encoding="utf-8"),
                                                     b.read_text(encoding="utf-8")]})))
    assert op["ok"] and ab == op["result"]["csv"].encode("utf-8")
    # The app's export of the same records gives the same bytes as the office merge.
    app = json.loads(api.handle(json.dumps({"schema": 1, "op": "records_export_csv", "id": None,
                                            "records": demo.load_records()})))
    assert ab == app["result"]["csv"].encode("utf-8")
    back, _ = csv_read.read_csv(ab.decode("utf-8"))
    assert len(back) == len(recs)
    p = subprocess.run([sys.executable, "-m", "tamis", "merge", str(a), str(b), "-o", "-", "--bom"],
                       capture_output=True, timeout=120, cwd=tmp_path)  # bytes: CRLF kept as written
    assert p.returncode == 0 and p.stdout == b"\xef\xbb\xbf" + ab


def test_merge_without_calc_columns_holds_the_same_records(tmp_path):
    recs, a, b = demo_files(tmp_path)
    assert run("merge", a, b, "-o", tmp_path / "calc.csv", cwd=tmp_path).returncode == 0
    assert run("merge", a, b, "-o", tmp_path / "raw.csv", "--no-calc", cwd=tmp_path).returncode == 0
    with_calc, rows = csv_read.read_csv((tmp_path / "calc.csv").read_text(encoding="utf-8"))
    without, rows2 = csv_read.read_csv((tmp_path / "raw.csv").read_text(encoding="utf-8"))
    assert with_calc == without
    assert any(r["calc"] for r in rows) and not any(r["calc"] for r in rows2)


def test_merge_with_conflicts_exits_1_and_writes_both_versions(tmp_path):
    f1 = write(tmp_path / "1.csv", csv_of(V3))
    f2 = write(tmp_path / "2.csv", csv_of(V3_FORK))
    p = run("merge", f1, f2, "-o", tmp_path / "out.csv", "--conflicts", tmp_path / "conflicts.json", cwd=tmp_path)
    assert p.returncode == 1
    assert "1 conflict(s) remain" in p.stderr and UID in p.stderr
    report = json.loads((tmp_path / "conflicts.json").read_text(encoding="utf-8"))
    (c,) = report["conflicts"]
    assert {c["local"]["updated_by"], c["incoming"]["updated_by"]} == {"EF", "CD"}
    assert (tmp_path / "out.csv").exists()


def test_merge_newer_revisions_exit_0(tmp_path):
    files = [write(tmp_path / f"{i}.csv", csv_of(v)) for i, v in enumerate((V1, V2, V3))]
    p = run("merge", *files, "-o", tmp_path / "out.csv", cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    (got,), _ = csv_read.read_csv((tmp_path / "out.csv").read_text(encoding="utf-8"))
    assert got["rev"] == 3 and got["history"] == V3["history"]


def test_merge_bad_file_exits_2_without_writing(tmp_path):
    good = write(tmp_path / "good.csv", csv_of(V1))
    bad = write(tmp_path / "bad.csv", "tamis_csv,record_id\r\n1,x\r\n")
    p = run("merge", good, bad, "-o", tmp_path / "out.csv", cwd=tmp_path)
    assert p.returncode == 2 and "bad.csv: Row 1" in p.stderr
    assert not (tmp_path / "out.csv").exists()


def test_report_recomputes_every_verdict(tmp_path):
    recs, a, b = demo_files(tmp_path)
    merged = write(tmp_path / "all.csv", ops.export_csv(recs))
    p = run("report", merged, "--json", cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    out = json.loads(p.stdout)
    index = {r["record_id"]: r for r in recs}
    tests = [r for r in recs if r["kind"] == "test" and not r["deleted"]]
    assert out["summary"]["tests"] == len(tests) == len(out["tests"])
    for line in out["tests"]:
        r = index[line["record_id"]]
        fields = {"sample": r["test"]}
        if r["meta"].get("band_id"):
            fields["band"] = index[r["meta"]["band_id"]]["band"]
        if r["meta"].get("base_id"):
            fields["base"] = index[r["meta"]["base_id"]]["test"]
        if r["meta"].get("rules"):
            fields["rules"] = r["meta"]["rules"]
        ev = json.loads(api.handle(json.dumps({"schema": 1, "op": "evaluate", "id": 0, **fields})))
        assert line["verdict"] == ev["result"]["verdict"], line
        assert line["stored_verdict"] == line["verdict"] and line["differs"] is False
    assert out["summary"]["differs"] == 0 and "engineer of record" in out["notice"]
    table = run("report", merged, cwd=tmp_path)
    assert table.returncode == 0 and "D15 mm" in table.stdout and "stored verdict(s) differ" in table.stdout


def test_report_flags_a_stored_verdict_that_differs(tmp_path):
    recs = [record.check_record(r) for r in demo.load_records()]
    text = ops.export_csv(recs)
    rows = parse_rfc4180(text)
    col = rows[0].index("calc_verdict")
    target = next(i for i, r in enumerate(rows) if r[col] == "reject")
    rows[target][col] = "accept"  # someone "fixed" the verdict in a spreadsheet
    forged = write(tmp_path / "forged.csv", "\r\n".join(",".join(csv_write.quote(c) for c in r) for r in rows) + "\r\n")
    p = run("report", forged, "--json", cwd=tmp_path)
    assert p.returncode == 1
    out = json.loads(p.stdout)
    flagged = [t for t in out["tests"] if t["differs"]]
    assert len(flagged) == 1 and flagged[0]["row"] == target + 1
    assert flagged[0]["stored_verdict"] == "accept" and flagged[0]["verdict"] == "reject"
    p = run("report", forged, cwd=tmp_path)
    assert p.returncode == 1 and "DIFFERS" in p.stdout


def test_merge_of_many_files_reads_copies_once_and_shows_its_reading_on_stderr(tmp_path):
    # twelve devices holding overlapping slices of the demo project: every record in several files,
    # some with calc columns and some without (a reader never takes them as data)
    recs = [record.check_record(r) for r in demo.load_records()]
    paths = []
    for i in range(12):
        part = recs[i % 5::2]
        text = ops.export_csv(part) if i % 2 else csv_write.write_csv(part)
        paths.append(write(tmp_path / f"device-{i:02d}.csv", text))
    p = run("merge", *paths, "-o", "-", "--no-calc", cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    assert p.stdout == csv_write.write_csv(recs).replace("\r\n", "\n")  # text mode reads CRLF as LF
    assert "read: 12 of 12 files (100 %)" in p.stderr
    few = run("merge", *paths[:3], "-o", "-", "--no-calc", cwd=tmp_path)
    assert few.returncode == 0 and "read:" not in few.stderr


def varied_tests(n: int, seed: int = 31):
    """Tests made from the demo deliveries, masses varied by up to 5 %; every 97th without its band."""
    return demo_variants(n, seed, 0.05, missing_band_every=97)


def test_verdicts_recomputed_by_several_processes_are_those_of_one(tmp_path):
    refs, tests = varied_tests(office.PARALLEL_MIN + 300)
    path = write(tmp_path / "many.csv", csv_write.write_csv(refs + tests))
    one = run("merge", path, "-o", "-", "--jobs", "1", cwd=tmp_path)
    two = run("merge", path, "-o", "-", "--jobs", "2", cwd=tmp_path)
    assert one.returncode == two.returncode == 0, two.stderr
    assert one.stdout == two.stdout == ops.export_csv(refs + tests).replace("\r\n", "\n")  # the app's export
    rep1 = run("report", "--json", "--jobs", "1", path, cwd=tmp_path)
    rep3 = run("report", "--json", "--jobs", "3", path, cwd=tmp_path)
    a, b = json.loads(rep1.stdout), json.loads(rep3.stdout)
    assert a == b and a["summary"]["tests"] == len(tests)
    assert a["summary"]["accept"] > 0 and a["summary"]["reject"] > 0 and a["summary"]["no_verdict"] > 0


def test_parallel_summaries_come_from_other_processes_in_the_order_given(monkeypatch):
    refs, tests = varied_tests(office.PARALLEL_MIN + 50, seed=5)
    index = {r["record_id"]: r for r in refs + tests}
    real = S.compute_summaries
    want = real(tests, index)
    monkeypatch.setattr(S, "compute_summaries",
                        lambda todo, idx, progress=None: [dict(s, pid=os.getpid()) for s in real(todo, idx)])
    steps = []
    got = office.summaries_in_parallel(tests, index, 2, lambda done, total: steps.append((done, total)))
    pids = {s.pop("pid") for s in got}
    assert os.getpid() not in pids
    assert got == want
    assert steps[-1] == (len(tests), len(tests)) and [d for d, _ in steps] == sorted(d for d, _ in steps)
    few = office.summaries_in_parallel(tests[:10], index, 2)  # too few to be worth other processes
    assert {s.pop("pid") for s in few} == {os.getpid()}
