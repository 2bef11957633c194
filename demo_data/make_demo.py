"""Write the demo project: an invented dam, its base soils, bands and deliveries.

Everything here is invented for the demo: Tallowmere Dam, the Brannick river,
Quellbrook Pit, Sarnet Ridge Pit, their suppliers and the people named. The
scenario is ours; no real place, firm or person is meant.

Run from the repository root::

    python demo_data/make_demo.py          # rewrite the files
    python demo_data/make_demo.py --check  # exit 1 if a committed file is stale

It writes

- ``pycore/tamis/demo/records.json``: the records as compact JSON, package
  data of ``tamis.demo`` (the wheel never reads files outside it);
- ``demo_data/demo_project.json``: the same records, indented, for people;
- ``demo_data/demo_project.csv``: the same records in the exchange CSV format,
  written by the core's ``records_export_csv`` op.

The project name, the demo marker, the delivery rules and the zone sequence
are the constants of :mod:`tamis.demo`; this script uses them, never copies.

The output is deterministic: fixed numbers, record ids drawn from a seeded
generator, no clock. The same bytes come out on every run.

How the masses are made: each delivery is designed as a percent-passing curve
(the figures in ``FINE_FILTER_TESTS`` / ``DRAIN_TESTS``), then turned into the
masses a technician would write down: mass retained on each sieve (rounded to
0.1 g), a pan mass after dry sieving, the washed dry mass and the oven-dry mass
before washing. A small sieving loss is built in; it is large on purpose in the
one test that must fail the mass balance.
"""

from __future__ import annotations

import argparse
import json
import random
import sys
import uuid
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "pycore"))

from tamis import api, demo  # noqa: E402

PACKAGE_FILE = ROOT / "pycore" / "tamis" / "demo" / demo.RECORDS_FILE
JSON_FILE = ROOT / "demo_data" / "demo_project.json"
CSV_FILE = ROOT / "demo_data" / "demo_project.csv"

PROJECT = demo.PROJECT
DEMO_FLAG = demo.DEMO_FLAG

SEED = 20261201

DELIVERY_RULES = demo.RULES

# ---------------------------------------------------------------------------
# Sieve stacks [mm]
# ---------------------------------------------------------------------------

FINE_STACK_MM = (9.5, 4.75, 2.36, 1.18, 0.6, 0.3, 0.15, 0.075)
DRAIN_STACK_MM = (37.5, 25.0, 19.0, 12.5, 9.5, 4.75, 2.36, 1.18, 0.6, 0.3, 0.075)

# ---------------------------------------------------------------------------
# Bands (percent passing limits [%] per sieve)
# ---------------------------------------------------------------------------

#: Zone 2 fine filter (chimney and blanket). The coarse side follows the
#: supplier's standard washed sand and is wider than the retention criterion
#: for the core: the base-soil check, not the band, governs there.
FINE_BAND = (
    (9.5, 100.0, 100.0),
    (4.75, 92.0, 100.0),
    (2.36, 65.0, 100.0),
    (1.18, 25.0, 85.0),
    (0.6, 8.0, 60.0),
    (0.3, 2.0, 30.0),
    (0.15, 0.0, 12.0),
    (0.075, 0.0, 5.0),
)

#: Zone 3 coarse filter (drain gravel around the toe drain).
DRAIN_BAND = (
    (37.5, 100.0, 100.0),
    (25.0, 90.0, 100.0),
    (19.0, 75.0, 100.0),
    (12.5, 50.0, 85.0),
    (9.5, 35.0, 72.0),
    (4.75, 12.0, 42.0),
    (2.36, 3.0, 22.0),
    (1.18, 0.0, 12.0),
    (0.6, 0.0, 8.0),
    (0.3, 0.0, 5.0),
    (0.075, 0.0, 3.0),
)

# ---------------------------------------------------------------------------
# Base soils and zone gradations (percent passing form)
# ---------------------------------------------------------------------------

#: Zone 1 core: sandy lean clay from borrow area C, composite of three pits;
#: sieves to 0.075 mm, hydrometer points below. A little gravel, so the
#: curve is regraded on 4.75 mm before its category is found.
CORE = ((19.0, 100.0), (9.5, 98.0), (4.75, 94.0), (2.0, 90.0), (0.85, 86.0), (0.425, 82.0),
        (0.25, 78.0), (0.15, 73.0), (0.075, 66.0), (0.03, 52.0), (0.01, 38.0), (0.005, 30.0),
        (0.002, 22.0), (0.001, 12.0))

#: Foundation: silty sand alluvium at the downstream toe (under the blanket).
FOUNDATION = ((9.5, 100.0), (4.75, 97.0), (2.0, 92.0), (0.85, 85.0), (0.425, 72.0), (0.25, 56.0),
              (0.15, 40.0), (0.075, 24.0), (0.02, 12.0), (0.005, 6.0))

#: Zone 2 fine filter as produced: mean of the Quellbrook pre-delivery tests.
#: The drain gravel is checked against it (the fine filter is the drain's base).
FINE_FILTER_REFERENCE = ((9.5, 100.0), (4.75, 100.0), (2.36, 87.0), (1.18, 65.0), (0.6, 42.0),
                         (0.3, 19.0), (0.15, 7.0), (0.075, 2.0))

#: Zone 3 drain gravel as produced: mean of the Sarnet Ridge pre-delivery tests.
DRAIN_REFERENCE = ((37.5, 100.0), (25.0, 97.0), (19.0, 88.0), (12.5, 68.0), (9.5, 55.0),
                   (4.75, 30.0), (2.36, 14.0), (1.18, 6.0), (0.6, 3.0), (0.3, 1.5), (0.075, 0.5))

#: Zone 4 shell: processed coarse gravel, 63 mm minus (design gradation). It
#: is coarse enough to drain the drain gravel (D15 about 11 mm, at least
#: 4 x d15 of the drain) and fine enough to hold it (D15 <= 4 x d85).
SHELL = ((63.0, 100.0), (50.0, 88.0), (37.5, 72.0), (25.0, 50.0), (19.0, 38.0), (12.5, 20.0),
         (9.5, 5.0), (4.75, 2.5), (2.36, 1.5), (0.6, 0.8), (0.075, 0.4))

# ---------------------------------------------------------------------------
# People and places (all invented)
# ---------------------------------------------------------------------------

PEOPLE = {
    "IMO": "I. Marchetti-Oduya",   # site inspector, day shift
    "TV": "T. Valdane",            # site inspector, night shift
    "KFL": "K. Ferreira-Lund",     # field laboratory technician
}
QUELLBROOK = "Quellbrook Pit (Quellbrook Sand Co.)"
SARNET = "Sarnet Ridge Pit (Sarnet Ridge Aggregates)"

# ---------------------------------------------------------------------------
# Deliveries
# ---------------------------------------------------------------------------
# Each row: sample_id, day (YYYY-MM-DD), time, by, source, zone, sampling_point,
# station, lift, dry_mass_g, loss_g (sieving loss built into the masses),
# curve (percent passing on the stack, coarsest first), notes.

FINE_FILTER_TESTS = (
    ("Q-0907-1", "2026-09-07", "08:40", "IMO", QUELLBROOK, "2 chimney", "delivery", "0+140", 1, 1049.2, 0.8,
     (100, 100, 88.1, 66.2, 43, 19.8, 7.3, 2.1), "First load of the season."),
    ("Q-0909-1", "2026-09-09", "10:15", "IMO", QUELLBROOK, "2 chimney", "delivery", "0+180", 2, 1023.6, 0.6,
     (100, 100, 86.6, 63.9, 40.7, 18.9, 6.9, 1.9), ""),
    ("Q-0911-1", "2026-09-11", "14:05", "TV", QUELLBROOK, "2 chimney", "delivery", "0+220", 3, 1076.4, 1.0,
     (100, 100, 89.4, 67.7, 45.1, 21.2, 7.8, 2.4), ""),
    ("Q-0914-1", "2026-09-14", "09:30", "IMO", QUELLBROOK, "2 chimney", "delivery", "0+160", 4, 1058.0, 0.8,
     (100, 100, 90.2, 71.5, 49.6, 24.4, 9.8, 7.3),
     "Wash plant screen reported torn by the supplier the same morning; sand looks dirty."),
    ("Q-0916-1", "2026-09-16", "11:20", "KFL", QUELLBROOK, "2 chimney", "delivery", "0+200", 5, 1034.6, 9.2,
     (100, 100, 87.2, 64.9, 41.8, 19.1, 7.1, 2),
     "Brush left on the No. 50 sieve during cleaning; material lost. Retest on the second split."),
    ("Q-0916-1R", "2026-09-16", "15:45", "KFL", QUELLBROOK, "2 chimney", "delivery", "0+200", 5, 1018.8, 0.6,
     (100, 100, 87, 64.6, 41.5, 19, 7, 2), "Retest of Q-0916-1 on the second split."),
    ("S-0918-T", "2026-09-18", "13:10", "TV", SARNET, "2 chimney", "delivery", "0+240", 6, 1012.0, 0.8,
     (100, 96.0, 70.5, 29.0, 8.6, 2.6, 1.2, 0.7),
     "Trial load of Sarnet Ridge washed sand offered as an alternative source for Zone 2."),
    ("S-0918-B", "2026-09-18", "13:40", "TV", SARNET, "2B blanket", "delivery", "DS 0+060", 1, 1004.6, 0.8,
     (100, 96.3, 71.2, 29.8, 9.0, 2.8, 1.3, 0.8),
     "Same trial sand, proposed for the downstream blanket on the foundation alluvium."),
    ("Q-0923-1", "2026-09-23", "08:55", "IMO", QUELLBROOK, "2 chimney", "delivery", "0+260", 7, 1041.4, 0.6,
     (100, 100, 87.9, 65.4, 42.2, 19.5, 7.2, 2.2), ""),
    ("Q-L11-SP", "2026-09-28", "07:50", "IMO", QUELLBROOK, "2 chimney", "stockpile", "stockpile B", None, 1062.8, 0.8,
     (100, 100, 87.6, 65, 42.4, 20, 8, 3.1), "Lot L11 at the site stockpile."),
    ("Q-L11-DL", "2026-09-29", "10:05", "IMO", QUELLBROOK, "2 chimney", "delivery", "0+280", 8, 1053.8, 0.8,
     (100, 100, 88.4, 66.5, 44.1, 21.6, 9.2, 4.2), "Lot L11 as tipped at the chimney."),
    ("Q-L11-CP", "2026-09-29", "16:30", "IMO", QUELLBROOK, "2 chimney", "compacted", "0+280", 8, 1037.6, 0.8,
     (100, 100, 89.6, 68.3, 46.6, 24, 10.9, 5.7),
     "Lot L11 after compaction, taken from the compacted lift; particles look crushed at the surface."),
    ("Q-1005-1", "2026-10-05", "09:10", "TV", QUELLBROOK, "2 chimney", "delivery", "0+300", 9, 1031.0, 0.6,
     (100, 100, 86.8, 64.1, 41, 18.6, 6.8, 1.8), ""),
    ("Q-1012-1", "2026-10-12", "11:35", "IMO", QUELLBROOK, "2 chimney", "delivery", "0+320", 10, 1066.6, 0.8,
     (100, 100, 88.8, 66.9, 44, 20.4, 7.5, 2.3), ""),
)

DRAIN_TESTS = (
    ("D-0908-1", "2026-09-08", "13:20", "TV", SARNET, "3 drain", "delivery", "toe 0+100", 1, 16480.0, 8.0,
     (100, 97.4, 88.6, 68.9, 55.8, 30.6, 14.3, 6.2, 3.1, 1.6, 0.5), ""),
    ("D-0915-1", "2026-09-15", "10:40", "TV", SARNET, "3 drain", "delivery", "toe 0+140", 2, 16230.0, 7.0,
     (100, 96.8, 87.2, 66.7, 53.9, 28.8, 13.1, 5.6, 2.8, 1.4, 0.5), ""),
    ("D-0922-1", "2026-09-22", "14:50", "KFL", SARNET, "3 drain", "loose_in_lift", "toe 0+180", 3, 16720.0, 9.0,
     (100, 87.0, 76.5, 63.0, 56.0, 41.0, 29.0, 20.0, 13.0, 7.4, 2.9),
     "Sampled at the edge of the spread lift where the dozer pushed a windrow; coarse and fine pockets visible."),
    ("D-0930-1", "2026-09-30", "09:25", "TV", SARNET, "3 drain", "delivery", "toe 0+180", 3, 16380.0, 8.0,
     (100, 97.9, 89.4, 70.1, 57.2, 31.5, 14.8, 6.5, 3.3, 1.6, 0.5), "Windrow removed; lift re-spread."),
    ("D-1007-1", "2026-10-07", "13:55", "TV", SARNET, "3 drain", "delivery", "toe 0+220", 4, 16550.0, 8.4,
     (100, 97.1, 87.9, 67.5, 54.6, 29.5, 13.6, 5.9, 2.9, 1.4, 0.5), ""),
    ("D-1014-1", "2026-10-14", "10:10", "TV", SARNET, "3 drain", "delivery", "toe 0+260", 5, 16640.0, 8.2,
     (100, 97.6, 88.1, 68.3, 55.1, 30.1, 13.9, 6, 3, 1.5, 0.5), ""),
)

#: The outcome each delivery is designed to have under the default rules
#: (``nrcs-1994``), and why. ``fails``: check ids that must fail; ``passes``:
#: check ids that must pass. Used by ``tests/test_demo.py``; the tour prints
#: what the core computes, never these.
INTENDED = {
    "Q-0907-1": {"verdict": "accept", "fails": [], "why": "within band, meets the core criteria"},
    "Q-0909-1": {"verdict": "accept", "fails": [], "why": "within band, meets the core criteria"},
    "Q-0911-1": {"verdict": "accept", "fails": [], "why": "within band, meets the core criteria"},
    "Q-0914-1": {"verdict": "reject", "fails": ["filter.fines", "band.compliance"],
                 "passes": ["filter.retention", "filter.permeability", "qa.mass_balance", "filter.segregation"],
                 "why": "too many fines: 7.3 % passing 0.075 mm (limit 5 %)"},
    "Q-0916-1": {"verdict": "reject", "fails": ["qa.mass_balance"],
                 "passes": ["filter.fines", "filter.retention", "band.compliance"],
                 "why": "sieving loss of 9.2 g (0.9 % of the dry mass, limit 0.3 %): not usable, retest"},
    "Q-0916-1R": {"verdict": "accept", "fails": [], "why": "retest of Q-0916-1 passes"},
    "S-0918-T": {"verdict": "reject", "fails": ["filter.retention"],
                 "passes": ["band.compliance", "filter.fines", "filter.permeability", "qa.mass_balance",
                            "filter.segregation"],
                 "why": "within the band but too coarse for the core: D15 about 0.74 mm > 0.7 mm"},
    "S-0918-B": {"verdict": "accept", "fails": [],
                 "why": "the same sand is fine on the silty-sand foundation (category 3)"},
    "Q-0923-1": {"verdict": "accept", "fails": [], "why": "within band, meets the core criteria"},
    "Q-L11-SP": {"verdict": "accept", "fails": [], "why": "lot L11 at the stockpile: 3.1 % fines"},
    "Q-L11-DL": {"verdict": "accept", "fails": [], "why": "lot L11 on delivery: 4.2 % fines, creeping up"},
    "Q-L11-CP": {"verdict": "reject", "fails": ["filter.fines", "band.compliance"],
                 "passes": ["filter.retention", "qa.mass_balance"],
                 "why": "lot L11 after compaction: 5.7 % fines, breakdown in the lift"},
    "Q-1005-1": {"verdict": "accept", "fails": [], "why": "within band, meets the core criteria"},
    "Q-1012-1": {"verdict": "accept", "fails": [], "why": "within band, meets the core criteria"},
    "D-0908-1": {"verdict": "accept", "fails": [], "why": "within band, meets the fine-filter criteria"},
    "D-0915-1": {"verdict": "accept", "fails": [], "why": "within band, meets the fine-filter criteria"},
    "D-0922-1": {"verdict": "reject", "fails": ["filter.segregation", "band.compliance", "filter.permeability"],
                 "passes": ["filter.fines", "qa.mass_balance", "filter.max_size"],
                 "why": "segregated: D90 about 27 mm for a D10 of about 0.41 mm (limit 20 mm); its sandy pockets also bring D15 below the permeability minimum"},
    "D-0930-1": {"verdict": "accept", "fails": [], "why": "re-spread lift within band"},
    "D-1007-1": {"verdict": "accept", "fails": [], "why": "within band, meets the fine-filter criteria"},
    "D-1014-1": {"verdict": "accept", "fails": [], "why": "within band, meets the fine-filter criteria"},
}

#: Zone sequence of the demo dam, finest first (:data:`tamis.demo.ZONE_SEQUENCE`),
#: and the verdict intended at each interface (core|fine filter, fine filter|drain, drain|shell).
ZONES = demo.ZONE_SEQUENCE
INTENDED_INTERFACES = ("accept", "accept", "accept")


# ---------------------------------------------------------------------------
# Building records
# ---------------------------------------------------------------------------

def _ids():
    """Deterministic version-4 UUIDs (seeded), in the order records are built."""
    rng = random.Random(SEED)
    while True:
        yield str(uuid.UUID(int=rng.getrandbits(128), version=4))


def _round1(x: float) -> float:
    return float(f"{x:.1f}")


def masses_from_curve(stack_mm, passing_pct, dry_mass_g: float, loss_g: float, pan_share: float = 0.06):
    """The masses a technician records for a washed test with this curve.

    Parameters
    ----------
    stack_mm : sequence of float
        Sieve openings [mm], coarsest first.
    passing_pct : sequence of float
        Designed percent passing each sieve [%].
    dry_mass_g : float
        Oven-dry mass before washing [g].
    loss_g : float
        Mass lost in sieving [g] (the mass-balance difference).
    pan_share : float
        Share of the passing-0.075 mm mass that reaches the pan in dry sieving
        (the rest washed out) [-].

    Returns
    -------
    dict
        A test in the input form of docs/json-contract.md (``sieves``, ``pan_g``,
        ``dry_mass_g``, ``washed_dry_mass_g``).
    """
    sieves, above = [], 100.0
    for d, p in zip(stack_mm, passing_pct):
        sieves.append({"opening_mm": d, "retained_g": _round1(dry_mass_g * (above - p) / 100.0)})
        above = p
    retained = sum(s["retained_g"] for s in sieves)
    fines_g = dry_mass_g * passing_pct[-1] / 100.0
    pan = _round1(fines_g * pan_share)
    washed = _round1(retained + pan + loss_g)
    return {"sieves": sieves, "pan_g": pan, "dry_mass_g": dry_mass_g, "washed_dry_mass_g": washed}


def _passing_test(points, plasticity=None, dispersive=None):
    test = {"passing": [{"opening_mm": d, "passing_pct": p} for d, p in points]}
    if plasticity is not None:
        test["plasticity"] = plasticity
    if dispersive is not None:
        test["dispersive"] = dispersive
    return test


def _history(at: str, by: str, summary: str = "created", changes=None):
    return {"rev": 1, "at": at, "by": by, "summary": summary, "changes": changes or []}


def _record(rid, kind, at, by, meta, test=None, band=None):
    meta = {"project": PROJECT, DEMO_FLAG: True, **meta}
    return {"record_id": rid, "kind": kind, "rev": 1, "updated_at": at, "updated_by": by,
            "deleted": False, "exported_at": None, "meta": meta, "test": test, "band": band,
            "history": [_history(at, by)]}


def build_records() -> list[dict]:
    """All demo records: bands, base soils and zone gradations, then deliveries."""
    ids = _ids()
    made = "2026-09-01T07:30:00Z"
    recs: dict[str, dict] = {}

    def band(key, name, rows, zone):
        recs[key] = _record(next(ids), "band", made, "IMO", {"sample_id": key, "zone": zone, "material": name},
                            band={"name": name, "limits": [{"opening_mm": d, "min_pct": lo, "max_pct": hi}
                                                          for d, lo, hi in rows]})

    def base(key, material, zone, points, source, notes, plasticity=None, dispersive=None):
        recs[key] = _record(next(ids), "base", made, "KFL",
                            {"sample_id": key, "zone": zone, "material": material, "source": source,
                             "notes": notes},
                            test=_passing_test(points, plasticity, dispersive))

    band("TD-02", "Zone 2 fine filter band (spec. TD-02)", FINE_BAND, "2")
    band("TD-03", "Zone 3 drain gravel band (spec. TD-03)", DRAIN_BAND, "3")
    base("CORE-C1", "Zone 1 core, sandy lean clay", "1", CORE, "Borrow area C",
         "Composite of three borrow pits; hydrometer below 0.075 mm. LL 38, PI 18; crumb test non-dispersive.",
         plasticity={"liquid_limit": 38.0, "plasticity_index": 18.0}, dispersive=False)
    base("FDN-T1", "Foundation silty sand alluvium", "foundation", FOUNDATION, "Downstream toe",
         "Under the downstream blanket; hydrometer below 0.075 mm; nonplastic.",
         plasticity={"nonplastic": True}, dispersive=False)
    base("F1-MEAN", "Zone 2 fine filter, production mean", "2", FINE_FILTER_REFERENCE, QUELLBROOK,
         "Mean of the pre-delivery tests; the base of the drain gravel.", plasticity={"nonplastic": True})
    base("F2-MEAN", "Zone 3 drain gravel, production mean", "3", DRAIN_REFERENCE, SARNET,
         "Mean of the pre-delivery tests.", plasticity={"nonplastic": True})
    base("SHELL-D1", "Zone 4 shell, processed coarse gravel", "4", SHELL, "Shell borrow, terrace gravels",
         "Design gradation of the downstream shell.", plasticity={"nonplastic": True})

    def delivery(row, stack, band_key, base_key_for_zone):
        (sid, day, time, by, source, zone, point, station, lift, dry, loss, curve, notes) = row
        at = f"{day}T{time}:00Z"
        test = masses_from_curve(stack, curve, dry, loss)
        if stack is FINE_STACK_MM:
            test["frame"] = "305"  # 12 in frames: 469 g below 4.75 mm
        else:
            test["frame"] = "372x580"
            test["sieved_in_portions"] = True  # 16 kg of gravel is sieved in portions (ASTM C136 §8.3.1)
        test["plasticity"] = {"nonplastic": True}
        meta = {"sample_id": sid, "material": "Zone 2 fine filter sand" if stack is FINE_STACK_MM
                else "Zone 3 drain gravel", "zone": zone, "source": source, "sampling_point": point,
                "station": station, "sampled_at": at, "tested_by": PEOPLE[by],
                "band_id": recs[band_key]["record_id"],
                "base_id": recs[base_key_for_zone(zone)]["record_id"], "rules": dict(DELIVERY_RULES)}
        if lift is not None:
            meta["lift"] = lift
        if notes:
            meta["notes"] = notes
        recs[sid] = _record(next(ids), "test", at, by, meta, test=test)

    for row in FINE_FILTER_TESTS:
        delivery(row, FINE_STACK_MM, "TD-02",
                 lambda zone: "FDN-T1" if zone.startswith("2B") else "CORE-C1")
    for row in DRAIN_TESTS:
        delivery(row, DRAIN_STACK_MM, "TD-03", lambda zone: "F1-MEAN")

    # Lot L11 was followed from the stockpile to the compacted lift (its tests carry the lot code;
    # the lot records below are made last, so every earlier record keeps its id).
    for sid in ("Q-L11-SP", "Q-L11-DL", "Q-L11-CP"):
        recs[sid]["meta"]["lot"] = "L11"
    # The retest points at the test it replaces.
    recs["Q-0916-1R"]["meta"]["retest_of"] = recs["Q-0916-1"]["record_id"]
    # One record shows an edit in its history: a mass typed wrongly, then corrected.
    r = recs["Q-0909-1"]
    wrong = r["test"]["sieves"][3]["retained_g"] + 10.0
    r["rev"] = 2
    r["updated_at"] = "2026-09-09T12:02:00Z"
    r["history"] = [
        _history("2026-09-09T10:15:00Z", "IMO"),
        {"rev": 2, "at": "2026-09-09T12:02:00Z", "by": "KFL", "summary": "corrected a mass misread on site",
         "changes": [{"field": "test.sieves[3].retained_g", "old": _round1(wrong),
                      "new": r["test"]["sieves"][3]["retained_g"]}]},
    ]
    lots(recs, ids)
    return list(recs.values())


# ---------------------------------------------------------------------------
# Lots: quantities placed, the testing rule, the tests of each lot
# ---------------------------------------------------------------------------

#: The demo's testing rules: invented for the demo, in the form of the examples of
#: ``tamis.project.lots.FREQUENCY_EXAMPLES`` (examples, not standards).
SAND_RULE = {"per_quantity": 150.0, "quantity_unit": "m3", "per_day": True, "per_source": True}
GRAVEL_RULE = {"per_quantity": 300.0, "quantity_unit": "t", "per_day": False, "per_source": True}

#: code, material, zone, source, band, base, unit, planned quantity, status, rule,
#: placements (day, quantity), tests (sample id, quantity represented, ticket), notes.
LOTS = (
    ("L10", "Zone 2 fine filter sand", "2 chimney", QUELLBROOK, "TD-02", "CORE-C1", "m3", 900.0, "closed", SAND_RULE,
     (("2026-09-07", 150.0), ("2026-09-09", 140.0), ("2026-09-11", 150.0), ("2026-09-14", 145.0),
      ("2026-09-16", 150.0), ("2026-09-23", 135.0)),
     (("Q-0907-1", 150.0, "QB-40117"), ("Q-0909-1", 140.0, "QB-40162"), ("Q-0911-1", 150.0, "QB-40208"),
      ("Q-0914-1", 145.0, "QB-40251"), ("Q-0916-1", 150.0, "QB-40297"), ("Q-0916-1R", 150.0, "QB-40297"),
      ("Q-0923-1", 135.0, "QB-40385")),
     "Chimney lifts 1 to 7, closed on 23 September."),
    ("L11", "Zone 2 fine filter sand", "2 chimney", QUELLBROOK, "TD-02", "CORE-C1", "m3", 300.0, "open", SAND_RULE,
     (("2026-09-29", 140.0),),
     (("Q-L11-SP", None, None), ("Q-L11-DL", 140.0, "QB-40431"), ("Q-L11-CP", 140.0, "QB-40431")),
     "Followed from stockpile B to the compacted lift 8."),
    ("L12", "Zone 2 fine filter sand", "2 chimney", QUELLBROOK, "TD-02", "CORE-C1", "m3", 900.0, "open", SAND_RULE,
     (("2026-10-05", 150.0), ("2026-10-06", 160.0), ("2026-10-08", 150.0), ("2026-10-12", 140.0),
      ("2026-10-13", 170.0)),
     (("Q-1005-1", 150.0, "QB-40502"), ("Q-1012-1", 140.0, "QB-40588")),
     "Chimney lifts 9 to 11; night shifts placed sand without the technician."),
    ("G1", "Zone 3 drain gravel", "3 drain", SARNET, "TD-03", "F1-MEAN", "t", 2000.0, "open", GRAVEL_RULE,
     (("2026-09-08", 290.0), ("2026-09-15", 300.0), ("2026-09-22", 280.0), ("2026-09-30", 295.0),
      ("2026-10-07", 300.0), ("2026-10-14", 290.0)),
     (("D-0908-1", 290.0, "SR-7713"), ("D-0915-1", 300.0, "SR-7748"), ("D-0922-1", 280.0, "SR-7790"),
      ("D-0930-1", 295.0, "SR-7826"), ("D-1007-1", 300.0, "SR-7861"), ("D-1014-1", 290.0, "SR-7899")),
     "Toe drain, lifts 1 to 5."),
)


def lots(recs: dict, ids) -> None:
    """Add the lot records (after every other record, so the others keep their ids) and link their tests:
    ``meta.lot_id`` (the lot record), ``meta.lot`` (its code), the quantity each test represents and the
    delivery ticket."""
    for (code, material, zone, source, band_key, base_key, unit, planned, status, rule, placed, tests,
         notes) in LOTS:
        meta = {"lot": code, "sample_id": code, "material": material, "zone": zone, "source": source,
                "band_id": recs[band_key]["record_id"], "base_id": recs[base_key]["record_id"],
                "quantity_unit": unit, "planned_quantity": planned, "status": status,
                "test_frequency": dict(rule),
                "placements": [{"date": d, "quantity": q} for d, q in placed], "notes": notes}
        lot = recs["lot:" + code] = _record(next(ids), "lot", "2026-09-01T07:30:00Z", "IMO", meta)
        for sid, qty, ticket in tests:
            m = recs[sid]["meta"]
            m["lot"] = code
            m["lot_id"] = lot["record_id"]
            if qty is not None:
                m["quantity"] = qty
                m["quantity_unit"] = unit
            if ticket is not None:
                m["ticket"] = ticket


# ---------------------------------------------------------------------------
# Writing
# ---------------------------------------------------------------------------

def _json_text(records) -> str:
    return json.dumps(records, indent=1, ensure_ascii=False) + "\n"


def package_data_text(records) -> str:
    """``records.json`` of :mod:`tamis.demo`: compact JSON, ASCII only."""
    return json.dumps(records, ensure_ascii=True, separators=(",", ":")) + "\n"


def csv_text(records) -> str:
    """The records in the exchange CSV format, as the app exports them."""
    resp = json.loads(api.handle(json.dumps({"schema": 1, "op": "records_export_csv", "id": "demo",
                                             "records": records, "bom": False})))
    if not resp.get("ok"):
        raise SystemExit(f"records_export_csv refused the demo records: {resp['error']}")
    return resp["result"]["csv"]


def outputs() -> dict[Path, str]:
    records = build_records()
    return {PACKAGE_FILE: package_data_text(records), JSON_FILE: _json_text(records), CSV_FILE: csv_text(records)}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--check", action="store_true", help="only compare; exit 1 when a file is stale")
    args = ap.parse_args(argv)
    stale = []
    for path, text in outputs().items():
        old = path.read_bytes().decode("utf-8") if path.exists() else None
        if old != text:
            stale.append(path.relative_to(ROOT))
            if not args.check:
                path.write_text(text, encoding="utf-8", newline="")
    if args.check and stale:
        print("stale: " + ", ".join(map(str, stale)), file=sys.stderr)
        return 1
    if not args.check:
        print("wrote " + (", ".join(map(str, stale)) if stale else "nothing (all up to date)"))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
