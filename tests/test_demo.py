"""The demo project (invented scenario, ``demo_data/make_demo.py``).

Three layers:

1. The committed files are exactly what the generator writes now, and every
   record carries the demo markers the app removes the demo by.
2. The design is checked independently of tamis: percent passing is
   recomputed from the masses by hand (ASTM C136 cumulative method, on the
   oven-dry mass before washing), D-values with ``numpy.interp`` on log size,
   and the limits from the rule text. Each intended outcome must follow from
   these numbers with a clear margin, so the scenario does not hang on a
   rounding or an interpolation detail.
3. Each delivery evaluated through ``tamis.api.handle`` gets its intended
   verdict, failing for the intended check ids and passing the others the
   scenario names; the zone sequence gives the intended interface verdicts;
   the CLI tour prints what the API computed.

Rules and sources used by the independent checks (the same rules tamis
implements; see ``docs/criteria.md``):

- mass check within 0.3 % of the original dry mass: ASTM C136/C136M-14,
  laboratory checklist item 9 (read);
- percentages on the original dry mass including the washed fines: ASTM
  C136/C136M-14 checklist item 11 (read);
- regrading on 4.75 mm and base categories by A (> 85, 40-85, 15-40, < 15 %):
  USDA NRCS NEH 633 Ch. 26 (October 1994), design steps 3-4 (from memory);
- maximum D15F: category 2 0.7 mm, category 3
  ((40 - A)/25)(4 d85B - 0.7) + 0.7 mm, category 4 4 x d85B: NEH 633-26
  (1994) (from memory);
- minimum D15F: 4 x d15B before regrading, not less than 0.1 mm: NEH 633-26
  (1994) (from memory);
- fines at most 5 % passing 0.075 mm; segregation: maximum D90 20 mm for
  D10 < 0.5 mm, 25 mm for 0.5-1.0 mm, 30 mm for 1.0-2.0 mm, ...: NEH 633-26
  (1994) (from memory).
"""

from __future__ import annotations

import importlib.util
import io
import json
import math
import re
import uuid
from contextlib import redirect_stdout
from pathlib import Path

import numpy as np
import pytest

import tamis
from tamis import api, demo

ROOT = Path(__file__).resolve().parent.parent


def _load_generator():
    spec = importlib.util.spec_from_file_location("make_demo", ROOT / "demo_data" / "make_demo.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


GEN = _load_generator()
RECORDS = demo.load_records()
BY_ID, BY_SAMPLE = demo.index(RECORDS)
TESTS = demo.deliveries(RECORDS)
TEST_IDS = [r["meta"]["sample_id"] for r in TESTS]

# Relative margin an intended outcome must clear in the independent design
# check (our choice: larger than any difference between interpolation
# conventions on these stacks).
MARGIN = 0.03


# ----------------------------------------------------------------- 1. files

def test_committed_files_equal_a_fresh_generation():
    outputs = GEN.outputs()
    assert GEN.PACKAGE_FILE in outputs and GEN.JSON_FILE in outputs
    for path, text in outputs.items():
        assert path.exists(), f"{path.name} is missing: run python demo_data/make_demo.py"
        assert path.read_bytes().decode("utf-8") == text, f"{path.name} is stale: run python demo_data/make_demo.py"


def test_generation_is_deterministic():
    assert GEN.outputs() == GEN.outputs()
    assert GEN.build_records() == RECORDS


def test_scenario_size_and_markers():
    kinds = [r["kind"] for r in RECORDS]
    assert kinds.count("test") == 20 and kinds.count("band") == 2 and kinds.count("base") == 5
    assert kinds.count("lot") == 4
    assert all(demo.is_demo(r) for r in RECORDS)
    ids = [r["record_id"] for r in RECORDS]
    assert len(set(ids)) == len(ids)
    assert all(uuid.UUID(i).version == 4 for i in ids)
    sources = {r["meta"]["source"] for r in TESTS}
    assert len(sources) == 2  # two pits
    days = sorted(r["meta"]["sampled_at"] for r in TESTS)
    assert days[0][:10] == "2026-09-07" and days[-1][:10] == "2026-10-14"  # several weeks
    assert set(GEN.INTENDED) == set(TEST_IDS)


def test_links_resolve_and_retest_points_at_the_failed_test():
    for r in TESTS:
        meta = r["meta"]
        assert BY_ID[meta["band_id"]]["kind"] == "band"
        assert BY_ID[meta["base_id"]]["kind"] == "base"
    retest = BY_SAMPLE["Q-0916-1R"]
    assert BY_ID[retest["meta"]["retest_of"]]["meta"]["sample_id"] == "Q-0916-1"


def test_removing_the_demo_keeps_user_records():
    user = {"record_id": str(uuid.uuid4()), "kind": "test", "meta": {"project": demo.PROJECT, "sample_id": "U-1"}}
    flagged_other = {"record_id": str(uuid.uuid4()), "kind": "test", "meta": {"demo": True, "project": "Mine"}}
    kept = [r for r in RECORDS + [user, flagged_other] if not demo.is_demo(r)]
    assert kept == [user, flagged_other]  # both markers are needed, so a user's record is never removed


# ------------------------------------------------- 2. independent design check

def passing_from_masses(test: dict) -> tuple[np.ndarray, np.ndarray]:
    """(openings mm, percent passing) by the cumulative method on the dry mass."""
    d = np.array([s["opening_mm"] for s in test["sieves"]], dtype=float)
    r = np.array([s["retained_g"] for s in test["sieves"]], dtype=float)
    order = np.argsort(-d)
    d, r = d[order], r[order]
    return d, 100.0 - 100.0 * np.cumsum(r) / test["dry_mass_g"]


def curve_of(test: dict) -> tuple[np.ndarray, np.ndarray]:
    if "passing" in test:
        pts = sorted(((p["opening_mm"], p["passing_pct"]) for p in test["passing"]), reverse=True)
        return np.array([a for a, _ in pts]), np.array([b for _, b in pts])
    return passing_from_masses(test)


def size_at(d: np.ndarray, p: np.ndarray, pct: float) -> float | None:
    """D_pct [mm], log-linear (numpy.interp on log size); None outside the curve.
    Where the curve is flat at pct (several sieves at 100 %), the finest size."""
    if not (p.min() <= pct <= p.max()):
        return None
    asc_p, asc_logd = p[::-1], np.log(d[::-1])
    # np.interp needs increasing x: drop repeated percentages, keeping the finest size.
    keep = np.concatenate(([True], np.diff(asc_p) > 0))
    return float(np.exp(np.interp(pct, asc_p[keep], asc_logd[keep])))


def passing_at(d, p, size_mm):
    return float(np.interp(math.log(size_mm), np.log(d[::-1]), p[::-1]))


def independent_limits(sample: dict, base: dict, regrade: bool = True) -> dict:
    """Limits of NEH 633-26 (1994) for this sample and base, computed here.
    ``regrade=False``: the base is read on its own curve (a clean filter zone
    used as the base of the next zone, as ``tamis.project.zones`` does by default)."""
    bd, bp = curve_of(base)
    p475 = passing_at(bd, bp, 4.75) if (regrade and bd.max() >= 4.75) else 100.0
    keep = bd <= 4.75 if regrade else np.ones_like(bd, dtype=bool)
    rd, rp = bd[keep], np.minimum(100.0, bp[keep] * 100.0 / p475)
    if regrade and rd.max() < 4.75:
        rd, rp = np.concatenate(([4.75], rd)), np.concatenate(([100.0], rp))
    a = passing_at(rd, rp, 0.075)
    d85b = size_at(rd, rp, 85.0)
    if a > 85:
        raise AssertionError("no demo base is category 1")
    if a >= 40:
        d15_max = 0.7
    elif a >= 15:
        d15_max = max(0.7, (40.0 - a) / 25.0 * (4.0 * d85b - 0.7) + 0.7)
    else:
        d15_max = 4.0 * d85b
    d15_min = max(0.1, 4.0 * size_at(bd, bp, 15.0))
    sd, sp = curve_of(sample)
    d10 = size_at(sd, sp, 10.0)
    rows = ((0.5, 20.0), (1.0, 25.0), (2.0, 30.0), (5.0, 40.0), (10.0, 50.0), (math.inf, 60.0))
    d90_max = next(m for edge, m in rows if d10 <= edge)
    return {"a_pct": a, "d15_max_mm": d15_max, "d15_min_mm": d15_min, "d90_max_mm": d90_max, "d10_mm": d10}


def design_values(rec: dict) -> dict:
    t = rec["test"]
    d, p = passing_from_masses(t)
    lim = independent_limits(t, BY_ID[rec["meta"]["base_id"]]["test"])
    on_sieves = t["washed_dry_mass_g"]
    balance = abs(sum(s["retained_g"] for s in t["sieves"]) + t["pan_g"] - on_sieves) / t["dry_mass_g"] * 100
    band = BY_ID[rec["meta"]["band_id"]]["band"]["limits"]
    band_margin = min(min(passing_at(d, p, b["opening_mm"]) - b["min_pct"], b["max_pct"] - passing_at(d, p, b["opening_mm"]))
                      for b in band)
    return {"fines_pct": float(p[-1]), "d15_mm": size_at(d, p, 15.0), "d90_mm": size_at(d, p, 90.0),
            "balance_pct": balance, "band_margin_pct": band_margin, **lim}


def design_outcomes(v: dict) -> dict:
    """check id -> (holds, relative margin) from the independent numbers."""
    def rel(value, limit, le=True):
        return (value <= limit if le else value >= limit), abs(value - limit) / limit
    return {
        "filter.retention": rel(v["d15_mm"], v["d15_max_mm"]),
        "filter.permeability": rel(v["d15_mm"], v["d15_min_mm"], le=False),
        "filter.fines": rel(v["fines_pct"], 5.0),
        "filter.segregation": rel(v["d90_mm"], v["d90_max_mm"]),
        "qa.mass_balance": rel(v["balance_pct"], 0.3),
        # percentage points, not relative; a sieve at 100-100 % has no margin by design
        "band.compliance": (v["band_margin_pct"] >= 0, None),
    }


@pytest.mark.parametrize("sid", TEST_IDS)
def test_design_gives_the_intended_outcome_with_margin(sid):
    intended = GEN.INTENDED[sid]
    outcomes = design_outcomes(design_values(BY_SAMPLE[sid]))
    for cid, (holds, margin) in outcomes.items():
        expect_fail = cid in intended["fails"]
        assert holds is not expect_fail, f"{sid}: {cid} holds={holds}, intended to fail={expect_fail}"
        if margin is not None:
            assert margin >= MARGIN, f"{sid}: {cid} is decided by a margin of only {margin:.1%}"


def test_design_numbers_of_the_story():
    v = design_values(BY_SAMPLE["S-0918-T"])
    assert v["a_pct"] == pytest.approx(66.0 / 94.0 * 100.0)  # core regraded on 4.75 mm: category 2
    assert 0.72 < v["d15_mm"] < 0.77 and v["d15_max_mm"] == 0.7 and v["band_margin_pct"] >= 0
    blanket = design_values(BY_SAMPLE["S-0918-B"])
    assert 15 <= blanket["a_pct"] < 40 and blanket["d15_max_mm"] > 2.0  # foundation: category 3
    assert design_values(BY_SAMPLE["Q-0916-1"])["balance_pct"] > 0.8
    seg = design_values(BY_SAMPLE["D-0922-1"])
    assert seg["d10_mm"] < 0.5 and seg["d90_mm"] > 25.0
    lot = [design_values(BY_SAMPLE[s])["fines_pct"] for s in ("Q-L11-SP", "Q-L11-DL", "Q-L11-CP")]
    assert lot[0] < lot[1] < 5.0 < lot[2]


# --------------------------------------------------------- 3. through the API

@pytest.fixture(scope="module")
def evaluated():
    out = {}
    for rec in TESTS:
        resp = demo.call(demo.evaluate_request(rec, BY_ID, rec["meta"]["sample_id"]))
        assert resp["ok"], resp.get("error")
        out[rec["meta"]["sample_id"]] = resp["result"]
    return out


@pytest.mark.parametrize("sid", TEST_IDS)
def test_each_delivery_gets_its_intended_verdict_for_the_intended_reason(evaluated, sid):
    intended = GEN.INTENDED[sid]
    res = evaluated[sid]
    status = {}
    for c in res["checks"]:
        if c.get("subject", "sample") == "sample":
            status.setdefault(c["id"], set()).add(c["status"])
    assert res["verdict"] == intended["verdict"], (sid, [c for c in res["checks"] if c["status"] != "pass"])
    failing = {c["id"] for c in res["checks"] if c["status"] == "fail"}
    assert failing == set(intended["fails"]), sid
    for cid in intended.get("passes", []):
        assert status.get(cid) == {"pass"}, (sid, cid, status.get(cid))
    if intended["verdict"] == "accept":
        assert {c["status"] for c in res["checks"]} <= {"pass", "not_applicable"}
        for cid in ("filter.retention", "filter.permeability", "filter.fines", "qa.mass_balance",
                    "band.compliance", "filter.segregation"):
            assert status.get(cid) == {"pass"}, (sid, cid)
    assert res["notice"] == tamis.SCREENING_NOTICE


@pytest.mark.parametrize("sid", TEST_IDS)
def test_core_numbers_agree_with_the_independent_computation(evaluated, sid):
    v = design_values(BY_SAMPLE[sid])
    res = evaluated[sid]
    assert res["sample"]["fines_pct"] == pytest.approx(v["fines_pct"], rel=1e-9)
    assert res["sample"]["d_mm"]["D15"] == pytest.approx(v["d15_mm"], rel=1e-9)
    assert res["sample"]["d_mm"]["D90"] == pytest.approx(v["d90_mm"], rel=1e-9)
    assert res["limits"]["d15_max_mm"] == pytest.approx(v["d15_max_mm"], rel=1e-9)
    assert res["limits"]["d15_min_mm"] == pytest.approx(v["d15_min_mm"], rel=1e-9)
    assert res["limits"]["d90_max_mm"] == v["d90_max_mm"]
    assert res["a_pct"] == pytest.approx(v["a_pct"], rel=1e-9)
    mb = next(c for c in res["checks"] if c["id"] == "qa.mass_balance")
    assert mb["value"] == pytest.approx(v["balance_pct"], rel=1e-6)


def test_zone_sequence_gives_the_intended_interface_verdicts():
    resp = demo.call(demo.zones_request(BY_SAMPLE, req_id="zones"))
    assert resp["ok"], resp.get("error")
    inter = resp["result"]["interfaces"]
    assert [(i["base"], i["filter"]) for i in inter] == [
        (a[0], b[0]) for a, b in zip(demo.ZONE_SEQUENCE, demo.ZONE_SEQUENCE[1:])]
    assert tuple(i["verdict"] for i in inter) == GEN.INTENDED_INTERFACES
    assert [i["base_category"] for i in inter] == [2, 4, 4]
    for k, (i, (fine, coarse)) in enumerate(zip(inter, zip(demo.ZONE_SEQUENCE, demo.ZONE_SEQUENCE[1:]))):
        # the core (the first zone) is regraded; a filter zone used as a base is not
        lim = independent_limits(BY_SAMPLE[coarse[1]]["test"], BY_SAMPLE[fine[1]]["test"], regrade=k == 0)
        assert i["limits"]["d15_max_mm"] == pytest.approx(lim["d15_max_mm"], rel=1e-9)
        assert i["limits"]["d15_min_mm"] == pytest.approx(lim["d15_min_mm"], rel=1e-9)
        ret = next(c for c in i["checks"] if c["id"] == "filter.retention")
        d, p = curve_of(BY_SAMPLE[coarse[1]]["test"])
        assert lim["d15_min_mm"] * (1 + MARGIN) < size_at(d, p, 15.0) < lim["d15_max_mm"] * (1 - MARGIN)
        assert ret["value"] == pytest.approx(size_at(d, p, 15.0), rel=1e-9)


def test_zone_sequence_rejects_when_a_zone_is_left_out():
    """Drain gravel straight on the core: far too coarse to retain it."""
    seq = [demo.ZONE_SEQUENCE[0], demo.ZONE_SEQUENCE[2]]
    req = {"schema": 1, "op": "zones", "id": 1, "rules": demo.RULES,
           "zones": [{"name": n, "test": BY_SAMPLE[k]["test"]} for n, k in seq]}
    resp = demo.call(req)
    assert resp["ok"]
    ret = next(c for c in resp["result"]["interfaces"][0]["checks"] if c["id"] == "filter.retention")
    assert resp["result"]["interfaces"][0]["verdict"] == "reject" and ret["status"] == "fail"


# ------------------------------------------------------------------ 4. CLI

def test_cli_tour_prints_the_computed_verdicts(evaluated):
    from tamis.cli import main
    buf = io.StringIO()
    with redirect_stdout(buf):
        rc = main(["demo"])
    text = buf.getvalue()
    assert rc == 0
    assert demo.PROJECT in text and tamis.SCREENING_NOTICE in text
    for sid, res in evaluated.items():
        line = next(ln for ln in text.splitlines() if ln.strip().startswith(sid + " "))
        assert re.search(rf"\b{res['verdict']}\b", line), line
        for c in res["checks"]:
            if c["status"] == "fail":
                assert c["id"] in line, (sid, c["id"])
    assert "retest of Q-0916-1" in text
    assert re.search(r"lot L11 fines: 3\.1 % \(stockpile\) -> 4\.2 % \(delivery\) -> 5\.7 % \(compacted\)", text)
    for a, b in zip(demo.ZONE_SEQUENCE, demo.ZONE_SEQUENCE[1:]):
        assert f"{a[0]} -> {b[0]}: accept" in text


def test_cli_records_option_prints_the_records():
    from tamis.cli import main
    buf = io.StringIO()
    with redirect_stdout(buf):
        assert main(["demo", "--records"]) == 0
    assert json.loads(buf.getvalue()) == RECORDS


# ------------------------------------------------------------ 5. CSV form

def test_demo_csv_imports_back_to_the_same_records():
    csv_path = ROOT / "demo_data" / "demo_project.csv"
    text = csv_path.read_bytes().decode("utf-8")
    resp = json.loads(api.handle(json.dumps({"schema": 1, "op": "records_import_csv", "id": 1,
                                             "csv": text, "existing": []})))
    assert resp["ok"], resp.get("error")
    got = {r["record_id"]: r for r in resp["result"]["records"]}
    assert sorted(resp["result"]["added"]) == sorted(BY_ID)
    for rid, rec in BY_ID.items():
        for key in ("kind", "rev", "meta", "test", "band", "deleted", "updated_at", "updated_by"):
            assert got[rid][key] == rec[key], (rec["meta"]["sample_id"], key)
