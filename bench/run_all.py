"""Run every benchmark in bench/ one after the other and print their figures.

Benchmarks print numbers; they never fail on timing. Each ``bench_*.py`` is
also runnable on its own (``.venv/bin/python bench/bench_api.py --help``).
"""

from __future__ import annotations

import pathlib
import subprocess
import sys
import time

HERE = pathlib.Path(__file__).resolve().parent


#: The benchmarks that take ``--baseline REV`` (measured beside that revision in the same run).
WITH_BASELINE = {"bench_evaluate.py", "bench_merge.py", "bench_records.py", "bench_typing.py", "bench_webapp.py"}


def main(argv: list[str]) -> int:
    """``run_all.py [--baseline REV] [NAME ...]``: the benchmarks whose file name contains a NAME (all by
    default); ``--baseline REV`` is passed to those that take it."""
    baseline = None
    if "--baseline" in argv:
        i = argv.index("--baseline")
        baseline = argv[i + 1]
        argv = argv[:i] + argv[i + 2:]
    scripts = sorted(HERE.glob("bench_*.py"))
    if argv:
        scripts = [s for s in scripts if any(a in s.name for a in argv)]
    failed = []
    for script in scripts:
        print(f"== {script.name}", flush=True)
        t0 = time.perf_counter()
        extra = ["--baseline", baseline] if baseline and script.name in WITH_BASELINE else []
        if extra and script.name == "bench_evaluate.py":
            # the baseline's answers differ from today's by design (issues 10-16); the working tree's answers
            # are held to the golden files and to the last commit's, byte for byte
            extra += ["--same-as", "HEAD"]
        rc = subprocess.call([sys.executable, str(script), *extra])
        print(f"== {script.name}: exit {rc}, {time.perf_counter() - t0:.1f} s wall\n", flush=True)
        if rc:
            failed.append(script.name)
    if failed:
        print("benchmarks that did not run to the end: " + ", ".join(failed))
        return 1
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
