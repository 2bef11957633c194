"""The ``calc_*`` columns of the CSV exchange: each record's summary recomputed
with the current core.

They are written for people reading the file (D-values, Cu, fines, verdict,
failing checks) and are never read back as data (``docs/csv.md``): a reader
recomputes. :func:`compute_summary` gives the same verdict the app shows for
the same record, band, base soil and rules, because both go through the same
``evaluate`` op (:mod:`tamis.evaluation`).
"""

from __future__ import annotations

import json

from .records import _is_num, dump_json, escape_text, fmt_num

def _call(op: str, fields: dict) -> dict:
    from . import api
    return json.loads(api.handle(dump_json({"schema": api.SCHEMA, "op": op, "id": None, **fields})))


def compute_summary(rec: dict, index: dict) -> dict:
    """Recompute a record's summary with the current core, through :func:`tamis.api.handle`.

    A test is evaluated with the band (``meta.band_id``), base soil
    (``meta.base_id``) and ``meta.rules`` it names, looked up in ``index``
    (record id -> record, the same file). When a named band or base is not
    there, no verdict is given (a verdict without that check could read as
    a pass); D-values still are. A base soil gets its gradation only.

    Returns ``{"d_mm": {...}|None, "cu", "fines_pct", "verdict", "failing_checks",
    "note", "core_version"}``; numbers unrounded, ``None`` when not computed.
    """
    out = {"d_mm": None, "cu": None, "fines_pct": None, "verdict": None, "failing_checks": [],
           "note": None, "core_version": None}
    test = rec["test"]
    if rec["kind"] == "band":
        return out
    if rec["deleted"]:
        out["note"] = "deleted record: not computed"
        return out
    if test is None:
        out["note"] = "no test data yet"
        return out
    fields, missing = {"sample": test}, []
    if rec["kind"] == "test":
        meta = rec["meta"]
        for key, kind, field, part in (("band_id", "band", "band", "band"), ("base_id", "base", "base", "test")):
            ref = meta.get(key)
            if ref is None:
                continue
            other = index.get(ref) if isinstance(ref, str) else None
            if other is None or other["kind"] != kind or other["deleted"] or other[part] is None:
                missing.append(f"meta.{key} names {ref}, which is not a {kind} record with data in this file")
            else:
                fields[field] = other[part]
        if isinstance(meta.get("rules"), dict):
            fields["rules"] = meta["rules"]
    if rec["kind"] == "base" or missing:
        resp = _call("gradation", {"test": test})
        grad = resp.get("result") if resp.get("ok") else None
    else:
        resp = _call("evaluate", fields)
        res = resp.get("result") if resp.get("ok") else None
        grad = res.get("sample") if res else None
        if res:
            out["verdict"] = res.get("verdict")
            out["failing_checks"] = sorted({c.get("id") for c in res.get("checks", [])
                                            if c.get("status") == "fail"})
    if not resp.get("ok"):
        err = resp.get("error", {})
        out["note"] = f"not computed: {err.get('field') or 'test'}: {err.get('message')}"
        return out
    out["core_version"] = resp.get("core_version")
    if isinstance(grad, dict):
        d = grad.get("d_mm") or {}
        out["d_mm"] = {k: d.get(k) for k in ("D10", "D15", "D60", "D85")}
        out["cu"] = grad.get("cu")
        out["fines_pct"] = grad.get("fines_pct")
    if missing:
        out["note"] = "no verdict: " + "; ".join(missing)
    return out


#: Significant digits of the calc columns. They are for people (display
#: rounding only; verdicts were decided on unrounded values), and rounding
#: keeps the app (Pyodide) and the office (CPython) byte-identical although
#: their ``math.log``/``math.exp`` may differ in the last binary digit.
CALC_DIGITS = 6


def display_num(v: float) -> str:
    """``v`` rounded to :data:`CALC_DIGITS` significant digits, written shortest."""
    return fmt_num(float(f"{v:.{CALC_DIGITS}g}"))


def summary_cells(s: dict) -> dict:
    """The ``calc_*`` cells of a summary (blank cells left out)."""
    c = {}
    for k, v in (s["d_mm"] or {}).items():
        if _is_num(v):
            c[f"calc_{k.lower()}_mm"] = display_num(v)
    for k, col in (("cu", "calc_cu"), ("fines_pct", "calc_fines_pct")):
        if _is_num(s[k]):
            c[col] = display_num(s[k])
    if s["verdict"]:
        c["calc_verdict"] = escape_text(s["verdict"])
    if s["failing_checks"]:
        c["calc_failing_checks"] = escape_text(" ".join(s["failing_checks"]))
    if s["note"]:
        c["calc_note"] = escape_text(s["note"])
    if s["core_version"]:
        c["calc_core_version"] = escape_text(s["core_version"])
    return c


def summaries_for(records: list[dict], context=()) -> dict:
    """record id -> calc cells, each record looked up against the others (then ``context``)."""
    index = {r["record_id"]: r for r in context}
    index.update({r["record_id"]: r for r in records})
    return {r["record_id"]: summary_cells(compute_summary(r, index)) for r in records if r["kind"] != "band"}
