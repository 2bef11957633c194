"""Merge N invented records spread over F CSV files, on one core (printed, never asserted).

    python bench/bench_merge.py [--n 100000] [--files 50] [--calc-n 2000] [--cli] [--baseline REV]

Each record is in one to three files; a fifth of the copies are older
revisions of the same record, so the merge has real work to do. The files are
written without calc columns (a reader ignores them anyway). Timed phases:

1. read: decode, parse and validate every file (tamis.exchange.csv_read.read_files);
2. merge: by id and revision (tamis.exchange.merge.merge_all);
3. write: the merged CSV without calc columns (tamis.exchange.csv_write.write_csv);
4. calc: recomputing the calc columns (tamis.exchange.summaries.summaries_for: the
   code of the evaluate/gradation ops called directly, each band and base
   soil parsed once) for ``--calc-n`` realistic tests derived from the demo
   project, printed as a rate; ``python -m tamis merge`` does this for every
   record unless ``--no-calc`` is given.

Reading and merging run with the cyclic garbage collector paused and what
they built then frozen, as ``python -m tamis merge`` runs them (records are
trees; see ``tamis.exchange.record.acyclic_work``). ``--cli`` also runs
``python -m tamis merge --no-calc`` on the same files in a child process and
prints its wall and cpu time, start-up included, and whether it wrote the same
bytes as the write phase.

With ``--baseline REV`` the same phases are run, on the same files, by the
``pycore/tamis`` of that git revision as well (imported under another name,
see ``bench_evaluate.py``), alternating with the working tree ``--rounds``
times (fastest round kept), and the ratio baseline / now is printed per
phase. Both must give the same records, the same CSV text and the same calc
cells; the exit status is 1 only if they do not.
"""

from __future__ import annotations

import argparse
import contextlib
import copy
import gc
import importlib
import json
import os
import pathlib
import random
import resource
import subprocess
import sys
import tempfile
import time

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "pycore"))
sys.path.insert(0, str(HERE.parent / "tests"))

from test_records_gen import demo_variants, make_records  # noqa: E402
from bench_evaluate import load_baseline  # noqa: E402


def older(rec: dict) -> dict:
    """The previous revision of ``rec`` as another device still holds it."""
    old = copy.deepcopy(rec)
    old["rev"] = rec["rev"] - 1
    old["history"] = [h for h in rec["history"] if h["rev"] <= old["rev"]]
    head = old["history"][-1]
    old["updated_at"], old["updated_by"] = head["at"], head["by"]
    return old


def build_files(n: int, n_files: int, seed: int = 5, writer=None) -> list[str]:
    """``n`` invented records over ``n_files`` CSV texts, written by ``writer`` (a :class:`Codec`; default
    the working tree's). With a baseline the files are written by the baseline's writer: a newer reader
    reads older files unchanged, an older reader refuses columns added since, so both read the same bytes."""
    writer = writer or NOW
    rng = random.Random(seed)
    recs = [NOW.check_record(r) for r in make_records(n, seed=seed)]
    files: list[list[dict]] = [[] for _ in range(n_files)]
    for r in recs:
        copies = rng.choice((1, 1, 2, 3))
        for i, f in enumerate(rng.sample(range(n_files), copies)):
            v = r
            if i > 0 and r["rev"] > 1 and len(r["history"]) == r["rev"] and rng.random() < 0.6:
                v = older(r)
            files[f].append(v)
    return [writer.write_csv(f) for f in files]


def realistic_tests(n: int, seed: int = 9) -> list[dict]:
    """Demo deliveries with their masses varied by up to 2 %, plus the demo bands and bases."""
    refs, tests = demo_variants(n, seed, 0.02)
    return tests + refs


def timed(fn):
    """``(fn(), wall seconds, cpu seconds of this process)``."""
    w0, c0 = time.perf_counter(), time.process_time()
    out = fn()
    return out, time.perf_counter() - w0, time.process_time() - c0


class Codec:
    """The functions the phases call, from one version of the package ``pkg`` (the
    working tree's ``tamis`` or a baseline's copy): from ``exchange/`` when it has
    one, else from the single ``records`` module of older revisions (``summaries_for``
    from ``summaries`` when records has none)."""

    NAMES = ("check_record", "dump_json", "acyclic_work", "read_files", "read_csv", "merge_all", "write_csv",
             "summaries_for")

    def __init__(self, pkg: str):
        try:
            mods = [importlib.import_module(f"{pkg}.exchange.{m}")
                    for m in ("record", "csv_read", "csv_write", "merge", "summaries")]
        except ModuleNotFoundError:
            mods = [importlib.import_module(f"{pkg}.records")]
            with contextlib.suppress(ModuleNotFoundError):
                mods.append(importlib.import_module(f"{pkg}.summaries"))
        for name in self.NAMES + ("_acyclic_work",):
            for m in mods:
                if hasattr(m, name):
                    setattr(self, name, getattr(m, name))
                    break


NOW = Codec("tamis")


def run_phases(R, texts: list[str], sample: list[dict] | None) -> dict:
    """Each phase with ``R`` (a :class:`Codec`): ``{phase: (output, wall s, cpu s)}``."""
    out = {}
    # as ``python -m tamis merge`` runs them: the cyclic collector paused over reading and merging,
    # then what they built frozen (the same for a baseline, so the ratios compare the code)
    pause = getattr(R, "acyclic_work", None) or getattr(R, "_acyclic_work", None) or contextlib.nullcontext
    with pause():
        if hasattr(R, "read_files"):  # rows repeated across files read once, as the office merge does
            out["read"] = timed(lambda: R.read_files(texts))
        else:
            out["read"] = timed(lambda: [R.read_csv(t, f"files[{i}]")[0] for i, t in enumerate(texts)])
        out["merge"] = timed(lambda: R.merge_all(out["read"][0]))
        gc.freeze()
    try:
        out["write"] = timed(lambda: R.write_csv(out["merge"][0][0]))
        if sample is not None:
            out["calc"] = timed(lambda: R.summaries_for(sample))
    finally:
        gc.unfreeze()
    return out


def run_cli(texts: list[str], tmp: pathlib.Path, expected: str) -> None:
    """``python -m tamis merge`` on the files, in a child process: wall and cpu time, and
    whether it wrote what the phases above wrote."""
    paths = []
    for i, t in enumerate(texts):
        paths.append(tmp / f"device-{i:02d}.csv")
        paths[-1].write_bytes(t.encode("utf-8"))
    out = tmp / "merged.csv"
    env = dict(os.environ, PYTHONPATH=str(HERE.parent / "pycore"))
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    w0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "tamis", "merge", *map(str, paths), "-o", str(out), "--no-calc"],
                          env=env, capture_output=True, text=True)
    wall = time.perf_counter() - w0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    same = proc.returncode == 0 and out.read_bytes() == expected.encode("utf-8")
    print(f"[cli] python -m tamis merge of {len(texts)} files --no-calc: {wall:.2f} s wall, {cpu:.2f} s cpu "
          f"(start-up and file reading included; exit {proc.returncode}; output "
          f"{'identical to the write phase' if same else 'DIFFERS'})", flush=True)
    if not same:
        print(proc.stderr[-2000:], file=sys.stderr)


def fastest(runs: list[dict]) -> dict:
    """Per phase, the run with the least cpu time."""
    return {ph: min((r[ph] for r in runs), key=lambda t: t[2]) for ph in runs[0]}


def report(tag: str, res: dict, n_files: int, rows: int) -> None:
    (lists, w_read, c_read), ((merged, conflicts), w_merge, c_merge) = res["read"], res["merge"]
    out, w_write, c_write = res["write"]
    n_rows = sum(len(x) for x in lists)
    wall, cpu = w_read + w_merge + w_write, c_read + c_merge + c_write
    print(f"[{tag}] read+validate: {w_read:.2f} s wall, {c_read:.2f} s cpu ({n_rows} rows, "
          f"{n_rows / w_read:,.0f} rows/s; {rows} lines)", flush=True)
    print(f"[{tag}] merge: {w_merge:.2f} s wall, {c_merge:.2f} s cpu ({len(merged)} records, "
          f"{len(conflicts)} conflicts)", flush=True)
    print(f"[{tag}] write: {w_write:.2f} s wall, {c_write:.2f} s cpu ({len(out.encode('utf-8')) / 1e6:.1f} MB)",
          flush=True)
    print(f"[{tag}] merge of {len(merged)} records from {n_files} files, calc columns left blank: {wall:.2f} s "
          f"wall ({len(merged) / wall:,.0f} records/s), {cpu:.2f} s cpu ({len(merged) / cpu:,.0f} records/s)",
          flush=True)
    if "calc" in res:
        sums, t_calc, c_calc = res["calc"]
        verdicts = sum(1 for s in sums.values() if s.get("calc_verdict"))
        print(f"[{tag}] calc columns: {len(sums)} records in {t_calc:.2f} s wall, {c_calc:.2f} s cpu "
              f"({len(sums) / c_calc:,.0f} records/s cpu, {verdicts} verdicts); for {len(merged)} records about "
              f"{len(merged) * c_calc / len(sums):.0f} s cpu", flush=True)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=100_000, help="records (default 100000)")
    ap.add_argument("--files", type=int, default=50, help="files (default 50)")
    ap.add_argument("--calc-n", type=int, default=2000, help="tests whose calc columns are recomputed")
    ap.add_argument("--baseline", metavar="REV", help="git revision to compare with (e.g. HEAD~3)")
    ap.add_argument("--rounds", type=int, default=1, help="rounds per version; the fastest is kept (default 1)")
    ap.add_argument("--cli", action="store_true", help="also time python -m tamis merge --no-calc on the files")
    args = ap.parse_args(argv)

    with tempfile.TemporaryDirectory() as tmp:
        versions = {"now": NOW}
        if args.baseline:
            versions["baseline"] = Codec(load_baseline(args.baseline, pathlib.Path(tmp)).__name__)
        writer = versions.get("baseline", NOW)
        t0 = time.perf_counter()
        texts = build_files(args.n, args.files, writer=writer)
        rows = sum(t.count("\r\n") - 1 for t in texts)  # an upper bound: quoted line breaks count too
        mb = sum(len(t.encode("utf-8")) for t in texts) / 1e6
        sample = realistic_tests(args.calc_n) if args.calc_n > 0 else None
        print(f"setup: {args.files} files, {mb:.1f} MB, written by the {'baseline' if args.baseline else 'working tree'}"
              f"'s writer, built in {time.perf_counter() - t0:.1f} s", flush=True)
        for mod in versions.values():     # first use imports modules and compiles patterns: not timed
            run_phases(mod, build_files(30, 3, seed=1, writer=writer), sample[:3] if sample else None)
        runs = {k: [] for k in versions}
        for _ in range(max(1, args.rounds)):
            for k, mod in versions.items():
                runs[k].append(run_phases(mod, texts, sample))
        best = {k: fastest(v) for k, v in runs.items()}
        if args.cli:
            run_cli(texts, pathlib.Path(tmp), best["now"]["write"][0])
    for k, res in best.items():
        report(k, res, args.files, rows)
    if "baseline" not in best:
        return 0
    now, base = best["now"], best["baseline"]
    ratios = ", ".join(f"{ph} x{base[ph][2] / now[ph][2]:.2f}" for ph in now)
    cpu_now = sum(now[ph][2] for ph in ("read", "merge", "write"))
    cpu_base = sum(base[ph][2] for ph in ("read", "merge", "write"))
    print(f"speed-up baseline {args.baseline} / now (cpu): {ratios}; read+merge+write x{cpu_base / cpu_now:.2f}")
    same = {ph: now[ph][0] == base[ph][0] for ph in now}
    # equal values are not enough for records: the same spelling (key order, 12 vs 12.0) is required too
    same["read"] = same["read"] and all(NOW.dump_json(a) == NOW.dump_json(b)
                                        for x, y in zip(now["read"][0], base["read"][0]) for a, b in zip(x, y))
    same["merge"] = same["merge"] and NOW.dump_json(now["merge"][0]) == NOW.dump_json(base["merge"][0])
    notes = []
    if not same["write"]:   # columns added since the baseline: the same records, read back by this reader?
        back = [json.dumps(NOW.read_csv(x[0], "written")[0], sort_keys=True) for x in (now["write"], base["write"])]
        same["write"] = back[0] == back[1]
        notes.append("write: other columns than the baseline's (added since); read back, the same records "
                     "(keys sorted: the column order differs)")
    if "calc" in now and not same["calc"]:  # calc cells added since the baseline: compare the ones both write
        a, b = now["calc"][0], base["calc"][0]
        same["calc"] = a.keys() == b.keys() and all(
            all(a[k][c] == b[k][c] for c in a[k].keys() & b[k].keys()) for k in a)
        added = sorted(set().union(*(a[k].keys() - b[k].keys() for k in a)))
        passing = [c for c in added if c.startswith("calc_passing_pct@")]
        added = [c for c in added if c not in passing] + ([f"{len(passing)} calc_passing_pct@ columns"] if passing else [])
        notes.append(f"calc: the cells both versions write compared; added since: {', '.join(added) or 'none'}")
    print("outputs " + ", ".join(f"{ph} {'identical' if ok else 'DIFFER'}" for ph, ok in same.items())
          + "".join(f"\n  ({n})" for n in notes))
    return 0 if all(same.values()) else 1


if __name__ == "__main__":
    raise SystemExit(main())
