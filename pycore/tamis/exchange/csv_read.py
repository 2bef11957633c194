"""Reading the CSV exchange file: :func:`read_csv` (text -> checked records).

Raw inputs round-trip exactly with :mod:`~tamis.exchange.csv_write`; the
``calc_*`` cells are kept apart (for ``report`` to compare), never used as
data. A fault is an error naming its row and column. The layout is in
:mod:`tamis.exchange.csv_format`.
"""

from __future__ import annotations

import csv
import io
import json
import math
import re

from ..errors import InputError
from .csv_format import CALC_COLUMNS, CALC_FAMILY_RE, CSV_VERSION, FAMILIES, FAMILY_RE, MARKER, META_COLUMNS, \
    NUM_RE, REQUIRED_COLUMNS, STATIC_COLUMNS, is_calc_column, is_number_column, unescape_text
from .record import META_NUM, META_TEXT, PLASTICITY_NUM, TEST_NUM, acyclic_work, check_record, content_key

CALC_SET = frozenset(CALC_COLUMNS)

_FIELD_LIMIT = 1 << 26  # 64 Mi characters per cell while reading


def _reject_constant(name):
    raise ValueError(f"{name} is not a valid JSON number")


_DECODER = json.JSONDecoder(parse_constant=_reject_constant)  # stateless; made once


def row_at(text: str, offset: int) -> int:
    """Spreadsheet row number (header = 1) of the character at ``offset``."""
    prefix = text[:offset]
    try:
        rows = list(csv.reader(io.StringIO(prefix, newline="")))
    except csv.Error:
        return prefix.count("\n") + 1
    if not rows:
        return 1
    return len(rows) + (1 if prefix.endswith("\n") else 0)


def decode_csv_bytes(data: bytes, path: str = "csv") -> str:
    """Decode a file's bytes as UTF-8 (a leading BOM is allowed); a file in
    another encoding is refused with the row of its first bad byte."""
    if data[:2] in (b"\xff\xfe", b"\xfe\xff") or (len(data) >= 2 and (data[0] == 0) != (data[1] == 0)):
        # with its byte order mark, or without one: a NUL beside an ASCII letter at the start
        raise InputError("not_utf8", "The file is UTF-16 text; save it as CSV UTF-8.", path)
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        good = data[:exc.start].decode("utf-8")
        n = row_at(good, len(good))
        raise InputError("not_utf8", f"Row {n}: byte {exc.start} (0x{data[exc.start]:02x}) is not UTF-8; the file "
                                     "was saved in another encoding. Save it as CSV UTF-8.",
                         f"{path}.row[{n}]") from None


_WHERE_RE = re.compile(r"^(.*?)\.?row\[(\d+)\]\.?(.*)$")


def where_text(field: str) -> str:
    """``csv.row[3].rev`` -> ``Row 3, column rev`` (``files[1].row[3]`` -> ``files[1]: Row 3``)."""
    m = _WHERE_RE.match(field)
    if not m:
        return field
    head = f"{m.group(1)}: " if m.group(1) not in ("", "csv") else ""
    return f"{head}Row {m.group(2)}" + (f", column {m.group(3)}" if m.group(3) else "")


def cell_error(code: str, field: str, reason: str) -> InputError:
    """An error located at a cell: the message starts with where it is."""
    return InputError(code, f"{where_text(field)}: {reason}", field)


def _parse_num(cell: str, where: str, col: str) -> float:
    """The number in ``cell`` of column ``col`` on row ``where`` (named only in an error)."""
    if not NUM_RE.fullmatch(cell):
        hint = " Use a point as the decimal mark." if "," in cell else ""
        raise cell_error("not_a_number", f"{where}.{col}", f"must be a number, got {cell!r}.{hint}")
    v = float(cell)
    if not math.isfinite(v):
        raise cell_error("not_finite", f"{where}.{col}", f"must be a finite number, got {cell!r}.")
    return v


def _parse_bool(cell: str, where: str, col: str) -> bool:
    low = cell.lower()
    if low in ("true", "false"):
        return low == "true"
    raise cell_error("not_a_boolean", f"{where}.{col}", f"must be true or false, got {cell!r}.")


def _parse_json(cell: str, field: str, want: type):
    try:
        v = _DECODER.decode(unescape_text(cell))
    except ValueError as exc:
        raise cell_error("bad_json", field, f"is not valid JSON ({exc}).") from None
    if not isinstance(v, want):
        raise cell_error("bad_json", field, f"must hold a JSON {'object' if want is dict else 'list'}.")
    return v


def parse_header(header: list[str], path: str) -> dict:
    """Check the header row; return ``{"cols": [...], "colinfo": {column: (family, opening_mm)},
    "static": frozenset of the other columns}``."""
    where = f"{path}.row[1]"
    if not header or header[0] != MARKER:
        raise InputError("not_tamis_csv", f"Row 1 must be the header of a tamis CSV file, starting with the "
                                          f"column {MARKER}; got {header[:1]!r}.", where)
    seen, fams, ops_seen = set(), {f: [] for f in FAMILIES}, set()
    for col in header:
        if col in seen:
            raise InputError("duplicate_column", f"Row 1: the column {col!r} appears twice.", f"{where}.{col}")
        seen.add(col)
        if col in STATIC_COLUMNS:
            continue
        c = CALC_FAMILY_RE.fullmatch(col)
        if c and NUM_RE.fullmatch(c.group(1)):
            continue  # percent passing for people: never read
        m = FAMILY_RE.fullmatch(col)
        if not m or not NUM_RE.fullmatch(m.group(2)) or not (0 < float(m.group(2)) < math.inf):
            raise InputError("unknown_column", f"Row 1: {col!r} is not a column of this format "
                                               f"(see docs/csv.md).", f"{where}.{col}")
        key = (m.group(1), float(m.group(2)))
        if key in ops_seen:
            raise InputError("duplicate_column", f"Row 1: {col!r} repeats the opening of another "
                                                 f"{m.group(1)} column.", f"{where}.{col}")
        ops_seen.add(key)
        fams[m.group(1)].append((key[1], col))
    for col in REQUIRED_COLUMNS:
        if col not in seen:
            raise InputError("missing_column", f"Row 1: the required column {col!r} is missing.", f"{where}.{col}")
    colinfo = {col: (f, op) for f in FAMILIES for op, col in fams[f]}
    return {"cols": header, "colinfo": colinfo, "static": frozenset(seen - set(colinfo))}


_COMMA_NUM_RE = re.compile(r"[+-]?(\d+(,\d*)?|,\d+)([eE][+-]?\d+)?", re.ASCII)


def _point_numbers(cells: dict, where: str) -> None:
    """In a decimal-comma file, the number cells respelled with a point (in place);
    a number written with a point there is refused (``1.250`` may be a thousands separator)."""
    for col, cell in cells.items():
        if not is_number_column(col) or is_calc_column(col):
            continue
        if "." in cell or not _COMMA_NUM_RE.fullmatch(cell):
            hint = " This file uses semicolons and the decimal comma: write 12,4." if "." in cell else ""
            raise cell_error("not_a_number", f"{where}.{col}", f"must be a number, got {cell!r}.{hint}")
        cells[col] = cell.replace(",", ".")


def _meta_from(cells: dict, where: str) -> dict:
    meta = {}
    for col in META_COLUMNS:
        cell = cells.get(col)
        if not cell or col == "meta_extra_json":
            continue
        if col in META_NUM:
            meta[col] = _parse_num(cell, where, col)
        elif col == "rules_json":
            meta["rules"] = _parse_json(cell, f"{where}.{col}", dict)
        else:
            meta[col] = unescape_text(cell)
    _add_extra(meta, cells, "meta_extra_json", "meta", where)
    return meta


def _add_extra(obj: dict, cells: dict, col: str, group: str, where: str) -> bool:
    """Add the keys of the JSON object in cell ``col`` to ``obj``; False when the cell is blank."""
    cell = cells.get(col)
    if not cell:
        return False
    f = f"{where}.{col}"
    for k, v in _parse_json(cell, f, dict).items():
        if k in obj:
            raise cell_error("duplicate_field", f, f"repeats {group}.{k}, which has its own column.")
        obj[k] = v
    return True


def _test_from(cells: dict, fams: dict, where: str):
    test = {}
    for col in TEST_NUM:
        if col in cells:
            test[col] = _parse_num(cells[col], where, col)
    for fam, key, val in (("retained_g", "sieves", "retained_g"), ("passing_pct", "passing", "passing_pct")):
        if fams[fam]:
            test[key] = [{"opening_mm": op, val: _parse_num(cells[col], where, col)} for op, col in fams[fam]]
    plast = {}
    if cells.get("nonplastic"):
        plast["nonplastic"] = _parse_bool(cells["nonplastic"], where, "nonplastic")
    for col in PLASTICITY_NUM:
        if cells.get(col):
            plast[col] = _parse_num(cells[col], where, col)
    if plast:
        test["plasticity"] = plast
    if cells.get("dispersive"):
        test["dispersive"] = _parse_bool(cells["dispersive"], where, "dispersive")
    if _add_extra(test, cells, "test_extra_json", "test", where):
        return test
    return test or None


def _band_from(cells: dict, fams: dict, where: str):
    band = {}
    if cells.get("band_name"):
        band["name"] = unescape_text(cells["band_name"])
    lims = {}
    for fam, key in (("band_min_pct", "min_pct"), ("band_max_pct", "max_pct")):
        for op, col in fams[fam]:
            lims.setdefault(op, {"opening_mm": op, "min_pct": None, "max_pct": None})[key] = \
                _parse_num(cells[col], where, col)
    if lims:
        band["limits"] = [lims[op] for op in sorted(lims, reverse=True)]
    if _add_extra(band, cells, "band_extra_json", "band", where):
        return band
    return band or None


def _column_of(rel_field: str) -> str:
    """The CSV column that holds a record field path (``history[2].at`` -> ``history_json``)."""
    top = re.split(r"[.\[]", rel_field, maxsplit=1)[0]
    if top == "history":
        return "history_json"
    if top in ("test", "band"):
        return f"{top}_extra_json"
    if top == "meta":
        key = rel_field[5:].split(".")[0].split("[")[0]
        return key if key in META_TEXT or key in META_NUM else ("rules_json" if key == "rules"
                                                                 else "meta_extra_json")
    return top


def row_record(cells: dict, colinfo: dict, where: str, *, check_json: bool = False) -> dict:
    """One record from the non-blank cells of a row; ``where`` is ``csv.row[n]``;
    ``colinfo`` maps each opening column to ``(family, opening_mm)``."""
    fams = {f: [] for f in FAMILIES}
    for col in cells:
        info = colinfo.get(col)
        if info is not None:
            fams[info[0]].append((info[1], col))
    for lst in fams.values():
        lst.sort(key=lambda t: -t[0])
    if cells.get(MARKER) != CSV_VERSION:
        raise cell_error("unsupported_version", f"{where}.{MARKER}", f"must be {CSV_VERSION} (the CSV version "
                         f"this core reads), got {cells.get(MARKER, '')!r}.")
    for col in ("record_id", "kind", "rev", "updated_at", "deleted", "history_json"):
        if not cells.get(col):
            raise cell_error("missing_value", f"{where}.{col}", "is empty; every row needs it.")
    rev_cell = cells["rev"]
    if not rev_cell.isdigit() or not rev_cell.isascii() or len(rev_cell) > 16:
        raise cell_error("bad_rev", f"{where}.rev", f"must be a whole number 1 or more, got {rev_cell!r}.")
    rec = {
        "record_id": unescape_text(cells["record_id"]),
        "kind": cells["kind"],
        "rev": int(rev_cell),
        "updated_at": cells["updated_at"],
        "updated_by": unescape_text(cells.get("updated_by", "")),  # blank: an empty text
        "deleted": _parse_bool(cells["deleted"], where, "deleted"),
        "exported_at": cells.get("exported_at") or None,
        "meta": _meta_from(cells, where),
        "test": _test_from(cells, fams, where),
        "band": _band_from(cells, fams, where),
        "history": _parse_json(cells["history_json"], f"{where}.history_json", list),
    }
    try:
        return check_record(rec, "", check_json=check_json)
    except InputError as err:
        col = _column_of(err.field)
        raise cell_error(err.code, f"{where}.{col}", err.message) from None


def read_csv(text: str, path: str = "csv", *, memo: dict | None = None) -> tuple[list[dict], list[dict]]:
    """Parse and validate a whole CSV file.

    Returns ``(records, rows)`` where ``rows[i]`` is ``{"row": n, "calc": {...}}``
    for ``records[i]``: the spreadsheet row number and the stored calc cells
    (kept only for ``report`` to compare; never used as data). Identical rows
    for the same id are read once.

    ``memo`` (a dict the caller keeps while it reads several files, see
    :func:`read_files`): a row whose cells, calc columns aside, are those of a
    row read before gives that row's record object again instead of being
    parsed a second time. The same cells make the same record and records are
    never changed once built, so only the work is saved.

    Raises
    ------
    InputError
        At the first fault, with field ``<path>.row[<n>].<column>``; nothing
        is returned from a file with any fault.
    """
    if not isinstance(text, str):
        raise InputError("not_a_string", f"{path} must be the text of a CSV file.", path)
    if text.startswith("\ufeff"):
        text = text[1:]
    bad = text.find("\ufffd")
    if bad >= 0:
        n = row_at(text, bad)
        raise InputError("not_utf8", f"Row {n} holds the replacement character U+FFFD: the file was not read "
                                     "as UTF-8 (saved in another encoding?). Save it as CSV UTF-8.",
                         f"{path}.row[{n}]")
    if not text.strip():
        raise InputError("empty_file", "The file is empty.", path)
    old_limit = csv.field_size_limit()
    csv.field_size_limit(_FIELD_LIMIT)
    try:
        with acyclic_work():
            return _read_rows(text, path, memo)
    finally:
        csv.field_size_limit(old_limit)


def read_files(texts, paths=None) -> list[list[dict]]:
    """The records of several CSV files (``files[i]`` in errors unless ``paths`` names them),
    a row repeated across files read once (``memo`` of :func:`read_csv`)."""
    memo = {}
    with acyclic_work():  # one pause for all files: else each file's end makes the collector walk all before
        return [read_csv(t, f"files[{i}]" if paths is None else paths[i], memo=memo)[0]
                for i, t in enumerate(texts)]


def _read_rows(text: str, path: str, memo: dict | None):
    # The decimal-comma variant (docs/csv.md) is told by its first separator: "tamis_csv;".
    comma = text.startswith(MARKER + ";")
    reader = csv.reader(io.StringIO(text, newline=""), strict=True, delimiter=";" if comma else ",")
    n = 0
    has_nul = "\x00" in text
    records, rows, by_id = [], [], {}
    hdr = None
    try:
        for n, row in enumerate(reader, start=1):
            if hdr is None:
                hdr = parse_header(row, path)
                cols = hdr["cols"]
                calc_cols = [c for c in CALC_COLUMNS if c in hdr["static"]]
                continue
            if not any(row):
                continue  # a blank line holds nothing
            where = f"{path}.row[{n}]"
            if has_nul:
                for col, cell in zip(cols, row):
                    if "\x00" in cell:
                        raise cell_error("nul_character", f"{where}.{col}", "the cell holds a NUL character (byte "
                                         "0), which no text of a record may hold; the file may be damaged.")
            if len(row) != len(cols):
                raise InputError("wrong_cell_count", f"Row {n} has {len(row)} cells but the header has "
                                                     f"{len(cols)}; the line may be truncated or hold an "
                                                     "unquoted comma.", where)
            cells = {col: cell for col, cell in zip(cols, row) if cell}  # the non-blank cells
            if comma:
                _point_numbers(cells, where)
            if memo is None:
                rec = row_record(cells, hdr["colinfo"], where)
            else:
                key = tuple(item for item in cells.items() if not is_calc_column(item[0]))
                rec = memo.get(key)
                if rec is None:
                    rec = memo[key] = row_record(cells, hdr["colinfo"], where)
            prev = by_id.get(rec["record_id"])
            if prev is not None:
                if prev[0] is rec or (content_key(prev[0]) == content_key(rec) and prev[0]["history"] == rec["history"]
                                      and prev[0]["exported_at"] == rec["exported_at"]):
                    continue
                raise cell_error("duplicate_id", f"{where}.record_id", f"record {rec['record_id']} is also on row "
                                 f"{prev[1]} with different content.")
            by_id[rec["record_id"]] = (rec, n)
            records.append(rec)
            rows.append({"row": n, "calc": {c: unescape_text(cells[c]) for c in calc_cols if c in cells}})
    except csv.Error as exc:
        n += 1  # the row being read when the reader gave up
        raise InputError("bad_csv", f"Row {n}: {exc} (an opened quote is never closed, or text follows a "
                                    "closing quote); the file may be truncated.", f"{path}.row[{n}]") from None
    if hdr is None:
        raise InputError("empty_file", "The file is empty.", path)
    return records, rows
