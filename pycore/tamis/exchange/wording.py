"""Checks and verdicts in words, for people: the CSV's reason columns and the printed reports.

Every text is made from a check as the JSON boundary gives it (``Check.to_dict()``,
the ``checks`` of an ``evaluate`` result), so a report and a CSV say what the app
shows. Names come from the registry (:data:`tamis.registry.ENTRIES`, ``title``).
Numbers are rounded for display only, and a failing value that would round to its
limit is written with as many digits as keep the two apart (never rounded toward
a pass); the status is always the core's, decided on unrounded values.
"""

from __future__ import annotations

import math
from decimal import Decimal

from ..registry import ENTRIES

#: check id -> its title in the registry (the first entry of an id; the titles of an id's rule sets agree).
TITLES: dict[str, str] = {}
for _e in ENTRIES:
    TITLES.setdefault(_e.id, _e.title)

VERDICT_WORDS = {"accept": "Meets the checks", "reject": "Fails a check", "review": "Needs review"}
STATUS_WORDS = {"pass": "passes", "fail": "fails", "warn": "warning", "not_applicable": "does not apply",
                "needs_data": "needs data"}

#: What decides a verdict, in the order a reader wants it: failures, then missing data, then warnings.
DECIDING = {"fail": 0, "needs_data": 1, "warn": 2}
#: The figure a check compares, for the one-line reason ("D15 0.742 mm > 0.7 mm (retention)").
FIGURES = {"filter.retention": ("D15", "retention"), "filter.permeability": ("D15", "drainage"),
           "filter.fines": ("Fines", ""), "filter.plasticity": ("PI of the fines", ""),
           "filter.max_size": ("D100", ""), "filter.segregation": ("D90", "segregation")}
_BROKEN = {"<=": ">", "<": ">=", ">=": "<", ">": "<="}
REL_TEXT = {"<=": "<=", "<": "<", ">=": ">=", ">": ">"}


def title(check_id: str) -> str:
    """The registry's title of a check id; an unknown id as it is."""
    return TITLES.get(check_id, check_id)


def num(v, digits: int = 3) -> str:
    """A number for display only: ``digits`` significant digits, no exponent in the
    ranges people read, a trailing ``.0`` dropped; None as a dash."""
    if v is None or isinstance(v, bool) or not isinstance(v, (int, float)):
        return "-" if v is None else str(v)
    v = float(v)
    if not math.isfinite(v):
        return "-"
    if v == 0:
        return "0"
    a = abs(v)
    if a >= 1e15 or a < 1e-6:
        return f"{v:.{digits}e}"
    if a >= 100:
        s = f"{v:.1f}"
    else:
        s = format(Decimal(f"{v:.{digits}g}"), "f")
        if "." in s:
            s = s.rstrip("0")
    return s[:-1] if s.endswith(".") else s


def pct(v) -> str:
    """A percentage for display: one decimal."""
    return "-" if v is None else f"{float(v):.1f}"


def apart(value: float, limit: float) -> tuple[str, str]:
    """Value and limit at the fewest digits (3 or more) that keep them apart when they differ."""
    for d in range(3, 13):
        a, b = num(value, d), num(limit, d)
        if a != b or value == limit:
            return a, b
    return repr(float(value)), repr(float(limit))


def _unit(check: dict) -> str:
    u = check.get("unit") or ""
    return f" {u}" if u and u != "-" else ""


def reason_line(check: dict) -> str:
    """The one-line reason of a check with its figures: ``Fines 8.9 % > 5 %``,
    ``Band: No. 16 passing 12.3 % < 15 %``, ``Base soil: Sieving mass balance: needs data``."""
    name = title(check["id"])
    base = "Base soil: " if check.get("subject") == "base" else ""
    status = check.get("status")
    if status == "needs_data":
        return f"{base}{name}: needs data"
    if status == "not_applicable":
        return f"{base}{name}: does not apply"
    if check["id"] == "band.compliance":
        rows = check.get("sieves") or []
        failing = [r for r in rows if r.get("status") == "fail"]
        if not failing:
            interp = [r.get("label") or "" for r in rows if r.get("status") == "warn"]
            if status == "warn" and interp:
                return f"Band: inside, but read between sieves at {', '.join(interp)} (not measured)"
            return "Band: inside at every sieve"
        w = failing[0]
        low = w.get("min_pct") is not None and w["passing_pct"] < w["min_pct"]
        lim = w["min_pct"] if low else w["max_pct"]
        more = len(failing) - 1
        extra = f" (and {more} more sieve{'s' if more > 1 else ''})" if more > 0 else ""
        return f"Band: {w.get('label')} passing {pct(w['passing_pct'])} % {'<' if low else '>'} {num(lim, 6)} %{extra}"
    fig, what = FIGURES.get(check["id"], (name, ""))
    unit, value, limit = _unit(check), check.get("value"), check.get("limit")
    tail = f" ({what})" if what else ""
    if not isinstance(value, (int, float)):
        return f"{base}{name}: {STATUS_WORDS.get(status, status)}"
    if not isinstance(limit, (int, float)):
        return f"{base}{fig} {num(value)}{unit}{tail}"
    rel = (_BROKEN if status == "fail" else REL_TEXT).get(check.get("relation"), check.get("relation") or "vs")
    v, lim = apart(value, limit)
    if fig == name:
        return f"{base}{name}: {v}{unit} {rel} {lim}{unit}"
    return f"{base}{fig} {v}{unit} {rel} {lim}{unit}{tail}"


def deciding(checks: list[dict]) -> list[dict]:
    """The counted checks that fail, need data or warn: failures first, the core's order within."""
    got = [(DECIDING[c["status"]], i, c) for i, c in enumerate(checks)
           if not c.get("advisory") and c.get("status") in DECIDING]
    return [c for _, _, c in sorted(got, key=lambda t: t[:2])]


def verdict_reasons(verdict: str | None, checks: list[dict]) -> list[str]:
    """Why the verdict is what it is, one line per deciding check (advisory ones never),
    a check that needs data or warns followed by the core's message in brackets;
    a ``review`` with nothing deciding says that no counted check applies."""
    lines = []
    for c in deciding(checks):
        line, msg = reason_line(c), (c.get("message") or "").strip().rstrip(".")
        # What is missing or uncertain is the reason for a review: the core's message says it.
        lines.append(f"{line} ({msg})" if c["status"] != "fail" and msg else line)
    if verdict == "review" and not lines:
        lines = ["No counted check applies to this input: nothing was shown to pass."]
    return lines


def advisory_lines(checks: list[dict]) -> list[str]:
    """Advisory indicators that are flagged (fail or warn), one line each, marked as not counted."""
    return [reason_line(c) + " (advisory, not counted)" for c in checks
            if c.get("advisory") and c.get("status") in ("fail", "warn")]
