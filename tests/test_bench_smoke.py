"""The merge benchmark runs to the end on a small input, and the office command it times
writes the same bytes as the phases it reports (no timing is asserted: figures are printed)."""

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
