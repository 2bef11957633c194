"""``lot_summary`` on many lots, figures printed (never asserted).

    .venv/bin/python bench/bench_lots.py [--lots 50] [--tests 40] [--rounds 3]

Invented lots are made from the demo: each lot copies demo lot L10 (its band, base soil and
testing rule) with ``--tests`` tests varied from the demo deliveries' masses (up to 2 %), one a day.
Printed: the time of ``tamis.api.handle`` with ``trends`` (every test evaluated: what the Lots screen
and ``python -m tamis lots`` ask) and without (counting only: the Records screen's warning), per
request and per test, best of ``--rounds``, on CPython (Pyodide is slower by a factor the worker
benchmark prints).
"""

from __future__ import annotations

import argparse
import copy
import json
import random
import sys
import time
import uuid
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "pycore"))

from tamis import api, demo  # noqa: E402


def make_records(n_lots: int, n_tests: int, seed: int = 14) -> list[dict]:
    rng = random.Random(seed)
    recs = demo.load_records()
    refs = [r for r in recs if r["kind"] in ("band", "base")]
    l10 = next(r for r in recs if r["kind"] == "lot" and r["meta"]["lot"] == "L10")
    sand = [r for r in recs if r["kind"] == "test" and r["meta"].get("lot") == "L10" and r["test"].get("sieves")]
    out = list(refs)
    for i in range(n_lots):
        lot = copy.deepcopy(l10)
        lot["record_id"] = str(uuid.UUID(int=rng.getrandbits(128), version=4))
        lot["meta"]["lot"] = f"B{i:03d}"
        lot["meta"]["placements"] = [{"date": f"2026-{9 + d // 28:02d}-{1 + d % 28:02d}", "quantity": 140.0}
                                     for d in range(n_tests)]
        out.append(lot)
        for d in range(n_tests):
            t = copy.deepcopy(rng.choice(sand))
            t["record_id"] = str(uuid.UUID(int=rng.getrandbits(128), version=4))
            t["meta"].update(lot_id=lot["record_id"], lot=lot["meta"]["lot"], sample_id=f"B{i:03d}-{d:02d}",
                             sampled_at=f"{lot['meta']['placements'][d]['date']}T10:00:00Z")
            t["meta"].pop("retest_of", None)
            for s in t["test"]["sieves"]:
                s["retained_g"] = round(s["retained_g"] * (1 + rng.uniform(-0.02, 0.02)), 1)
            out.append(t)
    return out


def best(fn, rounds: int) -> float:
    times = []
    for _ in range(rounds):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--lots", type=int, default=50)
    ap.add_argument("--tests", type=int, default=40)
    ap.add_argument("--rounds", type=int, default=3)
    args = ap.parse_args(argv)
    recs = make_records(args.lots, args.tests)
    n = args.lots * args.tests
    for trends in (True, False):
        text = json.dumps({"op": "lot_summary", "records": recs, "as_of": "2026-12-02", "trends": trends})
        resp = json.loads(api.handle(text))
        assert resp["ok"], resp.get("error")
        t = best(lambda: api.handle(text), args.rounds)
        print(f"lot_summary trends={str(trends).lower():<5} {args.lots} lots x {args.tests} tests ({n} tests, "
              f"{len(text) / 1e6:.1f} MB request): {t:.2f} s, {t / n * 1e3:.2f} ms per test "
              f"(best of {args.rounds})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
