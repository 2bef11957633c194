"""Plain-text tables for people: the command line's ``--table`` output.

:func:`render` takes a whole response dict of :func:`tamis.api.handle` and
returns text. It only formats: every number comes from the response, and the
rounding here is for display alone (verdicts were decided unrounded).
"""

from __future__ import annotations

from . import SCREENING_NOTICE


def _num(x, digits: int = 2) -> str:
    if x is None:
        return "-"
    if isinstance(x, bool):
        return "yes" if x else "no"
    if isinstance(x, (int, float)):
        if x != 0 and abs(x) < 0.01:
            return f"{x:.3g}"
        return f"{x:.{digits}f}"
    return str(x)


def _grid(headers: list[str], rows: list[list[str]]) -> list[str]:
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(headers)]
    line = "  ".join(h.ljust(w) for h, w in zip(headers, widths))
    out = [line, "  ".join("-" * w for w in widths)]
    for r in rows:
        out.append("  ".join(c.rjust(w) if i else c.ljust(w) for i, (c, w) in enumerate(zip(r, widths))))
    return out


def _sieve_table(table: list[dict]) -> list[str]:
    rows = [[r.get("label") or "", _num(r.get("opening_mm"), 3), _num(r.get("retained_g"), 1),
             _num(r.get("retained_pct"), 1), _num(r.get("cum_retained_pct"), 1), _num(r.get("passing_pct"), 1)]
            for r in table]
    return _grid(["sieve", "opening mm", "retained g", "retained %", "cum. ret. %", "passing %"], rows)


def _gradation_summary(g: dict) -> list[str]:
    d = g.get("d_mm") or {}
    out = ["D-values (mm): " + ", ".join(f"{k} {_num(v, 3)}" for k, v in d.items()),
           f"Cu {_num(g.get('cu'))}   Cc {_num(g.get('cc'))}   FM {_num(g.get('fineness_modulus'))}",
           f"gravel {_num(g.get('gravel_pct'), 1)} %   sand {_num(g.get('sand_pct'), 1)} %   "
           f"fines {_num(g.get('fines_pct'), 1)} %"]
    u = g.get("uscs") or {}
    if u.get("symbol"):
        out.append(f"USCS {u['symbol']}: {u.get('name')}")
    else:
        out.append("USCS not determined: " + "; ".join(u.get("needs") or ["see basis"]))
    return out


def _checks(checks: list[dict]) -> list[str]:
    rows = []
    for c in checks:
        rel = c.get("relation") or ""
        limit = "" if c.get("limit") is None else f"{rel} {_num(c.get('limit'), 3)}".strip()
        who = c.get("subject")
        rows.append([c.get("id", "") + (f" ({who})" if who else ""), c.get("status", ""),
                     _num(c.get("value"), 3), limit, c.get("unit") or ""])
    out = _grid(["check", "status", "value", "limit", "unit"], rows)
    for c in checks:
        out.append(f"  {c.get('id')}: {c.get('message')}")
        if c.get("source"):
            out.append(f"      source: {c['source']}")
    return out


def _findings(findings: list[dict]) -> list[str]:
    return [f"{f.get('level')}: {f.get('message')}" + (f" [{f['field']}]" if f.get("field") else "")
            for f in findings]


def _least(*xs):
    vals = [x for x in xs if x is not None]
    return min(vals) if vals else None


def _design_band(res: dict) -> list[str]:
    out = [f"feasible: {_num(res.get('feasible'))}"]
    cp = {k: v for k, v in (res.get("control_points") or {}).items() if v is not None}
    if cp:
        out.append("control points: " + ", ".join(f"{k} {_num(v, 3)}" for k, v in cp.items()))
    band = res.get("band") or {}
    if band.get("limits"):
        out += ["", band.get("name") or "band"]
        out += _grid(["opening mm", "min %", "max %"],
                     [[_num(x.get("opening_mm"), 3), _num(x.get("min_pct"), 1), _num(x.get("max_pct"), 1)]
                      for x in band["limits"]])
    for st in res.get("steps") or []:
        out.append(f"step {st.get('step')}: {st.get('title')}" + (f" - {st['note']}" if st.get("note") else ""))
    return out + [""]


def render(command: str, response: dict) -> str:
    """Human-readable text of one response of ``command`` (``gradation``, ``evaluate``...)."""
    if not response.get("ok"):
        err = response.get("error") or {}
        return f"error ({err.get('code')}): {err.get('field') or 'request'}: {err.get('message')}"
    res = response.get("result") or {}
    lines: list[str] = [f"tamis {command} (core {response.get('core_version')})", ""]
    if command == "gradation":
        if res.get("table"):
            lines += _sieve_table(res["table"]) + [""]
        m = res.get("mass")
        if m:
            lines.append(f"dry mass {_num(m['dry_mass_g'], 1)} g, washed {_num(m.get('washed_dry_mass_g'), 1)} g, "
                         f"wash loss {_num(m['wash_loss_g'], 1)} g, pan {_num(m['pan_g'], 1)} g, sieving loss "
                         f"{_num(m['sieving_loss_g'], 1)} g ({_num(m['sieving_loss_pct'])} %)")
        lines += _gradation_summary(res) + [""]
    elif command == "evaluate":
        for who in ("sample", "base"):
            if res.get(who):
                lines += [f"{who}:"] + ["  " + x for x in _gradation_summary(res[who])]
        if res.get("base_category") is not None:
            lines.append(f"base category {res['base_category']} (A = {_num(res.get('a_pct'), 1)} %)")
        bc = next((c for c in res.get("checks") or [] if c.get("id") == "band.compliance"), None)
        if bc and bc.get("sieves"):
            lines += ["", f"band {bc.get('band') or ''}:"]
            lines += _grid(["sieve", "passing %", "min %", "max %", "margin %", "status"],
                           [[r.get("label") or "", _num(r.get("passing_pct"), 1), _num(r.get("min_pct"), 1),
                             _num(r.get("max_pct"), 1),
                             _num(_least(r.get("margin_min_pct"), r.get("margin_max_pct")), 2),
                             r.get("status", "") + ("" if r.get("measured", True) else " (interpolated)")]
                            for r in bc["sieves"]])
        lim = {k: v for k, v in (res.get("limits") or {}).items() if v is not None}
        if lim:
            lines.append("limits: " + ", ".join(f"{k} {_num(v, 3)}" for k, v in lim.items()))
        lines.append("")
    elif command == "design_band":
        lines += _design_band(res)
    elif res.get("interfaces"):
        for it in res["interfaces"]:
            lines += [f"{it.get('base')} -> {it.get('filter')}: {it.get('verdict')}"]
            lines += ["  " + x for x in _checks(it.get("checks") or [])] + [""]
    if res.get("checks"):
        lines += _checks(res["checks"]) + [""]
    if response.get("findings"):
        lines += _findings(response["findings"]) + [""]
    if res.get("verdict") and command == "gradation":
        lines.append(f"lab QA verdict: {res['verdict'].upper()} (lab QA checks only; a band and filter criteria "
                     "are checked by evaluate)")
    elif res.get("verdict"):
        lines.append(f"verdict: {res['verdict'].upper()}")
    lines.append(res.get("notice") or SCREENING_NOTICE)
    return "\n".join(lines)
