"""The merge benchmark runs to the end on a small input, and the office command it times
writes the same bytes as the phases it reports; the evaluate benchmark's golden answers are compared with the
golden files (no timing is asserted: figures are printed)."""

from __future__ import annotations

import pathlib
import subprocess
import sys

from tamis import demo

BENCH = pathlib.Path(__file__).resolve().parent.parent / "bench" / "bench_merge.py"


def test_bench_merge_runs_and_the_office_command_writes_what_the_phases_write():
    p = subprocess.run([sys.executable, str(BENCH), "--n", "300", "--files", "4", "--calc-n", "20", "--cli"],
                       capture_output=True, text=True, timeout=300)
    assert p.returncode == 0, p.stdout + p.stderr
    assert "output identical to the write phase" in p.stdout, p.stdout
    assert "[now] merge of 300 records from 4 files" in p.stdout
    # base soils get calc cells, lots an empty set of them, bands none
    refs = sum(1 for r in demo.load_records() if r["kind"] in ("base", "lot"))
    assert f"[now] calc columns: {20 + refs} records" in p.stdout, p.stdout


def test_bench_evaluate_compares_the_golden_answers_with_the_golden_files(capsys):
    sys.path.insert(0, str(BENCH.parent))
    import bench_evaluate as be

    reqs, want = be.golden_requests("evaluate"), be.golden_responses("evaluate")
    assert len(reqs) == len(want) > 0
    assert be.compare("evaluate (golden)", reqs, {"now": be.api.handle}, 1, want)
    assert "now = golden files byte for byte" in capsys.readouterr().out
    stale = want[:-1] + [want[-1].replace('"ok":', '"ok" :', 1)]
    assert not be.compare("evaluate (golden)", reqs, {"now": be.api.handle}, 1, stale)
    assert "NOW DIFFERS FROM 1 GOLDEN FILES" in capsys.readouterr().out
