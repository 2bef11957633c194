"""Invented records for the CSV tests and the merge benchmark.

``make_records(n, seed)`` builds ``n`` records of every kind from a seeded
random generator: the same arguments always give the same records. The
content is invented (a scenario of our own), chosen to stress the codec:
text cells that start with formula triggers, quotes, commas, line breaks,
non-ASCII text, empty strings, unsorted or odd lists that fall back to the
JSON columns, one-sided band limits, drafts without a test, tombstones.
Numbers in the typed columns are floats (the codec reads them back as
floats); numbers inside JSON columns keep their int/float spelling.

``demo_variants(n, seed, spread)`` gives realistic tests instead: the demo
project's deliveries with their masses varied (for the calc columns).
"""

from __future__ import annotations

import random
import uuid

TEXTS = (
    "plain", "", "'", "''", "'quoted", "=1+1", "=HYPERLINK(\"http://example.invalid\",\"open\")",
    "+33 6 12 34 56", "-5 mm lumps", "@SUM(A1:A3)", "\tindented", "\rcarriage", "\nline feed",
    "comma, inside", "quote \" inside", "line\r\nbreak", "two\nlines", "ünïcødé ✓ 日本語 \u2028",
    " leading space", "trailing space ", "0012", "3/8", "1e5", "true", "null", "-", "=", "@",
    "cmd|' /C calc'!A0", "pit N°2; stockpile B", "\ufeffBOM inside", "tab\tinside", "\"",
)
OPENINGS_MM = (75.0, 50.0, 37.5, 25.0, 19.0, 12.5, 9.5, 4.75, 2.36, 2.0, 1.18, 0.85, 0.6, 0.425,
               0.3, 0.25, 0.15, 0.075, 0.02, 0.005, 0.002, 0.0123456789)
KIND_WEIGHTS = (("band", 5), ("base", 10), ("test", 85))


def _uuid(rng: random.Random) -> str:
    return str(uuid.UUID(int=rng.getrandbits(128), version=4))


def _time(rng: random.Random) -> str:
    frac = rng.choice(("", ".000", ".5", ".123456"))
    return (f"2026-{rng.randint(1, 12):02d}-{rng.randint(1, 28):02d}T{rng.randint(0, 23):02d}:"
            f"{rng.randint(0, 59):02d}:{rng.randint(0, 59):02d}{frac}Z")


def _num(rng: random.Random) -> float:
    r = rng.random()
    if r < 0.3:
        return float(rng.randint(0, 900))
    if r < 0.4:
        return rng.choice((0.1 + 0.2, 1e-7, 123456.789, 2.5e-05, 1 / 3, 0.0))
    return round(rng.uniform(0, 600), rng.randint(0, 6)) + (rng.random() * 1e-9 if r > 0.95 else 0.0)


def _text(rng: random.Random) -> str:
    return rng.choice(TEXTS) if rng.random() < 0.6 else f"{rng.choice(TEXTS)} {rng.randint(0, 99999)}"


def _meta(rng: random.Random, ids: list[str]) -> dict:
    meta = {}
    for k in ("sample_id", "project", "material", "zone", "source", "station", "lift", "tested_by", "notes"):
        if rng.random() < 0.5:
            meta[k] = _text(rng)
    if rng.random() < 0.5:
        meta["sampling_point"] = rng.choice(("stockpile", "delivery", "loose_in_lift", "compacted"))
    if rng.random() < 0.4:
        meta["sampled_at"] = _time(rng)
    for k in ("offset_m", "elevation_m", "latitude", "longitude"):
        if rng.random() < 0.4:
            meta[k] = rng.choice((-1, 1)) * _num(rng)
    if ids and rng.random() < 0.3:
        meta["band_id"] = rng.choice(ids)
    if ids and rng.random() < 0.3:
        meta["base_id"] = rng.choice(ids)
    if rng.random() < 0.3:
        meta["rules"] = {"criteria": rng.choice(("nrcs-1994", "usbr-2011", "terzaghi")),
                         "terzaghi_ratio": rng.choice((4, 4.0, 5.5))}
    r = rng.random()
    if r < 0.1:
        meta["lift"] = rng.randint(1, 40)  # a number where text is expected: kept in meta_extra_json
    elif r < 0.2:
        meta["photo_ids"] = [_uuid(rng), _text(rng)]
    elif r < 0.25:
        meta["demo"] = True
    return meta


def _pairs(rng: random.Random, key: str) -> list[dict]:
    ops = sorted(rng.sample(OPENINGS_MM, rng.randint(1, 10)), reverse=True)
    pts = [{"opening_mm": o, key: _num(rng) if key == "retained_g" else min(100.0, _num(rng) / 6)} for o in ops]
    if rng.random() < 0.05:
        rng.shuffle(pts)  # entry order kept exactly, through test_extra_json when not coarsest-first
    if rng.random() < 0.03:
        pts[0]["label"] = rng.choice(("3/8 in", "No. 4", "#200"))
    return pts


def _test(rng: random.Random):
    r = rng.random()
    if r < 0.04:
        return None
    if r < 0.06:
        return {}
    t = {}
    if rng.random() < 0.8:
        t["sieves"] = _pairs(rng, "retained_g")
        t["dry_mass_g"] = _num(rng) + 100.0
        if rng.random() < 0.5:
            t["pan_g"] = _num(rng)
        if rng.random() < 0.4:
            t["washed_dry_mass_g"] = _num(rng)
    else:
        t["passing"] = _pairs(rng, "passing_pct")
    p = rng.random()
    if p < 0.3:
        t["plasticity"] = {"nonplastic": rng.random() < 0.7}
    elif p < 0.45:
        t["plasticity"] = {"liquid_limit": _num(rng) / 10, "plasticity_index": _num(rng) / 30}
    elif p < 0.47:
        t["plasticity"] = {}
    if rng.random() < 0.2:
        t["dispersive"] = rng.random() < 0.5
    if rng.random() < 0.05:
        t["method"] = _text(rng)
    if rng.random() < 0.02:
        t["pan_g"] = None
    return t


def _band(rng: random.Random) -> dict:
    ops = sorted(rng.sample(OPENINGS_MM, rng.randint(1, 8)), reverse=True)
    limits = []
    for o in ops:
        lo = rng.choice((None, _num(rng) / 10))
        hi = _num(rng) / 6 if lo is None or rng.random() < 0.8 else None
        limits.append({"opening_mm": o, "min_pct": lo, "max_pct": hi})
    band = {"name": _text(rng), "limits": limits}
    if rng.random() < 0.1:
        band["source_doc"] = _text(rng)
    if rng.random() < 0.03:
        band["limits"] = []
    return band


def _history(rng: random.Random, rev: int, at: str, by: str) -> list[dict]:
    hist = []
    for k in range(1, rev + 1):
        changes = []
        for _ in range(rng.randint(0, 3)):
            changes.append({"field": f"test.sieves[{rng.randint(0, 9)}].retained_g",
                            "old": rng.choice((None, 12, 12.5, _text(rng))), "new": rng.choice((13, 0.1 + 0.2))})
        hist.append({"rev": k, "at": at if k == rev else _time(rng), "by": by if k == rev else _text(rng),
                     "summary": "created" if k == 1 else _text(rng), "changes": changes})
    return hist


def make_records(n: int, seed: int = 1) -> list[dict]:
    """``n`` invented records of all kinds, the same for the same ``(n, seed)``."""
    rng = random.Random(seed)
    kinds = [k for k, w in KIND_WEIGHTS for _ in range(w)]
    ids: list[str] = []
    out = []
    for _ in range(n):
        kind = rng.choice(kinds)
        rid = _uuid(rng)
        rev = rng.randint(1, 4)
        at, by = _time(rng), _text(rng)
        rec = {"record_id": rid, "kind": kind, "rev": rev, "updated_at": at, "updated_by": by,
               "deleted": rng.random() < 0.03, "exported_at": _time(rng) if rng.random() < 0.3 else None,
               "meta": _meta(rng, ids), "test": None, "band": None,
               "history": _history(rng, rev, at, by) if rng.random() < 0.95 else []}
        if kind == "band":
            rec["band"] = _band(rng) if rng.random() < 0.97 else None
        else:
            rec["test"] = _test(rng)
        ids.append(rid)
        out.append(rec)
    return out


def demo_variants(n: int, seed: int, spread: float, missing_band_every: int = 0) -> tuple[list, list]:
    """``(refs, tests)``: the demo project's bands and base soils (checked records), and
    ``n`` tests drawn from its deliveries with each sieve mass scaled by a factor in
    ``1 +/- spread``; every ``missing_band_every``-th test (0: none) names a band that
    is not among ``refs``, so it gets no verdict."""
    import copy
    from tamis import demo
    from tamis.exchange import record
    rng = random.Random(seed)
    pool = [record.check_record(r) for r in demo.load_records()]
    refs = [r for r in pool if r["kind"] != "test"]
    tests = [r for r in pool if r["kind"] == "test"]
    out = []
    for i in range(n):
        t = copy.deepcopy(rng.choice(tests))
        t["record_id"] = f"{i:08x}-0000-4000-8000-{rng.getrandbits(48):012x}"
        for s in (t["test"] or {}).get("sieves", []):
            s["retained_g"] = s["retained_g"] * (1 + rng.uniform(-spread, spread))
        if missing_band_every and i % missing_band_every == 0:
            t["meta"] = dict(t["meta"], band_id="ffffffff-0000-4000-8000-000000000000")
        out.append(t)
    return refs, out


def test_generator_is_deterministic_and_covers_every_kind():
    a, b = make_records(300, seed=7), make_records(300, seed=7)
    assert a == b
    assert make_records(300, seed=8) != a
    assert {r["kind"] for r in a} == {"band", "base", "test"}
    assert len({r["record_id"] for r in a}) == 300
