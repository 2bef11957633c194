"""``python -m tamis lots FILE.csv``: the lots of an exchange file, their testing frequency, warnings and PWL.

The summary is the ``lot_summary`` op (:mod:`tamis.exchange.lots`), the code the
app's Lots screen runs; this module reads the file and prints it as text for
people (``--json``: the op's result). Display rounding only: fines and percent
passing to 0.1 %, D-values to 3 significant digits, Cu to 2 decimals, PWL to
0.1 % (the app shows the same). Exit status 0, or 2 for a file that cannot be
read; ``--fail-on-due`` gives 1 when a lot is due or overdue.
"""

from __future__ import annotations

import json
import sys
from datetime import datetime, timezone

from .. import SCREENING_NOTICE
from ..errors import InputError
from .lots import lot_summary, _day, _settings
from .office import describe_error, read_file

STAGE_WORDS = {"stockpile": "stockpile", "delivery": "delivery", "loose_in_lift": "loose in lift",
               "compacted": "compacted", None: "-"}
STATUS_WORDS = {"ok": "testing up to date", "due": "TEST DUE", "overdue": "TESTING OVERDUE",
                "no_rule": "no testing rule set"}


def add_arguments(name: str, parser) -> None:
    parser.add_argument("file", help="a tamis CSV exchange file")
    parser.add_argument("--json", action="store_true", help="print the lot_summary result as JSON")
    parser.add_argument("--as-of", dest="as_of", help="the day to count to, YYYY-MM-DD (default: today, UTC)")
    parser.add_argument("--lot", help="only this lot (its code or record id)")
    parser.add_argument("--fail-on-due", action="store_true", help="exit 1 when a lot is due or overdue")


def today_utc() -> str:
    return datetime.now(timezone.utc).strftime("%Y-%m-%d")


def pct(v) -> str:
    return "-" if v is None else f"{v:.1f}"


def mm(v) -> str:
    return "-" if v is None else f"{v:.3g}"


def num2(v) -> str:
    return "-" if v is None else f"{v:.2f}"


def qty(v) -> str:
    if v is None:
        return "-"
    return f"{v:.0f}" if float(v).is_integer() else f"{v:.1f}"


def rule_text(rule) -> str:
    if rule is None:
        return "no testing rule"
    parts = []
    if rule["per_quantity"] is not None:
        parts.append(f"1 per {qty(rule['per_quantity'])} {rule['quantity_unit']}")
    if rule["per_day"]:
        parts.append("1 per day of placement")
    if rule["per_source"]:
        parts.append("1 per source")
    text = ", ".join(parts) or "no testing rule"
    if rule.get("from", "lot") not in (None, "lot"):
        text += f"; the rule of its {rule['from']}"
    return text


def material_line(m: dict) -> str:
    """One material's lots in a line (the app's Lots screen shows the same words)."""
    counts = [f"{m[k]} {w}" for k, w in (("ok", "up to date"), ("due", "due"), ("overdue", "overdue"),
                                          ("no_rule", "without a rule")) if m[k]]
    return (f"{m['material'] or 'material not named'}: {_count(m['lots'], 'lot')} ({m['open']} open), "
            f"{_count(m['tests'], 'test')}; {', '.join(counts)}; {_count(m['warnings'], 'warning')}")


def render(result: dict, file: str) -> str:
    out = [f"Lots in {file} (counted to {result['as_of'] or 'the latest day recorded'}): {_count(len(result['lots']), 'lot')}, "
           f"{_count(result['unassigned_tests'], 'test')} in no lot."]
    for m in result["materials"]:
        out.append(material_line(m))
        for w in m["drift"]:
            out.append(f"  WARNING: {w['message']}")
    for lot in result["lots"]:
        f = lot["frequency"]
        unit = lot["quantity_unit"] or ""
        out.append("")
        out.append(f"Lot {lot['lot']}  {lot['material'] or '-'}, zone {lot['zone'] or '-'}  [{lot['status']}]  "
                   f"{STATUS_WORDS[f['status']]}")
        out.append(f"  placed {qty(lot['placed_quantity'])} {unit} of {qty(lot['planned_quantity'])} {unit} planned; "
                   f"tests counted {f['tests_counted']}"
                   + (f", {f['tests_required']} needed" if f["tests_required"] is not None else "")
                   + f" ({rule_text(lot['rule'])})")
        for it in f["items"]:
            if it["status"] != "ok":
                out.append(f"  {it['status'].upper()}: {it['message']}")
        for w in lot["warnings"]:
            out.append(f"  WARNING: {w['message']}")
        if lot["tests"] and "fines_pct" in lot["tests"][0]:
            lim = lot["limits"]
            out.append(f"  limits: fines <= {pct(lim.get('fines_max_pct'))} %, D15F {mm(lim.get('d15_min_mm'))} to "
                       f"{mm(lim.get('d15_max_mm'))} mm")
            out.append("  sample       date        stage          fines %  D15 mm  D85 mm    Cu  verdict")
            for t in lot["tests"]:
                mark = " *" if t["failed"] else ""
                out.append(f"  {t['sample_id']:<12} {(t['sampled_at'] or '')[:10]:<11} {STAGE_WORDS[t['stage']]:<14} "
                           f"{pct(t['fines_pct']):>7}  {mm(t['d15_mm']):>6}  {mm(t['d85_mm']):>6}  {num2(t['cu']):>5}  "
                           f"{t['verdict'] or '-'}{mark}"
                           + ("" if t["counted"] else "  (not counted)"))
            out.append("  PWL (percent within limits, a statistical summary, not an acceptance rule):")
            for p in lot["pwl"]:
                lims = f"{pct(p['lower']) if p['lower'] is not None else ''}..{pct(p['upper']) if p['upper'] is not None else ''}"
                if p["pwl_pct"] is None:
                    out.append(f"    {p['label']:<26} n={p['n']}  {p['note']}")
                else:
                    out.append(f"    {p['label']:<26} n={p['n']}  mean {num2(p['mean'])}  s {num2(p['sd'])}  "
                               f"limits {lims}  PWL {pct(p['pwl_pct'])} %")
    out.append("")
    out.append("* rejected by its checks. " + SCREENING_NOTICE)
    return "\n".join(out)


def _at_row(err: InputError, rows) -> InputError:
    """An error about ``records[i]...`` named by the file's row instead (``Row N: records[i].meta.x ...``)."""
    if rows and err.field.startswith("records["):
        i = int(err.field[len("records["):err.field.index("]")])
        if i < len(rows):
            return InputError(err.code, f"Row {rows[i]['row']}: {err.message}", err.field)
    return err


def run(name: str, args) -> int:
    try:
        as_of = _day(args.as_of, "--as-of") if args.as_of else today_utc()
        recs, _rows = read_file(args.file)
        result, findings = lot_summary(recs, as_of, _settings({}), True, args.lot)
    except InputError as err:
        print("error: " + describe_error(args.file, _at_row(err, locals().get("_rows"))), file=sys.stderr)
        return 2
    except OSError as err:
        print(f"error: {args.file}: {err.strerror}", file=sys.stderr)
        return 2
    if args.json:
        print(json.dumps({"result": result, "findings": [f.to_dict() for f in findings]}, indent=1,
                         allow_nan=False))
    else:
        print(render(result, args.file))
        for f in findings:
            print(f"{f.level}: {f.message}", file=sys.stderr)
    if args.fail_on_due and result["due"]:
        return 1
    return 0


def _count(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"
