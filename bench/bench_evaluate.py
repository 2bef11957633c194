"""Latency of ``evaluate`` and ``gradation`` through tamis.api.handle, now against a
git revision of the core, in the same process (printed, never asserted).

    python bench/bench_evaluate.py [--n 300] [--baseline HEAD] [--rounds 5] [--points 1000,10000]

The requests are ``--n`` invented tests on a filter-sand stack (the generator
of ``bench_api.py``) sent as ``gradation`` and as ``evaluate`` (every
filter-material and internal-stability check), plus every ``evaluate`` golden
request (tests/golden: filters against base soils, bands, zone sequences), plus
one ``evaluate`` of a smooth invented filter-sand curve of each ``--points``
size against a clay core (the scans on long curves; one round, and against the
baseline only up to 2,000 points, since a quadratic baseline takes a minute on
10,000).

With ``--baseline REV`` the package ``pycore/tamis`` of that revision is taken
from git (``git archive``) into a temporary directory and imported under
another name, so both versions answer the same requests in one process. Rounds
alternate between the two, and the fastest round of each is kept, so a
machine loaded by other work slows both alike. It prints milliseconds per
request, requests per second and the ratio baseline / now, and compares every
answer byte for byte, and the golden answers of the working tree with the
golden response files: the exit status is 1 only if an answer differs.
"""

from __future__ import annotations

import argparse
import importlib
import io
import pathlib
import subprocess
import sys
import tarfile
import tempfile
import time

HERE = pathlib.Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT / "pycore"))
sys.path.insert(0, str(HERE))

from tamis import api  # noqa: E402

BASELINE_PACKAGE = "tamis_baseline"


def load_baseline(rev: str, into: pathlib.Path, name: str = BASELINE_PACKAGE):
    """The package ``pycore/tamis`` at git revision ``rev``, imported as
    ``name`` from a copy in ``into`` (its api.OPS pointed at it)."""
    into = into / name
    into.mkdir()
    tar = subprocess.run(["git", "-C", str(ROOT), "archive", rev, "pycore/tamis"], check=True,
                         capture_output=True).stdout
    with tarfile.open(fileobj=io.BytesIO(tar)) as tf:
        tf.extractall(into, filter="data") if hasattr(tarfile, "data_filter") else tf.extractall(into)
    (into / "pycore" / "tamis").rename(into / name)
    sys.path.insert(0, str(into))
    base_api = importlib.import_module(f"{name}.api")
    base_api.OPS = {op: target.replace("tamis.", f"{name}.", 1) for op, target in base_api.OPS.items()}
    return importlib.import_module(name)


def golden_requests(op: str) -> list[str]:
    return [p.read_text(encoding="utf-8") for p in sorted((ROOT / "tests" / "golden").glob(f"{op}*.request.json"))]


def golden_responses(op: str) -> list[str]:
    """The stored responses (the contract), in the order of :func:`golden_requests`."""
    return [p.with_name(p.name[: -len(".request.json")] + ".response.json").read_text(encoding="utf-8")
            for p in sorted((ROOT / "tests" / "golden").glob(f"{op}*.request.json"))]


def request_sets(n: int) -> dict[str, list[str]]:
    import bench_api

    masses, pans, drys = bench_api.invent(n, 1)
    return {"gradation (invented)": bench_api.requests("gradation", masses, pans, drys),
            "evaluate (invented)": bench_api.requests("evaluate", masses, pans, drys),
            "evaluate (golden)": golden_requests("evaluate")}


def long_curve_request(n: int) -> str:
    """``evaluate`` of an invented smooth filter-sand curve of ``n`` points (10 to 0.005 mm) on a clay core."""
    import json
    import math

    pts = []
    for i in range(n):
        d = 10.0 ** (1.0 - 3.3 * i / (n - 1))
        pts.append({"opening_mm": d, "passing_pct": 100.0 / (1.0 + math.exp(-(math.log(d) - math.log(0.5)) * 2.2))})
    core = [(4.75, 100), (2, 99), (0.425, 96), (0.075, 88), (0.02, 60), (0.005, 38), (0.002, 24)]
    return json.dumps({"schema": 1, "op": "evaluate", "sample": {"passing": pts, "plasticity": {"nonplastic": True}},
                       "base": {"passing": [{"opening_mm": d, "passing_pct": p} for d, p in core]}})


LONG_BASELINE_MAX = 2000


def best_round(handle, reqs: list[str]) -> tuple[float, list[str]]:
    """``(seconds, answers)`` of one pass over ``reqs``."""
    t0 = time.perf_counter()
    out = [handle(r) for r in reqs]
    return time.perf_counter() - t0, out


#: Printed beside the figures of the request set they apply to (issue 17), never asserted.
TARGETS = {"evaluate (golden)": ("requests/s per core", 5000.0)}


def compare(name: str, reqs: list[str], handles: dict, rounds: int, expected: list[str] | None = None) -> bool:
    """Time each handle on ``reqs`` (alternating rounds, fastest kept); print; True when answers agree
    (with each other and, when ``expected`` is given, with those bytes: the golden responses)."""
    best = {k: float("inf") for k in handles}
    answers = {}
    for _ in range(rounds):
        for k, h in handles.items():
            dt, answers[k] = best_round(h, reqs)
            best[k] = min(best[k], dt)
    line = [f"{name}: {len(reqs)} requests"]
    for k, dt in best.items():
        line.append(f"{k} {1e3 * dt / len(reqs):.3f} ms/request ({len(reqs) / dt:,.0f}/s)")
    if name in TARGETS:
        what, want = TARGETS[name]
        line.append(f"target >= {want:,.0f} {what}: now {len(reqs) / best['now']:,.0f}")
    same = True
    if "baseline" in best:
        line.append(f"speed-up x{best['baseline'] / best['now']:.2f}")
        same = answers["now"] == answers["baseline"]
        diff = sum(a != b for a, b in zip(answers["now"], answers["baseline"]))
        line.append("answers byte-identical" if same else f"ANSWERS DIFFER in {diff} requests")
    if expected is not None:
        # the contract is the golden files: an older baseline may differ from them by design (answers changed
        # on purpose since), so here the baseline comparison is printed and the golden one decides
        diff = sum(a != b for a, b in zip(answers["now"], expected, strict=True))
        line.append("now = golden files byte for byte" if not diff else f"NOW DIFFERS FROM {diff} GOLDEN FILES")
        same = not diff
    print("; ".join(line), flush=True)
    return same


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=300, help="invented tests per set (default 300)")
    ap.add_argument("--baseline", metavar="REV", help="git revision to compare with (e.g. HEAD~3)")
    ap.add_argument("--same-as", metavar="REV",
                    help="git revision whose answers to every request must be the same bytes (not timed; e.g. "
                         "the branch point on main, when the baseline's answers differ by design)")
    ap.add_argument("--rounds", type=int, default=5, help="rounds per version; the fastest is kept (default 5)")
    ap.add_argument("--points", default="1000,10000",
                    help="sizes of the long curves evaluated once each, comma-separated ('' for none)")
    args = ap.parse_args(argv)
    points = [int(x) for x in args.points.split(",") if x.strip()]
    sets = request_sets(max(1, args.n))
    with tempfile.TemporaryDirectory() as tmp:
        handles = {"now": api.handle}
        if args.baseline:
            base = load_baseline(args.baseline, pathlib.Path(tmp))
            handles["baseline"] = importlib.import_module(f"{base.__name__}.api").handle
            print(f"baseline: {args.baseline} (core {base.__version__}); now: working tree (core "
                  f"{importlib.import_module('tamis').__version__}); CPython {sys.version.split()[0]}", flush=True)
        for h in handles.values():      # first use imports the op modules: not timed
            for reqs in sets.values():
                h(reqs[0])
        gold = {"evaluate (golden)": golden_responses("evaluate")}
        agree = {name: compare(name, reqs, handles, max(1, args.rounds), gold.get(name)) for name, reqs in sets.items()}
        # with --same-as, that revision's answers decide (an older baseline may differ from it by design)
        ok = all(v for name, v in agree.items() if name in gold or not args.same_as)
        for n in points:
            hs = {k: h for k, h in handles.items() if k == "now" or n <= LONG_BASELINE_MAX}
            # the long curves' answers changed on purpose with the exact scans: timed, not compared
            compare(f"evaluate ({n:,}-point curve)", [long_curve_request(n)], hs, 1)
        if args.same_as:
            ref = importlib.import_module(f"{load_baseline(args.same_as, pathlib.Path(tmp), 'tamis_same_as').__name__}"
                                          ".api").handle
            for name, reqs in list(sets.items()) + [(f"evaluate ({n:,}-point curve)", [long_curve_request(n)])
                                                    for n in points if n <= LONG_BASELINE_MAX]:
                diff = sum(api.handle(r) != ref(r) for r in reqs)
                print(f"{name}: " + (f"answers byte-identical to {args.same_as}" if not diff else
                                     f"ANSWERS DIFFER FROM {args.same_as} in {diff} of {len(reqs)} requests"))
                ok = ok and not diff
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
