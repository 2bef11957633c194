"""Merge N invented records spread over F CSV files, on one core (printed, never asserted).

    python bench/bench_merge.py [--n 100000] [--files 50] [--calc-n 2000]

Each record is in one to three files; a fifth of the copies are older
revisions of the same record, so the merge has real work to do. The files are
written without calc columns (a reader ignores them anyway). Timed phases:

1. read: decode, parse and validate every file (tamis.records.read_csv);
2. merge: by id and revision (tamis.records.merge_all);
3. write: the merged CSV without calc columns (tamis.records.write_csv);
4. calc: recomputing the calc columns (evaluate/gradation through
   tamis.api.handle) for ``--calc-n`` realistic tests derived from the demo
   project, printed as a rate; ``python -m tamis merge`` does this for every
   record unless ``--no-calc`` is given.
"""

from __future__ import annotations

import argparse
import copy
import pathlib
import random
import sys
import time

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "pycore"))
sys.path.insert(0, str(HERE.parent / "tests"))

from tamis import demo, records as R  # noqa: E402
from test_records_gen import make_records  # noqa: E402


def older(rec: dict) -> dict:
    """The previous revision of ``rec`` as another device still holds it."""
    old = copy.deepcopy(rec)
    old["rev"] = rec["rev"] - 1
    old["history"] = [h for h in rec["history"] if h["rev"] <= old["rev"]]
    head = old["history"][-1]
    old["updated_at"], old["updated_by"] = head["at"], head["by"]
    return old


def build_files(n: int, n_files: int, seed: int = 5) -> list[str]:
    rng = random.Random(seed)
    recs = [R.check_record(r) for r in make_records(n, seed=seed)]
    files: list[list[dict]] = [[] for _ in range(n_files)]
    for r in recs:
        copies = rng.choice((1, 1, 2, 3))
        for i, f in enumerate(rng.sample(range(n_files), copies)):
            v = r
            if i > 0 and r["rev"] > 1 and len(r["history"]) == r["rev"] and rng.random() < 0.6:
                v = older(r)
            files[f].append(v)
    return [R.write_csv(f) for f in files]


def realistic_tests(n: int, seed: int = 9) -> list[dict]:
    """Demo deliveries with their masses varied by up to 2 %, plus the demo bands and bases."""
    rng = random.Random(seed)
    pool = [R.check_record(r) for r in demo.load_records()]
    refs = [r for r in pool if r["kind"] != "test"]
    tests = [r for r in pool if r["kind"] == "test"]
    out = []
    for i in range(n):
        t = copy.deepcopy(rng.choice(tests))
        t["record_id"] = f"{i:08x}-0000-4000-8000-{rng.getrandbits(48):012x}"
        for s in (t["test"] or {}).get("sieves", []):
            s["retained_g"] = s["retained_g"] * (1 + rng.uniform(-0.02, 0.02))
        out.append(t)
    return out + refs


def timed(fn):
    """``(fn(), wall seconds, cpu seconds of this process)``."""
    w0, c0 = time.perf_counter(), time.process_time()
    out = fn()
    return out, time.perf_counter() - w0, time.process_time() - c0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=100_000, help="records (default 100000)")
    ap.add_argument("--files", type=int, default=50, help="files (default 50)")
    ap.add_argument("--calc-n", type=int, default=2000, help="tests whose calc columns are recomputed")
    args = ap.parse_args(argv)

    t0 = time.perf_counter()
    texts = build_files(args.n, args.files)
    rows = sum(t.count("\r\n") - 1 for t in texts)  # an upper bound: quoted line breaks count too
    mb = sum(len(t.encode("utf-8")) for t in texts) / 1e6
    print(f"setup: {args.files} files, {mb:.1f} MB, built in {time.perf_counter() - t0:.1f} s", flush=True)

    lists, w_read, c_read = timed(lambda: [R.read_csv(t, f"files[{i}]")[0] for i, t in enumerate(texts)])
    n_rows = sum(len(x) for x in lists)
    (merged, conflicts), w_merge, c_merge = timed(lambda: R.merge_all(lists))
    out, w_write, c_write = timed(lambda: R.write_csv(merged))
    wall, cpu = w_read + w_merge + w_write, c_read + c_merge + c_write
    print(f"read+validate: {w_read:.2f} s wall, {c_read:.2f} s cpu ({n_rows} rows, {n_rows / w_read:,.0f} rows/s; "
          f"{rows} lines)", flush=True)
    print(f"merge: {w_merge:.2f} s wall, {c_merge:.2f} s cpu ({len(merged)} records, {len(conflicts)} conflicts)",
          flush=True)
    print(f"write: {w_write:.2f} s wall, {c_write:.2f} s cpu ({len(out.encode('utf-8')) / 1e6:.1f} MB)", flush=True)
    print(f"merge of {len(merged)} records from {args.files} files, calc columns left blank: {wall:.2f} s wall "
          f"({len(merged) / wall:,.0f} records/s), {cpu:.2f} s cpu ({len(merged) / cpu:,.0f} records/s)", flush=True)

    if args.calc_n > 0:
        sample = realistic_tests(args.calc_n)
        sums, t_calc, _ = timed(lambda: R.summaries_for(sample))
        verdicts = sum(1 for s in sums.values() if s.get("calc_verdict"))
        print(f"calc columns: {len(sums)} records in {t_calc:.2f} s ({len(sums) / t_calc:,.0f} records/s, "
              f"{verdicts} verdicts); for {len(merged)} records about {len(merged) * t_calc / len(sums):.0f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
