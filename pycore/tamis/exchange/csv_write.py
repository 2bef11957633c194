"""Writing the CSV exchange file: :func:`write_csv` (records -> text).

One header, one row per record, CRLF line ends, rows by kind then record id;
the computed ``calc_*`` columns are written for people and ignored on reading
(:mod:`~tamis.exchange.csv_read` recomputes, never trusts them). The layout is
in :mod:`tamis.exchange.csv_format`.
"""

from __future__ import annotations

import math
import re

from .csv_format import CALC_BESIDE, CALC_COLUMNS, CALC_FAMILY, CSV_VERSION, DIALECTS, FAMILIES, FIXED_COLUMNS, \
    MARKER, META_COLUMNS, TEST_HEAD, TEST_TAIL, escape_text, fmt_num, is_number_column
from .record import META_NUM, META_TEXT, PLASTICITY_NUM, TEST_NUM, acyclic_work, dump_json, is_number, row_order

_META_TEXT_SET, _META_NUM_SET, _TEST_NUM_SET = frozenset(META_TEXT), frozenset(META_NUM), frozenset(TEST_NUM)


def _falling_fit(v, entry_fits) -> bool:
    """A non-empty list of dicts that ``entry_fits`` accepts, openings strictly falling."""
    if not isinstance(v, list) or not v:
        return False
    last = math.inf
    for e in v:
        if not isinstance(e, dict) or not is_number(e.get("opening_mm")) or not entry_fits(e):
            return False
        op = float(e["opening_mm"])
        if not (0 < op < last):
            return False
        last = op
    return True


def _limit_fits(e: dict) -> bool:
    if set(e) != {"opening_mm", "min_pct", "max_pct"}:
        return False
    lo, hi = e["min_pct"], e["max_pct"]
    return (lo is not None or hi is not None) and (lo is None or is_number(lo)) and (hi is None or is_number(hi))


def _limits_fit(v) -> bool:
    """``[{"opening_mm", "min_pct", "max_pct"}, ...]``, a limit a number or null, coarsest first."""
    return _falling_fit(v, _limit_fits)


def _plasticity_fit(v) -> bool:
    if not isinstance(v, dict) or not v:
        return False
    for k, x in v.items():
        if k == "nonplastic":
            if not isinstance(x, bool):
                return False
        elif k in PLASTICITY_NUM:
            if not is_number(x):
                return False
        else:
            return False
    return True


def _bool_cell(b: bool) -> str:
    return "true" if b else "false"


def record_cells(rec: dict) -> dict:
    """The non-blank cells of a checked record's row (calc columns excluded)."""
    c = {MARKER: CSV_VERSION, "record_id": escape_text(rec["record_id"]), "kind": rec["kind"],
         "rev": str(rec["rev"]), "updated_at": rec["updated_at"],
         "deleted": _bool_cell(rec["deleted"]), "history_json": escape_text(dump_json(rec["history"]))}
    if rec["updated_by"]:
        c["updated_by"] = escape_text(rec["updated_by"])  # empty text: a blank cell (read back as "")
    if rec["exported_at"] is not None:
        c["exported_at"] = rec["exported_at"]
    extra = {}
    for k, v in rec["meta"].items():
        if k in _META_TEXT_SET and isinstance(v, str) and v:  # an empty text goes to the JSON: the cell stays blank
            c[k] = escape_text(v)
        elif k in _META_NUM_SET and is_number(v):
            c[k] = fmt_num(v)
        elif k == "rules" and isinstance(v, dict):
            c["rules_json"] = escape_text(dump_json(v))
        else:
            extra[k] = v
    if extra:
        c["meta_extra_json"] = escape_text(dump_json(extra))
    if rec["test"] is not None:
        _group_cells(rec["test"], _test_cell, c, "test_extra_json")
    if rec["band"] is not None:
        _group_cells(rec["band"], _band_cell, c, "band_extra_json")
    return c


def _group_cells(obj: dict, put, c: dict, extra_col: str) -> None:
    """Write the keys of ``obj`` that ``put`` can hold in columns; the others, and an
    empty object, go verbatim into the JSON column ``extra_col``."""
    extra, wrote = {}, False
    for k, v in obj.items():
        if put(k, v, c):
            wrote = True
        else:
            extra[k] = v
    if extra or not wrote:
        c[extra_col] = escape_text(dump_json(extra))


def _test_cell(k: str, v, c: dict) -> bool:
    """Put test key ``k`` into its columns if they hold it exactly; False if not."""
    if k in _TEST_NUM_SET and is_number(v):
        c[k] = fmt_num(v)
    elif k in ("sieves", "passing"):
        got = _pairs_cells(v, "retained_g" if k == "sieves" else "passing_pct")
        if got is None:
            return False
        c.update(got)
    elif k == "plasticity" and _plasticity_fit(v):
        for pk, x in v.items():
            c[pk] = _bool_cell(x) if pk == "nonplastic" else fmt_num(x)
    elif k == "dispersive" and isinstance(v, bool):
        c["dispersive"] = _bool_cell(v)
    else:
        return False
    return True


def column_name(family: str, opening_mm: float) -> str:
    """The column of ``family`` at ``opening_mm`` [mm], e.g. ``retained_g@4.75mm``."""
    return f"{family}@{fmt_num(opening_mm)}mm"


def _pairs_cells(v, val: str):
    """The cells of ``[{"opening_mm", val}, ...]`` when the columns hold it exactly
    (a non-empty list of such pairs of numbers, openings strictly falling), else None."""
    if not isinstance(v, list) or not v:
        return None
    out, last = {}, math.inf
    for e in v:
        if not isinstance(e, dict) or len(e) != 2:
            return None
        op, x = e.get("opening_mm"), e.get(val)
        if not (is_number(op) and is_number(x)):
            return None
        op = float(op)
        if not (0 < op < last):
            return None
        last = op
        out[column_name(val, op)] = fmt_num(x)
    return out


def _band_cell(k: str, v, c: dict) -> bool:
    """Put band key ``k`` into its columns if they hold it exactly; False if not."""
    if k == "name" and isinstance(v, str) and v:
        c["band_name"] = escape_text(v)
    elif k == "limits" and _limits_fit(v):
        for e in v:
            if e["min_pct"] is not None:
                c[column_name("band_min_pct", e["opening_mm"])] = fmt_num(e["min_pct"])
            if e["max_pct"] is not None:
                c[column_name("band_max_pct", e["opening_mm"])] = fmt_num(e["max_pct"])
    else:
        return False
    return True


def header_for(cell_dicts) -> list[str]:
    """The header for a set of rows: every static column, and the opening columns
    that some row uses, coarsest first."""
    openings = {f: set() for f in FAMILIES + (CALC_FAMILY,)}
    used = set()
    for c in cell_dicts:
        used.update(c)  # each column name once, whatever the number of rows
    for col in used:
        if "@" in col:
            fam, _, rest = col.partition("@")
            openings[fam].add(float(rest[:-2]))
    band_ops = sorted(openings["band_min_pct"] | openings["band_max_pct"], reverse=True)
    cols = list(FIXED_COLUMNS)
    for col in META_COLUMNS:
        cols.append(col)
        if col in CALC_BESIDE:
            cols.append(CALC_BESIDE[col])  # the band's or base soil's name beside its id
    cols += list(TEST_HEAD)
    # Each mass beside the percent passing it gives (calc, for people), coarsest first.
    for o in sorted(openings["retained_g"] | openings[CALC_FAMILY], reverse=True):
        if o in openings["retained_g"]:
            cols.append(column_name("retained_g", o))
        if o in openings[CALC_FAMILY]:
            cols.append(column_name(CALC_FAMILY, o))
    cols += [column_name("passing_pct", o) for o in sorted(openings["passing_pct"], reverse=True)]
    cols += list(TEST_TAIL) + ["band_name"]
    for o in band_ops:
        cols += [column_name("band_min_pct", o), column_name("band_max_pct", o)]
    cols += ["band_extra_json"] + list(CALC_COLUMNS) + ["history_json"]
    return cols


_NEEDS_QUOTES = {",": re.compile('[,"\r\n]'), ";": re.compile('[;"\r\n]')}


def quote(cell: str, sep: str = ",") -> str:
    """A cell as RFC 4180 writes it: enclosed in double quotes, an embedded quote doubled, when it
    holds the separator (a comma; a semicolon in the decimal-comma variant), a quote or a line break."""
    if _NEEDS_QUOTES[sep].search(cell):
        return '"' + cell.replace('"', '""') + '"'
    return cell


def write_csv(records, summaries=None, *, bom: bool = False, dialect: str = "standard") -> str:
    """CSV text of checked records: one header, one row per record, CRLF line ends,
    rows in :func:`row_order`. ``summaries`` maps record id -> calc cells.
    ``dialect`` ``"decimal_comma"`` separates cells with ``;`` and writes the decimal
    mark of every number cell as ``,`` (``docs/csv.md``, "Two variants")."""
    if dialect not in DIALECTS:
        raise ValueError(f"unknown CSV dialect {dialect!r}")
    with acyclic_work():
        return _write_rows(records, summaries, bom, dialect)


def _write_rows(records, summaries, bom: bool, dialect: str = "standard") -> str:
    recs = sorted(records, key=row_order)
    cells = [record_cells(r) for r in recs]
    if summaries:
        for r, c in zip(recs, cells):
            c.update(summaries.get(r["record_id"], {}))
    header = header_for(cells)
    pos = {h: i for i, h in enumerate(header)}
    sep, mark = DIALECTS[dialect]
    lines = [sep.join(quote(h, sep) for h in header)]
    if mark != ".":
        numeric = [i for i, h in enumerate(header) if is_number_column(h)]
    for c in cells:
        row = [""] * len(header)
        for col, v in c.items():
            row[pos[col]] = quote(v, sep)
        if mark != ".":
            for i in numeric:
                row[i] = row[i].replace(".", mark)  # a number cell holds digits, sign, point, exponent only
        lines.append(sep.join(row))
    if bom:
        lines[0] = "\ufeff" + lines[0]
    lines.append("")  # the last row ends with CRLF too
    return "\r\n".join(lines)
