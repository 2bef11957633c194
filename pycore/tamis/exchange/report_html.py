"""Reports to hand over: one test on one page, the tests of a lot, the tests of a day.

Each report is a self-contained HTML document (its style sheet inside, its chart
an inline SVG, no script, no outside file) that prints on one A4 or US-letter
page per test (``@page`` and a print style sheet). The office writes it with
``python -m tamis report FILE.csv --html OUT.html`` and the app shows the same
document through the ``report_html`` op of :mod:`tamis.api`.

Every figure and word comes from the results of the API's ops on the records:
``gradation`` (the sieve table) and ``evaluate`` (checks, verdict), called here
through the functions behind them (:func:`tamis.lab.reduction.op_gradation`,
:func:`tamis.project.evaluate.op_evaluate`), and the reasons from
:mod:`tamis.exchange.wording`, the words of the CSV's reason columns. Numbers
are rounded for display only. Every text of a record is escaped
(:func:`html.escape`), so nothing typed on a device becomes markup.

Verdicts are screening checks: the project specification, local codes and the
engineer of record govern (the caution is printed on every page).
"""

from __future__ import annotations

import math
import re
from html import escape

from .. import SCREENING_NOTICE, __version__
from ..errors import NUMBER_MAX_ABS, InputError, text
from ..registry import ENTRIES
from .csv_format import fmt_num
from ..lab.bands import parse_band
from ..lab.reduction import op_gradation
from ..project.evaluate import op_evaluate
from .summaries import error_note, record_label
from .wording import REL_TEXT, STATUS_WORDS, VERDICT_WORDS, advisory_lines, num, pct, title, verdict_reasons

#: Warnings about the advisory indicators, which go with them and not with the verdict (as in the app).
ADVISORY_WARNING = re.compile(r"(stability_|wan_fell|hazen|kozeny|permeability_)")
PAPERS = {"a4": "A4", "letter": "letter", "auto": None}
VERDICT_SYMBOLS = {"accept": "\u2713", "reject": "\u2717", "review": "?"}
STATUS_SYMBOLS = {"pass": "\u2713", "fail": "\u2717", "warn": "!", "needs_data": "?", "not_applicable": "\u2013"}
CAUTION = "Verdicts are screening checks computed from the figures entered, not an acceptance."

SAMPLING_WORDS = {"stockpile": "stockpile", "delivery": "delivery", "loose_in_lift": "loose in the lift",
                  "compacted": "compacted lift"}
#: Meta keys read as quantities when a record carries them (a number; the unit is in the name).
QUANTITY_KEYS = (("quantity_m3", "m\u00b3"), ("quantity_t", "t"), ("volume_m3", "m\u00b3"), ("mass_t", "t"))


def _e(x) -> str:
    return escape("" if x is None else str(x), quote=True)


def when_text(iso) -> str:
    """``2026-09-29T16:30:00Z`` -> ``2026-09-29 16:30 UTC``; anything else as it is."""
    m = re.fullmatch(r"(\d{4}-\d\d-\d\d)T(\d\d:\d\d)(:\d\d(\.\d+)?)?Z", str(iso or ""))
    return f"{m.group(1)} {m.group(2)} UTC" if m else str(iso or "")


# --------------------------------------------------------------------- the data of one test

def test_data(rec: dict, index: dict) -> dict:
    """What a test report shows, from the API's results on a test record and the
    band and base soil it names (looked up in ``index``, record id -> record).

    Returns ``{"record", "band_name", "base_name", "gradation", "evaluate",
    "findings", "reasons", "advisory", "note"}``: ``gradation`` is the ``gradation``
    op's result (sieve table, mass summary), ``evaluate`` the ``evaluate`` op's
    result or None (no verdict: ``note`` says why), ``reasons`` and ``advisory``
    the words of :mod:`tamis.exchange.wording`.
    """
    meta = rec.get("meta") or {}
    out = {"record": rec, "band_name": None, "base_name": None, "gradation": None, "evaluate": None,
           "findings": [], "reasons": [], "advisory": [], "note": None, "band": None, "index": index}
    if rec.get("kind") != "test":
        raise InputError("not_a_test", f"record {rec.get('record_id')} is a {rec.get('kind')} record, not a test: "
                                       "a report is made of a test.", "record_id")
    if rec.get("deleted"):
        out["note"] = "This test was deleted; it is reported as it was last saved."
    if rec.get("test") is None:
        out["note"] = "No test data yet: nothing to report."
        return out
    req, missing = {"sample": rec["test"]}, []
    for key, kind, part, field in (("band_id", "band", "band", "band"), ("base_id", "base", "test", "base")):
        ref = meta.get(key)
        if ref is None:
            continue
        other = index.get(ref) if isinstance(ref, str) else None
        if other is None or other.get("kind") != kind or other.get("deleted") or other.get(part) is None:
            missing.append(f"the {'band' if kind == 'band' else 'base soil'} this test names ({ref}) is not among "
                           "the records given")
        else:
            req[field] = other[part]
            out[f"{kind}_name"] = record_label(other)
    out["band"] = req.get("band")
    if isinstance(meta.get("rules"), dict):
        req["rules"] = meta["rules"]
    try:
        out["gradation"], grad_findings = op_gradation({"test": rec["test"]})
    except Exception as exc:  # noqa: BLE001 - a refused test is reported with the core's message
        out["note"] = error_note(exc)
        return out
    out["findings"] = [f.to_dict() for f in grad_findings]
    if out["band"] is not None:
        try:  # the band is drawn and tabled: only a band the core accepts
            parse_band(out["band"])
        except InputError as exc:
            out["band"] = None
            out["note"] = error_note(exc)
            return out
    if missing:
        out["note"] = "No verdict: " + "; ".join(missing) + " (a verdict without that check could read as a pass)."
        return out
    try:
        res, findings = op_evaluate(req)
    except Exception as exc:  # noqa: BLE001
        out["note"] = error_note(exc)
        return out
    out["evaluate"] = res
    out["findings"] = [f.to_dict() for f in findings]
    out["reasons"] = verdict_reasons(res["verdict"], res["checks"])
    out["advisory"] = advisory_lines(res["checks"])
    return out


# --------------------------------------------------------------------- the chart

CHART_W, CHART_H = 330, 190
_PAD_L, _PAD_R, _PAD_T, _PAD_B = 34, 8, 8, 30


def _curve_pts(points) -> list[tuple[float, float]]:
    return [(float(p["opening_mm"]), float(p["passing_pct"])) for p in points or ()
            if p.get("passing_pct") is not None and p.get("opening_mm")]


def chart_svg(data: dict) -> str:
    """The curve of the sample against the band and the D15 window, on a log scale of sizes."""
    ev, grad = data["evaluate"], data["gradation"] or {}
    sample = _curve_pts((ev["sample"] if ev else grad).get("points"))
    base = _curve_pts(((ev or {}).get("base") or {}).get("points"))
    band = (data.get("band") or {}).get("limits") or []
    lim = (ev or {}).get("limits") or {}
    d15_lo, d15_hi = lim.get("d15_min_mm"), lim.get("d15_max_mm")
    sizes = [x for x, _ in sample + base] + [float(b["opening_mm"]) for b in band]
    sizes += [v for v in (d15_lo, d15_hi) if isinstance(v, (int, float)) and v > 0]
    if not sizes:
        return ""
    lo_dec = math.floor(math.log10(min(sizes)) + 1e-9)
    hi_dec = math.ceil(math.log10(max(sizes)) - 1e-9)
    if hi_dec <= lo_dec:
        hi_dec = lo_dec + 1
    iw, ih = CHART_W - _PAD_L - _PAD_R, CHART_H - _PAD_T - _PAD_B

    def x(mm):
        return _PAD_L + (math.log10(mm) - lo_dec) / (hi_dec - lo_dec) * iw

    def y(p):
        return _PAD_T + (100.0 - p) / 100.0 * ih

    def path(pts):
        return " ".join(f"{'M' if i == 0 else 'L'}{x(a):.1f},{y(b):.1f}" for i, (a, b) in enumerate(pts))

    out = [f'<svg class="chart" viewBox="0 0 {CHART_W} {CHART_H}" role="img" aria-labelledby="chart-title" '
           f'xmlns="http://www.w3.org/2000/svg"><title id="chart-title">Percent passing against particle size '
           f'(log scale): the sample{", the base soil" if base else ""}{", the band" if band else ""}'
           f'{", the D15 window" if d15_hi or d15_lo else ""}</title>']
    # grid: decades and their 2 and 5, every 10 %
    for dec in range(lo_dec, hi_dec + 1):
        for m in (1, 2, 5):
            v = m * 10.0 ** dec
            if v < 10.0 ** lo_dec or v > 10.0 ** hi_dec:
                continue
            cls = "g1" if m == 1 else "g2"
            out.append(f'<line class="{cls}" x1="{x(v):.1f}" y1="{_PAD_T}" x2="{x(v):.1f}" y2="{_PAD_T + ih}"/>')
            if m == 1:
                out.append(f'<text class="tx" x="{x(v):.1f}" y="{_PAD_T + ih + 10}" text-anchor="middle">'
                           f'{_e(fmt_num(v))}</text>')
    for p in range(0, 101, 10):
        out.append(f'<line class="{"g1" if p % 50 == 0 else "g2"}" x1="{_PAD_L}" y1="{y(p):.1f}" '
                   f'x2="{_PAD_L + iw}" y2="{y(p):.1f}"/>')
        if p % 20 == 0:
            out.append(f'<text class="tx" x="{_PAD_L - 3}" y="{y(p) + 2.5:.1f}" text-anchor="end">{p}</text>')
    out.append(f'<text class="tx" x="{_PAD_L + iw / 2:.1f}" y="{CHART_H - 4}" text-anchor="middle">'
               f'particle size (mm, log scale)</text>')
    out.append(f'<text class="tx" transform="translate(9 {_PAD_T + ih / 2:.1f}) rotate(-90)" '
               f'text-anchor="middle">percent passing</text>')
    # the D15 window: the band of D15 the filter criteria allow, drawn at 15 % passing
    if isinstance(d15_hi, (int, float)) and d15_hi > 0:
        lo_v = d15_lo if isinstance(d15_lo, (int, float)) and d15_lo > 0 else 10.0 ** lo_dec
        x0, x1 = x(max(lo_v, 10.0 ** lo_dec)), x(min(d15_hi, 10.0 ** hi_dec))
        out.append(f'<rect class="d15" x="{x0:.1f}" y="{y(25):.1f}" width="{max(x1 - x0, 1):.1f}" '
                   f'height="{y(5) - y(25):.1f}"/>')
        out.append(f'<line class="d15l" x1="{x0:.1f}" y1="{y(15):.1f}" x2="{x1:.1f}" y2="{y(15):.1f}"/>')
        out.append(f'<text class="tx d15t" x="{x1 + 2:.1f}" y="{y(25) - 2:.1f}">D15 window</text>')
    if band:
        lows = [(float(b["opening_mm"]), float(b["min_pct"] if b.get("min_pct") is not None else 0.0))
                for b in band]
        highs = [(float(b["opening_mm"]), float(b["max_pct"] if b.get("max_pct") is not None else 100.0))
                 for b in band]
        poly = " ".join(f"{x(a):.1f},{y(b):.1f}" for a, b in highs + lows[::-1])
        out.append(f'<polygon class="band" points="{poly}"/>')
        out.append(f'<path class="bandl" d="{path(highs)}"/><path class="bandl" d="{path(lows)}"/>')
    if base:
        out.append(f'<path class="base" d="{path(base)}"/>')
    if sample:
        out.append(f'<path class="sample" d="{path(sample)}"/>')
        out += [f'<circle class="pt" cx="{x(a):.1f}" cy="{y(b):.1f}" r="1.8"/>' for a, b in sample]
    # legend (line styles, so it reads in black and white)
    lx, ly = _PAD_L + 6, _PAD_T + 8
    items = [("sample", "sample")] + ([("base", "base soil")] if base else []) + ([("bandl", "band")] if band else [])
    for i, (cls, label) in enumerate(items):
        yy = ly + i * 10
        out.append(f'<line class="{cls}" x1="{lx}" y1="{yy}" x2="{lx + 16}" y2="{yy}"/>'
                   f'<text class="tx" x="{lx + 20}" y="{yy + 2.5}">{label}</text>')
    out.append("</svg>")
    return "".join(out)


# --------------------------------------------------------------------- one test, one page

def _kv(pairs) -> str:
    cells = "".join(f"<div><dt>{_e(k)}</dt><dd>{_e(v) if v not in (None, '') else '&ndash;'}</dd></div>"
                    for k, v in pairs)
    return f'<dl class="kv">{cells}</dl>'


def _place(meta: dict) -> str:
    parts = []
    if meta.get("station") not in (None, ""):
        parts.append(f"station {meta['station']}")
    if isinstance(meta.get("offset_m"), (int, float)):
        parts.append(f"offset {num(meta['offset_m'], 6)} m")
    if isinstance(meta.get("elevation_m"), (int, float)):
        parts.append(f"elevation {num(meta['elevation_m'], 6)} m")
    if meta.get("lift") not in (None, ""):
        parts.append(f"lift {meta['lift']}")
    if isinstance(meta.get("latitude"), (int, float)) and isinstance(meta.get("longitude"), (int, float)):
        parts.append(f"{meta['latitude']:.6f}, {meta['longitude']:.6f}")
    return ", ".join(parts)


def _rules_text(ev) -> str:
    if not ev:
        return ""
    r = ev.get("rules") or {}
    return f"{r.get('criteria', '')}" + (", internal stability reported" if r.get("stability") else "")


def sieve_table(data: dict) -> str:
    """Masses, cumulative, percent passing and the band's limits, sieve by sieve."""
    grad = data["gradation"] or {}
    rows = grad.get("table") or []
    masses = grad.get("form") == "masses"
    band_rows = {}
    for c in (data["evaluate"] or {}).get("checks", []):
        if c["id"] == "band.compliance" and c.get("subject", "sample") == "sample":
            band_rows = {float(r["opening_mm"]): r for r in c.get("sieves") or []}
    limits = {float(b["opening_mm"]): b for b in (data.get("band") or {}).get("limits") or []}
    ops = sorted({float(r["opening_mm"]) for r in rows} | set(limits), reverse=True)
    by_op = {float(r["opening_mm"]): r for r in rows}
    head = ["Sieve", "mm"] + (["Retained g", "Cum. g", "Cum. %"] if masses else []) + ["Passing %"]
    if limits:
        head += ["Band %", "Result"]
    out = ['<table class="sieves"><caption>Sieve analysis</caption><thead><tr>'
           + "".join(f'<th scope="col">{_e(h)}</th>' for h in head) + "</tr></thead><tbody>"]
    cum = 0.0
    for op in ops:
        r, b, br = by_op.get(op), limits.get(op), band_rows.get(op)
        label = (r or br or {}).get("label") or f"{num(op, 4)} mm"
        cells = [f'<th scope="row">{_e(label)}</th>', f"<td>{_e(num(op, 4))}</td>"]
        if masses:
            if r is not None and r.get("retained_g") is not None:
                cum += float(r["retained_g"])
                cells += [f"<td>{_e(num(r['retained_g'], 6))}</td>", f"<td>{_e(num(cum, 6))}</td>",
                          f"<td>{_e(pct(r.get('cum_retained_pct')))}</td>"]
            else:
                cells += ["<td>&ndash;</td>"] * 3
        if r is not None:
            cells.append(f"<td><b>{_e(pct(r.get('passing_pct')))}</b></td>")
        elif br is not None and br.get("passing_pct") is not None:
            cells.append(f"<td><i>{_e(pct(br['passing_pct']))}</i>*</td>")
        else:
            cells.append("<td>&ndash;</td>")
        if limits:
            if b is not None:
                # a band's limits are the project's own figures: written as given
                lo = "no min" if b.get("min_pct") is None else fmt_num(b["min_pct"])
                hi = "no max" if b.get("max_pct") is None else fmt_num(b["max_pct"])
                st = (br or {}).get("status")
                word = {"pass": "in", "fail": "OUT", "warn": "in*", "needs_data": "?"}.get(st, "")
                cells += [f"<td>{_e(lo)}&ndash;{_e(hi)}</td>",
                          f'<td class="st-{_e(st or "none")}">{_e(word)}</td>']
            else:
                cells += ["<td></td>", "<td></td>"]
        out.append(f'<tr class="{"out" if (br or {}).get("status") == "fail" else ""}">' + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    mass = grad.get("mass") or {}
    notes = []
    test = (data["record"].get("test") or {})
    if masses:
        if test.get("pan_g") is not None:
            notes.append(f"pan {num(test['pan_g'], 6)} g")
        if test.get("dry_mass_g") is not None:
            notes.append(f"dry mass {num(test['dry_mass_g'], 6)} g")
        if test.get("washed_dry_mass_g") is not None:
            notes.append(f"after washing {num(test['washed_dry_mass_g'], 6)} g")
        if mass.get("sum_g") is not None:
            notes.append(f"sieves and pan {num(mass['sum_g'], 6)} g")
    if any(op not in by_op for op in limits):
        notes.append("* band sieve not in the stack: passing read on the curve")
    if notes:
        out.append(f'<p class="small">{_e("; ".join(notes))}</p>')
    return "".join(out)


def figures_table(data: dict) -> str:
    ev, grad = data["evaluate"], data["gradation"] or {}
    g = ev["sample"] if ev else grad
    d = g.get("d_mm") or {}
    uscs = g.get("uscs") or {}
    cells = [(k, num(d.get(k))) for k in ("D10", "D15", "D30", "D50", "D60", "D85", "D90")]
    row1 = "".join(f"<th>{k} mm</th>" for k, _ in cells) + "<th>Cu</th><th>Cc</th>"
    row2 = "".join(f"<td>{_e(v)}</td>" for _, v in cells) + f"<td>{_e(num(g.get('cu')))}</td>" \
        f"<td>{_e(num(g.get('cc')))}</td>"
    frac = (f"gravel {pct(g.get('gravel_pct'))} %, sand {pct(g.get('sand_pct'))} %, "
            f"fines {pct(g.get('fines_pct'))} %")
    cls = f"{uscs.get('symbol', '')} {uscs.get('name', '')}".strip() or "not classified"
    return (f'<table class="figs"><caption>Figures of the curve</caption><tr>{row1}</tr><tr>{row2}</tr></table>'
            f'<p class="small"><b>Fractions</b> {_e(frac)} &nbsp; <b>USCS</b> {_e(cls)}'
            + (f' ({_e("; ".join(uscs["needs"]))})' if uscs.get("needs") else "") + "</p>")


def _value_text(c: dict) -> tuple[str, str]:
    unit = c.get("unit") or ""
    unit = "" if unit == "-" else f" {unit}"
    v, lim = c.get("value"), c.get("limit")
    if c["id"] == "band.compliance":
        return ("" if v is None else f"margin {num(v)} pts"), ("" if lim is None else f">= {num(lim)} pts")
    if isinstance(v, (int, float)) and isinstance(lim, (int, float)):
        from .wording import apart
        a, b = apart(v, lim)
        return f"{a}{unit}", f"{REL_TEXT.get(c.get('relation'), c.get('relation') or '')} {b}{unit}"
    return ("" if v is None else f"{num(v)}{unit}"), ("" if lim is None else f"{num(lim)}{unit}")


#: The documents of the registry (``source, edition``), longest first: a check's source that starts with one
#: is printed as a numbered note and its locator (:func:`split_source`).
_DOCUMENTS = sorted({f"{e.source}, {e.edition}" for e in ENTRIES if not e.carries}, key=len, reverse=True)


def split_source(src: str) -> tuple[str | None, str]:
    """``(document, the rest)`` of a check's source composed by the registry
    (document, edition, locator, [provenance]); ``(None, src)`` for any other text."""
    for doc in _DOCUMENTS:
        if src.startswith(doc + ", "):
            return doc, src[len(doc) + 2:]
    return None, src


def checks_table(data: dict) -> str:
    ev = data["evaluate"]
    if not ev:
        return ""
    checks = ev["checks"]
    docs: list[str] = []

    def source_cell(src: str) -> str:
        doc, rest = split_source(src or "")
        if doc is None:
            return _e(rest)
        if doc not in docs:
            docs.append(doc)
        return f"[{docs.index(doc) + 1}] {_e(rest)}"
    counted = [c for c in checks if not c.get("advisory") and c["status"] != "not_applicable"]
    idle = [c for c in checks if c["status"] == "not_applicable" and not c.get("advisory")]
    adv = [c for c in checks if c.get("advisory")]

    def row(c):
        v, lim = _value_text(c)
        who = "Base soil: " if c.get("subject") == "base" else ""
        st = c["status"]
        return (f'<tr class="st-{_e(st)}"><th scope="row">{_e(who + title(c["id"]))}</th>'
                f'<td class="res">{STATUS_SYMBOLS.get(st, "")} {_e(STATUS_WORDS.get(st, st))}</td>'
                f"<td>{_e(v)}</td><td>{_e(lim)}</td><td class=\"src\">{source_cell(c.get('source'))}</td></tr>")

    out = ['<table class="checks"><caption>Checks</caption><thead><tr><th scope="col">Check</th>'
           '<th scope="col">Result</th><th scope="col">Value</th><th scope="col">Limit</th>'
           '<th scope="col">Source</th></tr></thead><tbody>']
    out += [row(c) for c in counted]
    out.append("</tbody></table>")
    if adv:
        items = []
        for c in adv:
            v, lim = _value_text(c)
            fig = " ".join(x for x in (v, f"(limit {lim})" if lim else "") if x)
            items.append(f"<b>{_e(title(c['id']))}</b> {STATUS_SYMBOLS.get(c['status'], '')} "
                         f"{_e(STATUS_WORDS.get(c['status'], c['status']))}{': ' + _e(fig) if fig else ''} "
                         f"<span class=\"src\">{source_cell(c.get('source'))}</span>")
        items += [_e(f["message"].rstrip(".")) for f in data["findings"]
                  if f.get("level") == "warning" and ADVISORY_WARNING.match(f.get("code") or "")]
        out.append('<p class="small adv"><b>Advisory indicators, reported and not counted in the verdict:</b> '
                   + "; ".join(items) + ".</p>")
    if docs:
        out.append('<p class="small src">' + " ".join(f"[{i}] {_e(d)}." for i, d in enumerate(docs, 1)) + "</p>")
    if idle:
        names = ", ".join(("base soil: " if c.get("subject") == "base" else "") + title(c["id"]) for c in idle)
        out.append(f'<p class="small">Not applicable here: {_e(names)}.</p>')
    return "".join(out)


def verdict_block(data: dict) -> str:
    ev = data["evaluate"]
    if not ev:
        return (f'<section class="verdict v-none"><p class="vword">No verdict</p>'
                f'<p>{_e(data["note"] or "")}</p></section>')
    v = ev["verdict"]
    reasons = data["reasons"]
    body = ("<ul>" + "".join(f"<li>{_e(r)}</li>" for r in reasons) + "</ul>") if reasons else \
        "<p>Every counted check passes.</p>"
    adv = ("<p class=\"small\">Advisory, not counted: " + _e("; ".join(data["advisory"])) + "</p>") \
        if data["advisory"] else ""
    warns = [f for f in data["findings"] if f.get("level") == "warning" and not ADVISORY_WARNING.match(f.get("code") or "")]
    wtext = ("<p class=\"small\">Warnings: " + _e("; ".join(f["message"] for f in warns)) + "</p>") if warns else ""
    return (f'<section class="verdict v-{_e(v)}"><p class="vword"><span aria-hidden="true">'
            f'{VERDICT_SYMBOLS.get(v, "")}</span> Verdict: {_e(VERDICT_WORDS.get(v, v))} ({_e(v)})</p>'
            f'<div class="why"><b>{"Reasons" if reasons else "Reason"}</b>{body}{adv}{wtext}</div></section>')


def signatures(tested_by) -> str:
    roles = (("Tested by", tested_by), ("Checked by", None), ("Engineer of record / accepted by", None))
    return '<section class="sign">' + "".join(
        f'<div><p class="role">{_e(role)}</p><p>Name: <span class="line">{_e(name or "")}</span></p>'
        f'<p>Signature: <span class="line"></span> Date: <span class="line short"></span></p></div>'
        for role, name in roles) + "</section>"


def caution() -> str:
    return f'<p class="caution" role="note"><b>{_e(SCREENING_NOTICE)}</b> {_e(CAUTION)}</p>'


def test_page(data: dict) -> str:
    """One test on one page (an ``<article class="page">``)."""
    rec = data["record"]
    meta = rec.get("meta") or {}
    ev = data["evaluate"]
    v = ev["verdict"] if ev else None
    stamp = (f'<p class="stamp v-{_e(v or "none")}"><span aria-hidden="true">{VERDICT_SYMBOLS.get(v, "")}</span> '
             f'{_e(VERDICT_WORDS.get(v, "No verdict"))}</p>')
    kv = _kv([("Project", meta.get("project")), ("Lot", meta.get("lot")), ("Sample", meta.get("sample_id")),
              ("Material", meta.get("material")), ("Zone", meta.get("zone")), ("Source", meta.get("source")),
              ("Sampled at", SAMPLING_WORDS.get(meta.get("sampling_point"), meta.get("sampling_point"))),
              ("Where", _place(meta)), ("When", when_text(meta.get("sampled_at"))),
              ("Tested by", meta.get("tested_by")), ("Band", data["band_name"]), ("Base soil", data["base_name"]),
              ("Criteria", _rules_text(ev)),
              ("Retest of", (index_label(data, meta.get("retest_of")))),
              ("Saved", f"rev {rec['rev']}, {when_text(rec['updated_at'])}"
                        f"{' by ' + rec['updated_by'] if rec.get('updated_by') else ''}")])
    note = f'<p class="small">Note: {_e(meta["notes"])}</p>' if meta.get("notes") else ""
    if data["gradation"] is None:
        body = f'<section class="verdict v-none"><p class="vword">No report</p><p>{_e(data["note"])}</p></section>'
        return (f'<article class="page"><header class="rh"><div><h1>Gradation test report</h1></div>{stamp}'
                f'</header>{kv}{note}{body}{caution()}{signatures(meta.get("tested_by"))}{_foot(rec)}</article>')
    checks, verdict = checks_table(data), verdict_block(data)
    fit = fit_class(len(_TAG.sub("", checks)), len(_TAG.sub("", verdict)), len(str(meta.get("notes") or "")),
                    len((data["gradation"] or {}).get("table") or []))
    return (f'<article class="page{fit}"><header class="rh"><div><h1>Gradation test report</h1>'
            f'<p class="sub">{_e(meta.get("project") or "")}</p></div>{stamp}</header>{kv}{note}'
            f'<div class="two"><div>{sieve_table(data)}</div><div>{chart_svg(data)}{figures_table(data)}</div></div>'
            f'{checks}{verdict}{caution()}{signatures(meta.get("tested_by"))}{_foot(rec)}'
            f"</article>")


_TAG = re.compile(r"<[^>]+>")
#: (the most a page holds at this scale, its class): a page's content, weighed by :func:`fit_class`,
#: is printed smaller when it would not fit one page at full size (CSS ``zoom``, the width compensated).
#: Calibrated on the demo tests (every one fits at full size, the heaviest, D-0922-1, weighs about 4,700)
#: and on the same tests with the internal-stability methods on and a 440-character note (about 8,000):
#: each fits one A4 and one US-letter page (e2e/test_report_print.py prints them).
FIT_STEPS = ((5000, ""), (5800, " fit1"), (6800, " fit2"), (8200, " fit3"), (math.inf, " fit4"))


def fit_class(checks_chars: int, verdict_chars: int, note_chars: int, sieve_rows: int) -> str:
    """The scale class of a test page from the length of its texts and the rows of its sieve table."""
    weight = checks_chars + 3 * verdict_chars + 1.5 * note_chars + 120 * max(sieve_rows, 8)
    return next(cls for most, cls in FIT_STEPS if weight <= most)


def index_label(data: dict, record_id):
    """The sample id of the test ``record_id`` names, when known; else the id."""
    if not record_id:
        return None
    other = (data.get("index") or {}).get(record_id)
    return ((other or {}).get("meta") or {}).get("sample_id") or record_id


def _foot(rec) -> str:
    return (f'<footer class="foot">tamis {_e(__version__)}: recomputed from the record as stored '
            f'(record {_e(rec["record_id"])}, revision {_e(rec["rev"])}); figures rounded for display only, '
            f'verdicts decided on unrounded values.</footer>')


# --------------------------------------------------------------------- lots and days

def _quantity(meta: dict):
    for key, unit in QUANTITY_KEYS:
        v = meta.get(key)
        if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v):
            return float(v), unit
    return None


def _qnum(v: float) -> str:
    """A quantity for display: 6 significant digits, written shortest (``300``, ``12.5``)."""
    return fmt_num(float(f"{v:.6g}"))


def list_page(heading: str, subtitle: str, tests: list[dict], index: dict) -> str:
    """The tests of a lot or a day on one page: each with its verdict and reasons,
    quantities when the records carry them, and the counts."""
    datas = [test_data(r, index) for r in tests]
    counts = {"accept": 0, "reject": 0, "review": 0, None: 0}
    rows, qty = [], {}
    by_id = {r["record_id"]: r for r in tests}
    has_qty = any(_quantity(r.get("meta") or {}) for r in tests)
    for d in datas:
        rec, meta = d["record"], d["record"]["meta"]
        v = d["evaluate"]["verdict"] if d["evaluate"] else None
        counts[v if v in counts else None] += 1
        g = (d["evaluate"] or {}).get("sample") or d["gradation"] or {}
        q = _quantity(meta)
        if q:
            qty[q[1]] = qty.get(q[1], 0.0) + q[0]
        why = "; ".join(d["reasons"]) if d["evaluate"] else (d["note"] or "")
        if d["advisory"]:
            why += (" " if why else "") + "(" + "; ".join(d["advisory"]) + ")"
        retest = meta.get("retest_of")
        if retest:
            orig = by_id.get(retest) or index.get(retest)
            why = f"retest of {(orig or {}).get('meta', {}).get('sample_id') or retest}. " + why
        rows.append(
            f'<tr class="st-{_e(v or "none")}"><th scope="row">{_e(meta.get("sample_id") or rec["record_id"][:8])}</th>'
            f"<td>{_e(when_text(meta.get('sampled_at')))}</td>"
            f"<td>{_e(SAMPLING_WORDS.get(meta.get('sampling_point'), meta.get('sampling_point') or ''))}</td>"
            f"<td>{_e(meta.get('station') or '')}</td><td>{_e(meta.get('tested_by') or '')}</td>"
            + (f"<td>{_e(_qnum(q[0]) + ' ' + q[1]) if q else ''}</td>" if has_qty else "") +
            f"<td>{_e(num((g.get('d_mm') or {}).get('D15')))}</td><td>{_e(pct(g.get('fines_pct')))}</td>"
            f'<td class="res">{VERDICT_SYMBOLS.get(v, "")} {_e(v or "no verdict")}</td><td>{_e(why)}</td></tr>')
    n = len(datas)
    first = [r["meta"].get("sampled_at") for r in tests if r["meta"].get("sampled_at")]
    span = f"{when_text(min(first))} to {when_text(max(first))}" if first else "no sampling times recorded"
    materials = sorted({r["meta"].get("material") for r in tests if r["meta"].get("material")})
    sources = sorted({r["meta"].get("source") for r in tests if r["meta"].get("source")})
    projects = sorted({r["meta"].get("project") for r in tests if r["meta"].get("project")})
    if qty:
        qtext = "; ".join(f"{_qnum(v)} {u} in {n} test{'s' if n != 1 else ''}: one test per "
                          f"{_qnum(v / n)} {u}" for u, v in qty.items())
    else:
        qtext = "not recorded on these tests"
    kv = _kv([("Project", ", ".join(projects)), ("Material", ", ".join(materials)), ("Source", ", ".join(sources)),
              ("Period", span), ("Tests", f"{n}: {counts['accept']} accept, {counts['reject']} reject, "
                                          f"{counts['review']} review, {counts[None]} without verdict"),
              ("Quantity", qtext)])
    table = ('<table class="list"><caption>Tests and their verdicts</caption><thead><tr><th scope="col">Sample</th>'
             '<th scope="col">Sampled</th><th scope="col">Where</th><th scope="col">Station</th>'
             '<th scope="col">Tested by</th>' + ('<th scope="col">Quantity</th>' if has_qty else '') +
             '<th scope="col">D15 mm</th>'
             '<th scope="col">Fines %</th><th scope="col">Verdict</th><th scope="col">Reasons</th></tr></thead>'
             f'<tbody>{"".join(rows)}</tbody></table>') if rows else "<p>No test matches.</p>"
    return (f'<article class="page list-page"><header class="rh"><div><h1>{_e(heading)}</h1>'
            f'<p class="sub">{_e(subtitle)}</p></div></header>{kv}{table}{caution()}{signatures(None)}'
            f'<footer class="foot">tamis {_e(__version__)}: each verdict recomputed from the records as stored; '
            f'reasons list the checks that count toward the verdict.</footer></article>')


def lot_tests(records: list[dict], lot: str) -> list[dict]:
    """The live tests whose ``meta.lot`` is ``lot``, in order of sampling time."""
    return _ordered([r for r in records if r.get("kind") == "test" and not r.get("deleted")
                     and str((r.get("meta") or {}).get("lot", "")) == lot])


def day_tests(records: list[dict], day: str) -> list[dict]:
    """The live tests sampled on ``day`` (``YYYY-MM-DD``, the UTC date of ``meta.sampled_at``)."""
    return _ordered([r for r in records if r.get("kind") == "test" and not r.get("deleted")
                     and str((r.get("meta") or {}).get("sampled_at", ""))[:10] == day])


def _ordered(tests):
    return sorted(tests, key=lambda r: (str(r["meta"].get("sampled_at", "")), str(r["meta"].get("sample_id", "")),
                                        r["record_id"]))


# --------------------------------------------------------------------- the document

STYLE = """
:root{--ink:#111;--mute:#555;--line:#999;--fail:#8a1111;--pass:#0b5d1e;--rev:#7a4b00}
*{box-sizing:border-box}
html{background:#e8e8e8}
body{margin:0;color:var(--ink);font:8.4pt/1.25 system-ui,"Segoe UI",Roboto,"DejaVu Sans",Arial,sans-serif}
.page{background:#fff;width:186mm;min-height:0;margin:6mm auto;padding:0;}
@media screen{.page{padding:8mm;width:auto;max-width:202mm;box-shadow:0 1px 4px #0003}}
h1{font-size:13pt;margin:0}
.sub{margin:0;color:var(--mute)}
.rh{display:flex;justify-content:space-between;align-items:flex-start;gap:4mm;border-bottom:1.5pt solid var(--ink);
  padding-bottom:1.5mm;margin-bottom:1.5mm}
.stamp{margin:0;border:2pt solid currentColor;padding:1mm 3mm;font-weight:700;font-size:12pt;white-space:nowrap}
.v-reject{color:var(--fail)}.v-accept{color:var(--pass)}.v-review{color:var(--rev)}.v-none{color:var(--mute)}
dl.kv{display:grid;grid-template-columns:repeat(3,1fr);gap:0 4mm;margin:0 0 1mm;font-size:7.8pt}
dl.kv div{display:flex;gap:1.5mm;border-bottom:0.4pt solid #ccc;min-width:0}
dt{color:var(--mute);white-space:nowrap}dd{margin:0;font-weight:600;overflow-wrap:anywhere}
.two{display:grid;grid-template-columns:1fr 1fr;gap:4mm;align-items:start}
table{border-collapse:collapse;width:100%;margin:0 0 1mm}
caption{text-align:left;font-weight:700;font-size:9.5pt;padding:0.8mm 0}
th,td{border:0.4pt solid var(--line);padding:0.3mm 1mm;text-align:right;vertical-align:top}
th[scope=row],.list td:last-child,.checks td.src,.checks th{text-align:left}
thead th{background:#eee;font-weight:600}
.sieves tr.out td,.sieves tr.out th{font-weight:700}.sieves th,.sieves td{white-space:nowrap}
.checks th[scope=row]{width:46mm}.checks td.src{width:auto}.checks td:nth-child(3),.checks td:nth-child(4){white-space:nowrap}
td.st-fail,tr.st-fail .res{color:var(--fail);font-weight:700}
tr.st-needs_data .res,tr.st-warn .res,tr.st-review .res{color:var(--rev);font-weight:700}
tr.st-reject .res{color:var(--fail);font-weight:700}tr.st-accept .res{color:var(--pass)}
.checks{font-size:7.2pt}.checks .src,p.src{font-size:6.5pt;color:#333;line-height:1.2}
.checks td.res{white-space:nowrap;text-align:left}
.grp th{background:#f4f4f4;font-weight:600;font-style:italic}
.figs th,.figs td{text-align:center}
.list{font-size:7.8pt}.list td.res{white-space:nowrap;text-align:left}
.list td:nth-child(3),.list td:nth-child(4),.list td:nth-child(5),.list thead th{text-align:left}
.list td:last-child{width:38%}
.small{font-size:7.6pt;margin:0.5mm 0 1mm;color:#333}
.chart{width:100%;height:auto;display:block}
.chart .g1{stroke:#aaa;stroke-width:.6}.chart .g2{stroke:#ddd;stroke-width:.4}
.chart .tx{font-size:7px;fill:#333}
.chart .band{fill:#9ab8d8;fill-opacity:.35;stroke:none}.chart .bandl{fill:none;stroke:#1f4e85;stroke-width:1;
  stroke-dasharray:4 2}
.chart .sample{fill:none;stroke:#000;stroke-width:1.6}.chart .pt{fill:#000}
.chart .base{fill:none;stroke:#7a4b00;stroke-width:1.1;stroke-dasharray:1.5 1.5}
.chart .d15{fill:#e0a020;fill-opacity:.25;stroke:#a06a00;stroke-width:.6}.chart .d15l{stroke:#a06a00;
  stroke-width:1}
.chart line.sample,.chart line.base,.chart line.bandl{stroke-width:1.6}
.verdict{border:1.5pt solid currentColor;padding:1mm 2mm;margin:1.5mm 0;display:grid;grid-template-columns:auto 1fr;
  gap:3mm;align-items:start}
.verdict .vword{font-size:11pt;font-weight:800;margin:0}
.verdict .why{color:var(--ink)}.verdict ul{margin:0.3mm 0 0.5mm 4mm;padding:0}.verdict p{margin:0}
.caution{border-left:2pt solid var(--ink);padding:0.6mm 2mm;margin:1.5mm 0;font-size:8pt;background:#f6f6f6}
.sign{display:grid;grid-template-columns:repeat(3,1fr);gap:5mm;margin-top:1mm}
.sign p{margin:0 0 1.6mm;white-space:nowrap;display:flex;gap:1mm}.sign .role{font-weight:700}
.sign .line{flex:1;border-bottom:0.6pt solid var(--ink);min-height:3.5mm}.sign .short{flex:0 0 16mm}
.foot{margin-top:1.5mm;font-size:6.8pt;color:var(--mute)}
@media print{
  html,body{background:#fff}
  .page{margin:0;width:auto;box-shadow:none;padding:0;break-after:page;page-break-after:always}
  .page:last-child{break-after:auto;page-break-after:auto}
  .page.fit1{zoom:.9}.page.fit2{zoom:.8}.page.fit3{zoom:.72}.page.fit4{zoom:.62}
  .page,table,tr,.verdict,.sign{break-inside:avoid}
  *{-webkit-print-color-adjust:exact;print-color-adjust:exact}
}
@media screen and (max-width:640px){
  .page{padding:3mm;margin:0}.two,dl.kv,.sign{grid-template-columns:1fr}
  .checks .src{display:none}
}
"""


def document(pages: list[str], doc_title: str, paper: str = "auto") -> str:
    """A self-contained HTML document of report pages (``paper``: ``a4``, ``letter`` or
    ``auto``, the printer's; 12 mm margins, which leave room on both papers)."""
    if paper not in PAPERS:
        raise InputError("unknown_choice", f"paper must be one of {', '.join(PAPERS)}, got {paper!r}.", "paper")
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{_e(doc_title)}</title><style>{page_rule(paper)}</style><style>{STYLE}</style></head><body><main>"
            + "".join(pages) + "</main></body></html>\n")


def page_rule(paper: str) -> str:
    """The ``@page`` rule of a paper choice."""
    size = PAPERS[paper]
    return f"@page{{{'size:' + size + ';' if size else ''}margin:10mm 11mm}}"


def style_hashes() -> list[str]:
    """The CSP sources (``'sha256-...'``, base64 of the SHA-256 of the text, CSP Level 2 section 4.2.5) of
    every style block a report can hold: the app's Content-Security-Policy (webapp/index.html,
    scripts/serve.py) allows exactly these, so the report keeps its look inside the app's frame,
    which inherits the app's policy, while no other inline style is allowed."""
    import base64
    import hashlib
    texts = [STYLE] + [page_rule(p) for p in PAPERS]
    return [f"'sha256-{base64.b64encode(hashlib.sha256(t.encode('utf-8')).digest()).decode('ascii')}'"
            for t in texts]


def _plain_meta(meta: dict) -> dict:
    """A record's ``meta`` as the report reads it: text, finite numbers within the request limits and the
    ``rules`` object; a list, an object, a boolean or an extreme number under any other key is not shown
    (``meta`` keeps what a device wrote; the report prints only what it can print)."""
    def shown(k, v):
        if k == "rules":
            return isinstance(v, dict)
        if isinstance(v, str):
            return True
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            return False
        return -NUMBER_MAX_ABS <= v <= NUMBER_MAX_ABS  # False for NaN; exact for a huge int
    return {k: v for k, v in meta.items() if shown(k, v)}


def build(records: list[dict], context=(), *, kind: str = "test", ids=(), lot=None, day=None,
          paper: str = "auto") -> dict:
    """The report document of checked records: ``kind`` ``test`` (one page per test named in
    ``ids``, record ids or sample ids; every live test when ``ids`` is empty), ``lot``
    (the tests whose ``meta.lot`` is ``lot``) or ``day`` (the tests sampled on ``day``,
    ``YYYY-MM-DD`` in UTC). Bands and base soils are looked up in ``records``, then ``context``.

    Returns ``{"html", "title", "count"}`` (``count``: the tests reported).
    """
    records = [{**r, "meta": _plain_meta(r.get("meta") or {})} for r in records]
    context = [{**r, "meta": _plain_meta(r.get("meta") or {})} for r in context]
    index = {r["record_id"]: r for r in context}
    index.update({r["record_id"]: r for r in records})
    if kind == "test":
        tests = [r for r in records if r["kind"] == "test" and not r["deleted"]]
        if ids:
            picked = []
            for i, key in enumerate(ids):
                hit = [r for r in records if r["record_id"] == key or (r.get("meta") or {}).get("sample_id") == key]
                if not hit:
                    raise InputError("not_found", f"No record has the id or sample id {key!r}.", f"ids[{i}]")
                for r in hit:
                    if r["kind"] != "test":
                        raise InputError("not_a_test", f"{key!r} is a {r['kind']} record, not a test.", f"ids[{i}]")
                    if r not in picked:
                        picked.append(r)
            tests = picked
        tests = _ordered(tests)
        pages = [test_page(test_data(r, index)) for r in tests]
        if len(tests) == 1:
            t = f"Test report {tests[0]['meta'].get('sample_id') or tests[0]['record_id']}"
        else:
            t = f"Test reports ({len(tests)} tests)"
        if not tests:
            raise InputError("not_found", "No test to report.", "ids")
        return {"html": document(pages, t, paper), "title": t, "count": len(tests)}
    if kind == "lot":
        if not isinstance(lot, str) or not lot:
            raise InputError("missing_field", "lot must name the lot (meta.lot of its tests).", "lot")
        tests = lot_tests(records, lot)
        t = f"Lot report {lot}"
        page = list_page(f"Lot report: {lot}", "The tests of one lot, their verdicts and reasons", tests, index)
        return {"html": document([page], t, paper), "title": t, "count": len(tests)}
    if kind == "day":
        if not isinstance(day, str) or not re.fullmatch(r"\d{4}-\d\d-\d\d", day):
            raise InputError("bad_date", f"day must be a date YYYY-MM-DD, got {day!r}.", "day")
        tests = day_tests(records, day)
        t = f"Daily report {day}"
        page = list_page(f"Daily report: {day}", "The tests sampled on this day (UTC), their verdicts and reasons",
                         tests, index)
        return {"html": document([page], t, paper), "title": t, "count": len(tests)}
    raise InputError("unknown_choice", f"report must be test, lot or day, got {kind!r}.", "report")


def op_report_html(req: dict):
    """API op ``report_html``: ``{"records": [...], "context": [...], "report": "test"|"lot"|"day",
    "ids": [...], "lot": "...", "day": "YYYY-MM-DD", "paper": "auto"|"a4"|"letter"}`` ->
    ``{"html", "title", "count"}``."""
    from .record import check_records
    recs = check_records(req.get("records"), "records")
    context = check_records(req.get("context") or [], "context")
    ids = req.get("ids") or []
    if not isinstance(ids, list) or not all(isinstance(i, str) for i in ids):
        raise InputError("not_a_list", "ids must be a list of record ids or sample ids.", "ids")
    kind = text(req, "report", "", default="test", choices=("test", "lot", "day"))
    paper = text(req, "paper", "", default="auto", choices=tuple(PAPERS))
    return build(recs, context, kind=kind, ids=ids, lot=text(req, "lot", ""), day=text(req, "day", ""),
                 paper=paper), []
