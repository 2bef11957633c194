"""Benchmark: invented sieve tests through tamis.api.handle, beside numpy.

    python bench/bench_api.py [--n 100000] [--op gradation|evaluate] [--seed 1] [--max-seconds 100]

Each invented test has masses retained on one fixed filter-sand stack
(3/8 in to No. 200), a pan and a wash loss. The same tests are reduced twice:

1. one JSON request string at a time through ``tamis.api.handle`` (the code
   the web app and the CLI run), timed on the handle calls alone;
2. all at once with numpy: cumulative sums (binary floats, where tamis sums the
   masses as exact decimals), percent passing on the dry mass,
   and log-linear D-values (first bracketing pair from coarse to fine, flat
   segments skipped, never extrapolated), as an independent implementation.

It prints tests per second for each and their ratio, and the largest
differences between the two on every case (percent passing, D-values). It is a
benchmark: it prints figures and never fails on timing; it exits 1 only if the
two implementations disagree beyond 1e-9 (passing) or 1e-9 relative (D-values).
"""

from __future__ import annotations

import argparse
import json
import math
import pathlib
import random
import sys
import time

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent.parent / "pycore"))

import numpy as np  # noqa: E402  (benchmark only; the core never imports numpy)

from tamis import api  # noqa: E402

STACK_MM = (9.5, 4.75, 2.36, 1.18, 0.6, 0.425, 0.3, 0.15, 0.075)
D_PCTS = (10, 15, 30, 50, 60, 85)


def invent(n: int, seed: int):
    """``n`` invented tests: masses (n, sieves) [g], pan [g], dry mass [g]."""
    rng = random.Random(seed)
    masses, pans, drys = [], [], []
    for _ in range(n):
        peak = rng.uniform(0, len(STACK_MM) - 1)
        row = [max(0.0, round(rng.gauss(120.0, 40.0) * math.exp(-((k - peak) / 2.0) ** 2), 1))
               for k in range(len(STACK_MM))]
        row[0] = 0.0 if rng.random() < 0.8 else row[0]
        pan = round(rng.uniform(0.0, 5.0), 1)
        wash = round(rng.uniform(0.0, 40.0), 1)
        masses.append(row)
        pans.append(pan)
        drys.append(round(sum(row) + pan + wash, 1) or 1.0)
    return masses, pans, drys


def requests(op: str, masses, pans, drys) -> list[str]:
    out = []
    for i, (row, pan, dry) in enumerate(zip(masses, pans, drys)):
        test = {"sieves": [{"opening_mm": d, "retained_g": m} for d, m in zip(STACK_MM, row)],
                "pan_g": pan, "dry_mass_g": dry, "washed_dry_mass_g": round(sum(row) + pan, 1)}
        fields = {"test": test} if op == "gradation" else {"sample": test}
        out.append(json.dumps({"schema": 1, "op": op, "id": i, **fields}))
    return out


def numpy_reduce(masses, drys):
    """Percent passing (n, sieves) and D-values {pct: (n,) array, NaN where undefined}."""
    m = np.asarray(masses, dtype=float)
    dry = np.asarray(drys, dtype=float)[:, None]
    passing = 100.0 - np.minimum(np.cumsum(m, axis=1) / dry, 1.0) * 100.0
    logd = np.log(np.asarray(STACK_MM))
    p_l, p_s = passing[:, :-1], passing[:, 1:]
    out = {}
    rows = np.arange(len(m))
    for x in D_PCTS:
        cond = (p_l >= x) & (p_s <= x) & (p_l != p_s)
        k = np.argmax(cond, axis=1)
        ok = cond[rows, k]
        pl, ps = p_l[rows, k], p_s[rows, k]
        with np.errstate(invalid="ignore", divide="ignore"):
            t = (x - ps) / (pl - ps)
        d = np.exp(logd[k + 1] + t * (logd[k] - logd[k + 1]))
        out[x] = np.where(ok, d, np.nan)
    return passing, out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=100_000, help="number of invented tests (default 100000)")
    ap.add_argument("--op", choices=("gradation", "evaluate"), default="gradation",
                    help="API op to time (evaluate adds every filter-material and stability check: slower)")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--max-seconds", type=float, default=100.0,
                    help="stop the API loop after this long and report on the tests done (0: no limit)")
    args = ap.parse_args(argv)
    n = max(1, args.n)
    print(f"inventing {n} tests on a {len(STACK_MM)}-sieve stack (seed {args.seed})", flush=True)
    masses, pans, drys = invent(n, args.seed)
    reqs = requests(args.op, masses, pans, drys)

    answers = []
    step = max(1, n // 10)
    t0 = time.perf_counter()
    for i, r in enumerate(reqs):
        answers.append(api.handle(r))
        if (i + 1) % step == 0:
            el = time.perf_counter() - t0
            print(f"  api: {i + 1}/{n} in {el:.1f} s", flush=True)
            if args.max_seconds and el > args.max_seconds and i + 1 < n:
                print(f"  api: stopped after {args.max_seconds:g} s (--max-seconds); figures below are for the "
                      f"first {i + 1} tests", flush=True)
                break
    t_api = time.perf_counter() - t0
    n_api = len(answers)

    t0 = time.perf_counter()
    passing, dvals = numpy_reduce(masses, drys)
    t_np = time.perf_counter() - t0

    worst_p, worst_d, errors, null_mismatch = 0.0, 0.0, 0, 0
    for i, text in enumerate(answers):
        resp = json.loads(text)
        if not resp["ok"]:
            errors += 1
            continue
        g = resp["result"] if args.op == "gradation" else resp["result"]["sample"]
        for j, pt in enumerate(g["points"]):
            worst_p = max(worst_p, abs(pt["passing_pct"] - passing[i, j]))
        for x in D_PCTS:
            a, b = g["d_mm"][f"D{x}"], dvals[x][i]
            if a is None or math.isnan(b):
                # numpy sums binary floats, tamis exact decimals: at a point passing exactly x % the two
                # may fall either side of the measured range; count only mismatches away from that edge.
                edge = any(abs(pt["passing_pct"] - x) <= 1e-9 for pt in g["points"])
                null_mismatch += ((a is None) != bool(math.isnan(b))) and not edge
                continue
            worst_d = max(worst_d, abs(a - b) / b)
    rate_api, rate_np = n_api / t_api, n / t_np
    print(f"tamis.api.handle ({args.op}, CPython {sys.version.split()[0]}): {rate_api:,.0f} tests/s "
          f"({t_api:.1f} s for {n_api})")
    print(f"numpy vectorised (passing + {len(D_PCTS)} D-values): {rate_np:,.0f} tests/s ({t_np:.3f} s)")
    print(f"ratio numpy / api: {rate_np / rate_api:,.0f} x")
    print(f"agreement on the {n_api} cases computed by both: max |passing difference| {worst_p:.3g} %, max relative D-value "
          f"difference {worst_d:.3g}, null/defined mismatches {null_mismatch}, API errors {errors}")
    bad = worst_p > 1e-9 or worst_d > 1e-9 or null_mismatch or errors
    if bad:
        print("DISAGREEMENT between tamis and the numpy implementation")
    return 1 if bad else 0


if __name__ == "__main__":
    raise SystemExit(main())
