"""The ``calc_*`` columns of the CSV exchange: each record's summary recomputed
with the current core.

They are written for people reading the file (D-values, Cu, fines, verdict,
failing checks) and are never read back as data (``docs/csv.md``): a reader
recomputes. :func:`compute_summary` gives the same verdict the app shows for
the same record, band, base soil and rules, because both go through the same
code: the app's ``evaluate`` op parses its request and calls
:func:`tamis.project.evaluate.evaluate_reduced`; here the core is called directly
(no JSON in between), with each base soil reduced and each band parsed once
per file (:class:`FileParts`). The summaries are the ones the JSON boundary
would give (``tests/test_summaries.py`` compares both, record by record).
"""

from __future__ import annotations

import math

from .. import __version__
from ..lab.bands import parse_band
from ..errors import InputError
from ..lab.reduction import reduce_test
from ..project.evaluate import evaluate_reduced
from .csv_format import escape_text, fmt_num
from .record import is_number
from .wording import advisory_lines, verdict_reasons

#: ``progress(done, total)`` is called after every this many records (and after the last).
PROGRESS_STEP = 100


def error_note(exc: Exception) -> str:
    """The ``note`` of a record the core refused: ``not computed: <field or test>: <message>``.

    An :class:`~tamis.errors.InputError` names its field; any other exception
    (a defect in the core) gives the ``internal_error`` message
    :func:`tamis.api.handle` answers with, so that one bad record never stops
    a merge and the note is the one the app would show.
    """
    if isinstance(exc, InputError):
        field, message = exc.field, exc.message
    else:
        field, message = "", (f"tamis could not compute this request ({type(exc).__name__}: {exc}). "
                              "Please report it with the input.")
    return f"not computed: {field or 'test'}: {message}"


def _attempt(fn, *args):
    """``(fn(*args), None)``, or ``(None, note)`` when the core refuses or fails."""
    try:
        return fn(*args), None
    except Exception as exc:  # noqa: BLE001 - InputError or a defect: both become the note (error_note)
        return None, error_note(exc)


class FileParts:
    """The bands and base soils of one file (``index``: record id -> record), each
    parsed or reduced once, on first use, and kept with the note of a refusal.

    The kept objects are shared by every test naming them; the core only
    reads them (:func:`tamis.project.evaluate.evaluate_reduced`).
    """

    def __init__(self, index: dict) -> None:
        self.index = index
        self._bases: dict = {}
        self._bands: dict = {}

    def base(self, record_id: str):
        """``(Reduced, None)`` of the base soil record ``record_id`` (field paths under
        ``base``), or ``(None, note)``."""
        got = self._bases.get(record_id)
        if got is None:
            got = self._bases[record_id] = _attempt(reduce_test, self.index[record_id]["test"], "base")
        return got

    def band(self, record_id: str):
        """``(Band, None)`` of the band record ``record_id`` (field paths under ``band``),
        or ``(None, note)``."""
        got = self._bands.get(record_id)
        if got is None:
            got = self._bands[record_id] = _attempt(parse_band, self.index[record_id]["band"], "band")
        return got


def _finite(v):
    """``v``, or None for NaN/infinity (what the JSON boundary writes for them)."""
    return None if isinstance(v, float) and not math.isfinite(v) else v


def compute_summary(rec: dict, index: dict, parts: FileParts | None = None) -> dict:
    """Recompute a record's summary with the current core.

    A test is evaluated with the band (``meta.band_id``), base soil
    (``meta.base_id``) and ``meta.rules`` it names, looked up in ``index``
    (record id -> record, the same file). When a named band or base is not
    there, no verdict is given (a verdict without that check could read as
    a pass); D-values still are. A base soil gets its gradation only.
    ``parts`` (a :class:`FileParts` of the same ``index``) keeps the parsed
    bands and bases between calls; without it they are parsed for this call.

    Returns ``{"d_mm": {...}|None, "cu", "fines_pct", "verdict", "failing_checks",
    "reasons", "advisory", "passing", "band_name", "base_name", "note", "core_version"}``;
    numbers unrounded (never NaN or infinity), ``None`` when not computed. A record
    the core refuses gets ``note = "not computed: <field or test>: <message>"``
    (:func:`error_note`). ``failing_checks`` are the ids of the failing checks that
    count toward the verdict; ``reasons`` says in words what decides it (failures,
    missing data, warnings; for a ``review`` with nothing deciding, that no counted
    check applies) and ``advisory`` the flagged advisory indicators
    (:mod:`tamis.exchange.wording`); ``passing`` is ``[(opening_mm, passing_pct)]``
    of the curve; ``band_name`` / ``base_name`` name the band and base soil the
    test refers to, when they are in the file.
    """
    out = {"d_mm": None, "cu": None, "fines_pct": None, "verdict": None, "failing_checks": [],
           "reasons": [], "advisory": [], "passing": [], "band_name": None, "base_name": None,
           "note": None, "core_version": None}
    test = rec["test"]
    if rec["kind"] in ("band", "lot"):
        return out
    if rec["deleted"]:
        out["note"] = "deleted record: not computed"
        return out
    if test is None:
        out["note"] = "no test data yet"
        return out
    if parts is None:
        parts = FileParts(index)
    elif parts.index is not index:
        raise ValueError("parts belongs to another index")
    refs, missing, rules = {}, [], None
    if rec["kind"] == "test":
        meta = rec["meta"]
        for key, kind, part in (("band_id", "band", "band"), ("base_id", "base", "test")):
            ref = meta.get(key)
            if ref is None:
                continue
            other = index.get(ref) if isinstance(ref, str) else None
            if other is None or other["kind"] != kind or other["deleted"] or other[part] is None:
                missing.append(f"meta.{key} names {ref}, which is not a {kind} record with data in this file")
            else:
                refs[kind] = ref
                out[f"{kind}_name"] = record_label(other)
        if isinstance(meta.get("rules"), dict):
            rules = meta["rules"]
    if rec["kind"] == "base" or missing:
        red, note = _attempt(reduce_test, test, "test")     # the gradation op's reduction
        grad = None if red is None else red.gradation
    else:
        # the evaluate op's order: the sample, the base, the band, then the checks (rules)
        sample, note = _attempt(reduce_test, test, "sample")
        base = band = ev = None
        if note is None and "base" in refs:
            base, note = parts.base(refs["base"])
        if note is None and "band" in refs:
            band, note = parts.band(refs["band"])
        if note is None:
            ev, note = _attempt(evaluate_reduced, sample, base, band, rules)
        grad = None
        if ev is not None:
            grad = sample.gradation
            out["verdict"] = ev.verdict
            out["failing_checks"] = sorted({c.id for c in ev.checks if c.status == "fail" and not c.advisory})
            # only the checks that can give a reason are turned into dicts (most tests have none)
            checks = [c.to_dict() for c in ev.checks if c.status in ("fail", "warn", "needs_data")]
            out["reasons"] = verdict_reasons(ev.verdict, checks)
            out["advisory"] = advisory_lines(checks)
    if note is not None:
        out["note"] = note
        return out
    out["core_version"] = __version__
    if isinstance(grad, dict):
        out["passing"] = [(p["opening_mm"], p["passing_pct"]) for p in grad.get("points") or ()
                          if is_number(p.get("passing_pct"))]
        d = grad.get("d_mm") or {}
        out["d_mm"] = {k: _finite(d.get(k)) for k in ("D10", "D15", "D60", "D85")}
        out["cu"] = _finite(grad.get("cu"))
        out["fines_pct"] = _finite(grad.get("fines_pct"))
    if missing:
        out["note"] = "no verdict: " + "; ".join(missing)
    return out


def record_label(rec: dict) -> str:
    """A band's or base soil's name for people: the band's ``name`` (else its
    ``sample_id``); a base soil's ``sample_id`` and ``material``; the record id
    when nothing else names it."""
    meta = rec.get("meta") or {}
    band = rec.get("band") or {}
    parts = []
    if rec.get("kind") == "band" and isinstance(band.get("name"), str) and band["name"]:
        parts.append(band["name"])
    else:
        for k in ("sample_id", "material"):
            if isinstance(meta.get(k), str) and meta[k]:
                parts.append(meta[k])
    return ", ".join(parts) or rec["record_id"]


def compute_summaries(records: list[dict], index: dict, progress=None) -> list[dict]:
    """:func:`compute_summary` of each record, in order, with one :class:`FileParts`
    for all; ``progress(done, total)`` (optional) is called after every
    :data:`PROGRESS_STEP` records and after the last, ``done`` increasing to
    ``total = len(records)``."""
    parts = FileParts(index)
    total = len(records)
    out = []
    for i, rec in enumerate(records, 1):
        out.append(compute_summary(rec, index, parts))
        if progress is not None and (i % PROGRESS_STEP == 0 or i == total):
            progress(i, total)
    if progress is not None and total == 0:
        progress(0, 0)
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
        if is_number(v):
            c[f"calc_{k.lower()}_mm"] = display_num(v)
    for k, col in (("cu", "calc_cu"), ("fines_pct", "calc_fines_pct")):
        if is_number(s[k]):
            c[col] = display_num(s[k])
    if s["verdict"]:
        c["calc_verdict"] = escape_text(s["verdict"])
    for op, p in s.get("passing") or ():
        c[f"calc_passing_pct@{fmt_num(op)}mm"] = display_num(p)
    for k in ("band_name", "base_name"):
        if s.get(k):
            c[f"calc_{k}"] = escape_text(s[k])
    if s["failing_checks"]:
        c["calc_failing_checks"] = escape_text(" ".join(s["failing_checks"]))
    if s.get("reasons"):
        c["calc_reasons"] = escape_text("; ".join(s["reasons"]))
    if s.get("advisory"):
        c["calc_advisory"] = escape_text("; ".join(s["advisory"]))
    if s["note"]:
        c["calc_note"] = escape_text(s["note"])
    if s["core_version"]:
        c["calc_core_version"] = escape_text(s["core_version"])
    return c


def summaries_for(records: list[dict], context=(), progress=None) -> dict:
    """record id -> calc cells, each record looked up against the others (then ``context``).

    ``progress(done, total)`` (optional) follows the records whose cells are
    computed (bands have none): see :func:`compute_summaries`.
    """
    index = {r["record_id"]: r for r in context}
    index.update({r["record_id"]: r for r in records})
    todo = [r for r in records if r["kind"] != "band"]
    return {r["record_id"]: summary_cells(s) for r, s in zip(todo, compute_summaries(todo, index, progress))}
