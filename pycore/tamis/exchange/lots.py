"""The ``lot_summary`` op: the lots of a set of records, with their tests, testing frequency, trends,
stage comparison, drift and percent within limits.

Records are those of ``docs/records.md``: lots (kind ``lot``, their fields in
``meta``) and tests naming their lot by ``meta.lot_id`` (the lot's record id)
or, for records made before lots were records, by the lot's code in
``meta.lot`` (matched to the lot record with that code; a code no lot record
carries becomes a lot of its own, without a rule). Each test of a lot is
evaluated as the ``evaluate`` op would (its own band, base soil and rules, else
the lot's) through :func:`tamis.project.evaluate.evaluate_reduced`; the counting
and comparing is :mod:`tamis.project.lots`, the PWL :mod:`tamis.project.pwl`.

Figures are unrounded; verdicts and statuses were decided on them. Frequency,
trends and PWL are screening aids: the project's specification says how often
to test and how a lot is accepted.
"""

from __future__ import annotations

import math
import re

from .. import SCREENING_NOTICE
from ..checks import Finding
from ..errors import InputError, join, number, require_list, require_mapping
from ..lab.reduction import reduce_test
from ..project import lots as L
from ..project.evaluate import evaluate_reduced
from ..project.pwl import NOTICE as PWL_NOTICE
from ..project.pwl import pwl
from .record import check_record, content_key
from .summaries import FileParts, error_note

_DAY_RE = re.compile(r"\d{4}-\d{2}-\d{2}", re.ASCII)


def _day(v, path: str) -> str:
    if not isinstance(v, str) or not _DAY_RE.fullmatch(v):
        raise InputError("bad_date", f"{path} must be a date YYYY-MM-DD, got {v!r}.", path)
    return v


def _opt_text(meta: dict, key: str, path: str):
    v = meta.get(key)
    if v is None:
        return None
    if not isinstance(v, str):
        raise InputError("not_a_string", f"{join(path, key)} must be text.", join(path, key))
    return v.strip() or None


def _unit(meta: dict, key: str, path: str):
    v = meta.get(key)
    if v is None:
        return None
    if v not in L.UNITS:
        raise InputError("unknown_choice", f"{join(path, key)} must be one of {', '.join(L.UNITS)}; got {v!r}.",
                         join(path, key))
    return v


def _bool(obj: dict, key: str, path: str) -> bool:
    v = obj.get(key, False)
    if v is None:
        return False
    if not isinstance(v, bool):
        raise InputError("not_a_boolean", f"{join(path, key)} must be true or false.", join(path, key))
    return v


def parse_rule(obj, path: str) -> L.Rule | None:
    """``meta.test_frequency`` of a lot -> :class:`tamis.project.lots.Rule` (None when absent)."""
    if obj is None:
        return None
    require_mapping(obj, path)
    known = {"per_quantity", "quantity_unit", "per_day", "per_source", "example", "id", "label"}
    for k in obj:
        if k not in known:
            raise InputError("unknown_field", f"{join(path, k)} is not a testing-rule field; the fields are "
                             f"{', '.join(sorted(known))}.", join(path, k))
    per = number(obj, "per_quantity", path, required=False, exclusive_minimum=0.0)
    unit = _unit(obj, "quantity_unit", path)
    if per is not None and unit is None:
        raise InputError("missing_field", f"{join(path, 'quantity_unit')} is required with per_quantity "
                         f"(m3 or t).", join(path, "quantity_unit"))
    return L.Rule(per, unit, _bool(obj, "per_day", path), _bool(obj, "per_source", path), _bool(obj, "example", path))


def _placements(v, path: str) -> list[L.Placement]:
    if v is None:
        return []
    if not isinstance(v, list):
        raise InputError("not_a_list", f"{path} must be a list.", path)
    out = []
    for i, p in enumerate(v):
        pp = join(path, i)
        require_mapping(p, pp)
        out.append(L.Placement(_day(p.get("date"), join(pp, "date")),
                               number(p, "quantity", pp, minimum=0.0), _opt_text(p, "source", pp)))
    return out


class _Lot:
    def __init__(self, rid, code, meta, path):
        self.record_id = rid
        self.code = code
        self.meta = meta
        self.path = path
        self.tests: list[dict] = []


def _lot_of(rec, path, lots_by_id, lots_by_code, virtual):
    meta = rec["meta"]
    lid = meta.get("lot_id")
    if lid is not None:
        if not isinstance(lid, str):
            raise InputError("not_a_string", f"{join(path, 'meta.lot_id')} must be text (a lot's record id).",
                             join(path, "meta.lot_id"))
        if lid in lots_by_id:
            return lots_by_id[lid]
    code = _opt_text(meta, "lot", join(path, "meta"))
    if code is None:
        if lid is not None:  # the lot is not among the records: keep its tests together under its id
            return virtual.setdefault("id:" + lid, _Lot(lid, None, {}, None))
        return None
    if code in lots_by_code:
        return lots_by_code[code]
    return virtual.setdefault("code:" + code, _Lot(None, code, {}, None))


def _opening_key(d: float) -> float:
    return float(f"{d:.6g}")


def _point(rec, lot, parts, index, path, findings, lot_unit) -> tuple[L.TestPoint, dict]:
    meta = rec["meta"]
    mp = join(path, "meta")
    q = number(meta, "quantity", mp, required=False, minimum=0.0)
    qu = _unit(meta, "quantity_unit", mp)
    if q is not None and qu is None:
        raise InputError("missing_field", f"{join(mp, 'quantity_unit')} is required with quantity (m3 or t).",
                         join(mp, "quantity_unit"))
    if q is not None and lot_unit is not None and qu != lot_unit:
        findings.append(Finding("warning", "quantity_unit_differs",
                                f"{meta.get('sample_id') or rec['record_id']}: quantity in {qu}, the lot counts "
                                f"{lot_unit}; left out of the placed quantity (no density to convert).",
                                join(mp, "quantity_unit")))
    stage = meta.get("sampling_point") if meta.get("sampling_point") in L.STAGES else None
    sampled = meta.get("sampled_at") if isinstance(meta.get("sampled_at"), str) else None
    day = sampled[:10] if sampled and _DAY_RE.fullmatch(sampled[:10]) else None
    values = {"fines_pct": None, "d15_mm": None, "d85_mm": None, "cu": None, "passing_pct": {}, "verdict": None,
              "failing": (), "limits": {}}
    note = None
    test = rec["test"]
    if test is None:
        note = "no test data yet"
    else:
        band_id = meta.get("band_id") or lot.meta.get("band_id")
        base_id = meta.get("base_id") or lot.meta.get("base_id")
        rules = meta.get("rules") if isinstance(meta.get("rules"), dict) else (
            lot.meta.get("rules") if isinstance(lot.meta.get("rules"), dict) else None)
        sample, note = _attempt(reduce_test, test, "sample")
        base = band = None
        missing = []
        for ref, kind, part in ((band_id, "band", "band"), (base_id, "base", "test")):
            if ref is None:
                continue
            other = index.get(ref) if isinstance(ref, str) else None
            if other is None or other["kind"] != kind or other["deleted"] or other[part] is None:
                missing.append(f"{kind} {ref} is not in the records")
            elif note is None:
                got, note = (parts.base if kind == "base" else parts.band)(ref)
                if kind == "base":
                    base = got
                else:
                    band = got
        if note is None:
            ev, note = _attempt(evaluate_reduced, sample, base, band, rules)
            if ev is not None:
                g = sample.gradation
                d = g.get("d_mm") or {}
                values.update(fines_pct=g.get("fines_pct"), d15_mm=d.get("D15"), d85_mm=d.get("D85"),
                              cu=g.get("cu"),
                              passing_pct={_opening_key(p["opening_mm"]): p["passing_pct"] for p in g["points"]},
                              verdict=None if missing else ev.verdict,
                              failing=tuple(sorted({c.id for c in ev.checks if c.status == "fail"})),
                              limits=dict(ev.outcome.limits))
                if missing:
                    note = "no verdict: " + "; ".join(missing)
            values["band"] = band
    pt = L.TestPoint(rec["record_id"], str(meta.get("sample_id") or ""), sampled, day, stage,
                     _opt_text(meta, "source", mp), q, qu, _opt_text(meta, "ticket", mp),
                     _finite(values["fines_pct"]), _finite(values["d15_mm"]), _finite(values["d85_mm"]),
                     _finite(values["cu"]), values["passing_pct"], values["verdict"], values["failing"],
                     values["limits"], False, note)
    return pt, values


def _attempt(fn, *args):
    try:
        return fn(*args), None
    except Exception as exc:  # noqa: BLE001 - as the calc columns do: the note says what the core said
        return None, error_note(exc)


def _finite(v):
    return v if isinstance(v, (int, float)) and math.isfinite(v) else None


def _band_limits(band) -> list[dict]:
    if band is None:
        return []
    return [{"opening_mm": lim.opening_mm, "min_pct": lim.min_pct, "max_pct": lim.max_pct} for lim in band.limits]


def _point_dict(t: L.TestPoint, limits: dict, band_rows: list[dict]) -> dict:
    flags = []
    fmax = limits.get("fines_max_pct")
    if t.fines_pct is not None and fmax is not None and t.fines_pct > fmax:
        flags.append("fines_pct")
    if t.d15_mm is not None:
        if limits.get("d15_max_mm") is not None and t.d15_mm > limits["d15_max_mm"]:
            flags.append("d15_mm")
        elif limits.get("d15_min_mm") is not None and t.d15_mm < limits["d15_min_mm"]:
            flags.append("d15_mm")
    passing = []
    for b in band_rows:
        v = t.passing_pct.get(_opening_key(b["opening_mm"]))
        out = v is not None and ((b["min_pct"] is not None and v < b["min_pct"])
                                 or (b["max_pct"] is not None and v > b["max_pct"]))
        passing.append({"opening_mm": b["opening_mm"], "passing_pct": v, "outside_band": bool(out)})
    return {"record_id": t.record_id, "sample_id": t.sample_id, "sampled_at": t.sampled_at, "stage": t.stage,
            "source": t.source, "ticket": t.ticket, "quantity": t.quantity, "quantity_unit": t.quantity_unit,
            "fines_pct": t.fines_pct, "d15_mm": t.d15_mm, "d85_mm": t.d85_mm, "cu": t.cu, "passing": passing,
            "verdict": t.verdict, "failing_checks": list(t.failing), "beyond_limits": flags,
            "counted": t.counted, "note": t.note, "failed": t.verdict == "reject"}


def _sort_key(t: L.TestPoint):
    return (t.sampled_at or "9999", L.STAGES.index(t.stage) if t.stage else 9, t.sample_id, t.record_id)


def _settings(req) -> dict:
    s = req.get("settings") or {}
    require_mapping(s, "settings")
    for k in s:
        if k not in L.DEFAULTS:
            raise InputError("unknown_field", f"settings.{k} is not a lot setting; the settings are "
                             f"{', '.join(L.DEFAULTS)}.", f"settings.{k}")
    out = dict(L.DEFAULTS)
    out["creep_margin_pct"] = number(s, "creep_margin_pct", "settings", required=False, minimum=0.0,
                                     default=L.DEFAULTS["creep_margin_pct"])
    out["d85_loss_share"] = number(s, "d85_loss_share", "settings", required=False, minimum=0.0, maximum=1.0,
                                   default=L.DEFAULTS["d85_loss_share"])
    k = s.get("drift_k", L.DEFAULTS["drift_k"])
    if isinstance(k, bool) or not isinstance(k, int) or k < 2:
        raise InputError("out_of_range", f"settings.drift_k must be a whole number 2 or more, got {k!r}.",
                         "settings.drift_k")
    out["drift_k"] = k
    return out


def lot_summary(records: list[dict], as_of: str | None, settings: dict, trends: bool = True,
                only: str | None = None):
    """The summary of every lot in ``records`` (checked records); see :func:`op_lot_summary`."""
    findings: list[Finding] = []
    index = {r["record_id"]: r for r in records}
    lots_by_id, lots_by_code = {}, {}
    for i, r in enumerate(records):
        if r["kind"] != "lot" or r["deleted"]:
            continue
        path = f"records[{i}]"
        code = _opt_text(r["meta"], "lot", join(path, "meta")) or r["record_id"][:8]
        lot = _Lot(r["record_id"], code, r["meta"], path)
        lots_by_id[r["record_id"]] = lot
        lots_by_code.setdefault(code, lot)
    virtual: dict = {}
    superseded = {r["meta"].get("retest_of") for r in records
                  if r["kind"] == "test" and not r["deleted"] and isinstance(r["meta"].get("retest_of"), str)}
    unassigned = 0
    for i, r in enumerate(records):
        if r["kind"] != "test" or r["deleted"]:
            continue
        lot = _lot_of(r, f"records[{i}]", lots_by_id, lots_by_code, virtual)
        if lot is None:
            unassigned += 1
        else:
            lot.tests.append((i, r))
    parts = FileParts(index)
    out_lots, by_material = [], {}
    all_lots = list(lots_by_id.values()) + list(virtual.values())
    for lot in all_lots:
        if only is not None and lot.record_id != only and lot.code != only:
            continue
        one, points, limits = _one_lot(lot, index, parts, superseded, as_of, settings, trends, findings,
                                       _material_rule(lot, all_lots))
        out_lots.append(one)
        got = by_material.setdefault(one["material"] or "", ([], []))
        got[0].extend(points)
        if limits:
            got[1].append(limits)
    out_lots.sort(key=lambda x: (x["lot"] or "", x["lot_id"] or ""))
    if only is not None and not out_lots:
        raise InputError("unknown_lot", f"lot_id {only!r} names no lot in the records (give a lot's record id "
                                        "or its code).", "lot_id")
    materials = {}
    for x in out_lots:
        m = materials.setdefault(x["material"] or "", {"material": x["material"], "lots": 0, "tests": 0,
                                                       "open": 0, "ok": 0, "due": 0, "overdue": 0, "no_rule": 0,
                                                       "warnings": 0, "drift": []})
        m["lots"] += 1
        m["tests"] += x["n_tests"]
        m["open"] += x["status"] == "open"
        m[x["frequency"]["status"]] += 1
        m["warnings"] += len(x["warnings"])
    for key, (points, limits) in by_material.items():
        if trends and only is None and limits and key in materials:  # the material's tests of every lot, in order
            materials[key]["drift"] = L.drift_warnings(sorted(points, key=_sort_key), limits[-1],
                                                       settings["drift_k"], "material")
    due = [{"lot_id": x["lot_id"], "lot": x["lot"], "status": x["frequency"]["status"],
            "messages": [it["message"] for it in x["frequency"]["items"] if it["status"] != "ok"]}
           for x in out_lots if x["frequency"]["status"] in ("due", "overdue")]
    result = {"lots": out_lots, "materials": sorted(materials.values(), key=lambda m: m["material"] or ""),
              "due": due, "unassigned_tests": unassigned, "as_of": as_of, "settings": settings,
              "notice": SCREENING_NOTICE + " " + PWL_NOTICE}
    return result, findings


def _material_rule(lot: _Lot, all_lots) -> tuple | None:
    """For a lot without a testing rule: the rule of the first lot (by code) of the same material that has
    one, as ``(meta, path, code)``; None when the lot has its own rule or no such lot exists. The project's
    rule is per material; a lot may state its own."""
    if lot.meta.get("test_frequency") is not None:
        return None
    mat = lot.meta.get("material")
    if not isinstance(mat, str) or not mat.strip():
        return None
    for other in sorted((x for x in all_lots if x.path is not None), key=lambda x: (x.code or "", x.record_id)):
        if other is not lot and other.meta.get("material") == mat and other.meta.get("test_frequency") is not None:
            return other.meta["test_frequency"], join(join(other.path, "meta"), "test_frequency"), other.code
    return None


def _one_lot(lot: _Lot, index, parts, superseded, as_of, settings, trends, findings, inherited=None) -> dict:
    meta, path = lot.meta, lot.path or "lot"
    mp = join(path, "meta")
    unit = _unit(meta, "quantity_unit", mp)
    rule_path = join(mp, "test_frequency")
    rule_from = "lot" if meta.get("test_frequency") is not None else None
    rule_obj = meta.get("test_frequency")
    if inherited is not None:
        rule_obj, rule_path, code = inherited
        rule_from = f"material (lot {code})"
    rule = parse_rule(rule_obj, rule_path)
    if rule is not None and rule.quantity_unit is not None and unit is not None and rule.quantity_unit != unit:
        raise InputError("unit_mismatch", f"{join(mp, 'test_frequency.quantity_unit')} is {rule.quantity_unit} "
                         f"but the lot counts {unit}.", join(mp, "test_frequency.quantity_unit"))
    if unit is None and rule is not None:
        unit = rule.quantity_unit
    placements = _placements(meta.get("placements"), join(mp, "placements"))
    planned = number(meta, "planned_quantity", mp, required=False, minimum=0.0)
    status = meta.get("status", "open")
    if status not in ("open", "closed"):
        raise InputError("unknown_choice", f"{join(mp, 'status')} must be open or closed; got {status!r}.",
                         join(mp, "status"))
    lot_source = _opt_text(meta, "source", mp)
    points, band, limits = [], None, {}
    for i, r in lot.tests:
        tp = f"records[{i}]"
        if trends:
            pt, vals = _point(r, lot, parts, index, tp, findings, unit)
            if vals.get("band") is not None:
                band = vals["band"]
            if pt.limits:
                limits = pt.limits
        else:
            pt = _light_point(r, tp, findings, unit)
        counted = (r["test"] is not None and r["record_id"] not in superseded and pt.stage in L.COUNTED_STAGES)
        note = "superseded" if r["record_id"] in superseded else pt.note
        points.append(L.TestPoint(**{**pt.__dict__, "counted": counted, "note": note}))
    points.sort(key=_sort_key)
    freq = L.frequency_status(rule, unit, placements, points, as_of, status == "closed", lot_source)
    band_rows = _band_limits(band)
    out = {"lot_id": lot.record_id, "lot": lot.code, "has_record": lot.path is not None,
           "material": _opt_text(meta, "material", mp) or _first(points, lot, "material"),
           "zone": _opt_text(meta, "zone", mp) or _first(points, lot, "zone"),
           "source": lot_source, "band_id": _opt_text(meta, "band_id", mp), "base_id": _opt_text(meta, "base_id", mp),
           "status": status, "planned_quantity": planned, "quantity_unit": unit,
           "placed_quantity": freq.placed_quantity,
           "represented_quantity": _represented(points, unit),
           "rule": None if rule is None else {"per_quantity": rule.per_quantity, "quantity_unit": rule.quantity_unit,
                                              "per_day": rule.per_day, "per_source": rule.per_source,
                                              "example": rule.example, "from": rule_from},
           "frequency": freq.to_dict(), "n_tests": len(points), "n_counted": sum(p.counted for p in points)}
    if not trends:
        out.update(tests=[{"record_id": p.record_id, "sample_id": p.sample_id, "sampled_at": p.sampled_at,
                           "stage": p.stage, "counted": p.counted} for p in points],
                   warnings=[], stages=[], limits={}, band_limits=[], pwl=[])
        return out, points, limits
    stages, warns = L.stage_comparison(points, limits.get("fines_max_pct"), settings["creep_margin_pct"],
                                       settings["d85_loss_share"])
    warns += L.drift_warnings(points, limits, settings["drift_k"])
    out.update(limits=limits, band_limits=band_rows, tests=[_point_dict(p, limits, band_rows) for p in points],
               stages=stages, warnings=warns, pwl=_pwl_rows(points, limits, band_rows))
    return out, points, limits


def _first(points, lot, key):
    for _, r in lot.tests:
        v = r["meta"].get(key)
        if isinstance(v, str) and v.strip():
            return v.strip()
    return None


def _represented(points, unit):
    """The quantity the counted tests represent: tests of one delivery ticket (the same load sampled at two
    stages) count its quantity once (the largest given)."""
    by = {}
    for p in points:
        if p.quantity is not None and p.counted and p.quantity_unit == unit:
            key = ("ticket", p.ticket) if p.ticket else ("test", p.record_id)
            by[key] = max(by.get(key, 0.0), p.quantity)
    return math.fsum(by.values()) if by else None


def _light_point(rec, path, findings, unit) -> L.TestPoint:
    meta = rec["meta"]
    mp = join(path, "meta")
    q = number(meta, "quantity", mp, required=False, minimum=0.0)
    qu = _unit(meta, "quantity_unit", mp)
    stage = meta.get("sampling_point") if meta.get("sampling_point") in L.STAGES else None
    sampled = meta.get("sampled_at") if isinstance(meta.get("sampled_at"), str) else None
    day = sampled[:10] if sampled and _DAY_RE.fullmatch(sampled[:10]) else None
    return L.TestPoint(rec["record_id"], str(meta.get("sample_id") or ""), sampled, day, stage,
                       _opt_text(meta, "source", mp), q, qu, _opt_text(meta, "ticket", mp), None, None, None, None,
                       {}, None, (), {}, False, None)


def _pwl_rows(points, limits, band_rows) -> list[dict]:
    """PWL of the counted tests: fines against the fines limit of the criteria, and each band sieve against
    the band's limits there."""
    counted = [p for p in points if p.counted and p.fines_pct is not None]
    rows = []
    fmax = limits.get("fines_max_pct")
    if fmax is not None:
        r = pwl([p.fines_pct for p in counted], None, fmax)
        rows.append({"measure": "fines_pct", "opening_mm": None, "label": "fines (passing 0.075 mm)", **r})
    for b in band_rows:
        vals = [p.passing_pct.get(_opening_key(b["opening_mm"])) for p in counted]
        vals = [v for v in vals if v is not None]
        r = pwl(vals, b["min_pct"], b["max_pct"])
        rows.append({"measure": "passing_pct", "opening_mm": b["opening_mm"],
                     "label": f"passing {b['opening_mm']:g} mm", **r})
    return rows


def _check_all(recs) -> list[dict]:
    """Every record's shape checked (:func:`tamis.exchange.record.check_record`, errors at
    ``records[i]...``), without the plain-JSON and U+FFFD scans: a request is parsed JSON already, and
    nothing here is written out (those scans are for the export, and cost most of the check)."""
    out, seen = [], {}
    for i, r in enumerate(require_list(recs, "records")):
        rec = check_record(r, f"records[{i}]", check_json=False)
        j = seen.get(rec["record_id"])
        if j is not None:  # as check_records: the same id twice is the same record, or an error
            if content_key(out[j]) == content_key(rec):
                continue
            raise InputError("duplicate_id", f"records[{i}].record_id repeats the id of records[{j}] with "
                                             "different content.", f"records[{i}].record_id")
        seen[rec["record_id"]] = len(out)
        out.append(rec)
    return out


def op_lot_summary(req: dict):
    """API op ``lot_summary``: ``{"records": [...], "as_of": "YYYY-MM-DD"?, "lot_id"?, "trends"?,
    "settings"?}`` -> every lot (or one) with its frequency status, tests, trends, stage comparison,
    warnings and PWL (docs/json-contract.md)."""
    recs = _check_all(req.get("records"))
    as_of = req.get("as_of")
    if as_of is not None:
        as_of = _day(as_of, "as_of")
    only = req.get("lot_id")
    if only is not None and not isinstance(only, str):
        raise InputError("not_a_string", "lot_id must be text (a lot's record id or code).", "lot_id")
    trends = req.get("trends", True)
    if not isinstance(trends, bool):
        raise InputError("not_a_boolean", "trends must be true or false.", "trends")
    return lot_summary(recs, as_of, _settings(req), trends, only)


def op_frequency_presets(req: dict):
    """API op ``frequency_presets``: example testing rules (examples, not standards)."""
    return {"presets": [dict(p) for p in L.FREQUENCY_EXAMPLES],
            "note": "Examples of how a specification may word its testing rule, not standards: the project's "
                    "specification gives the numbers."}, []
