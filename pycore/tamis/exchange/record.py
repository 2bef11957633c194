"""Records: the stored unit, the CSV exchange format, and merging.

A *record* is the unit the app stores (IndexedDB), the CSV carries (one row)
and the office merges. Its shape is documented in ``docs/records.md``; the CSV
format in ``docs/csv.md``. This module owns both, so the web worker and the
office command line write the same bytes.

- :func:`check_record` validates one record (field paths such as
  ``records[3].rev``) and returns it with every key present.
- :func:`write_csv` / :func:`read_csv` are the codec. Raw inputs round-trip
  exactly; the computed ``calc_*`` columns are written for people and are
  ignored on reading (a reader recomputes, never trusts them).
- :func:`merge_versions` decides, for one record id, which version wins, or
  that two versions conflict. The same rule serves ``records_import_csv``
  (a device's records against a file) and ``records_merge`` (many files).

Numbers in the typed columns are finite floats: a JSON number ``12`` is read
back as ``12.0``, the same number (JSON and JavaScript do not tell them apart).
Everything else round-trips exactly.

References
----------
- RFC 4180 (IETF, Oct 2005), section 2: CRLF line ends, optional header,
  fields with comma, quote or line break enclosed in double quotes, an
  embedded quote doubled.
- OWASP, "CSV Injection" (www-community attack page, 2025 revision): cells
  that start with ``=``, ``+``, ``-``, ``@``, tab, carriage return or line
  feed are read as formulas by spreadsheets; prefix them with a single quote.
- RFC 9562 (IETF, May 2024), section 4: the text form of a UUID.
- ISO 8601-1:2019 / RFC 3339: date-time with ``Z`` for UTC.
"""

from __future__ import annotations

import contextlib
import csv
import gc
import io
import json
import math
import re
from datetime import datetime
from itertools import compress

from .errors import InputError, join, require_list, require_mapping

#: Version of the CSV layout, written in the first column of every row.
CSV_VERSION = "1"
MARKER = "tamis_csv"

#: Record kinds, in the order their rows are written.
KINDS = ("band", "base", "test")
_KIND_RANK = {k: i for i, k in enumerate(KINDS)}

RECORD_KEYS = ("record_id", "kind", "rev", "updated_at", "updated_by", "deleted", "exported_at",
               "meta", "test", "band", "history")
#: Keys that make a revision's content (``history`` and ``exported_at`` are not content).
CONTENT_KEYS = ("record_id", "kind", "rev", "updated_at", "updated_by", "deleted", "meta", "test", "band")

META_TEXT = ("sample_id", "project", "material", "zone", "source", "sampling_point", "station", "lift",
             "sampled_at", "tested_by", "notes", "band_id", "base_id", "retest_of")
META_NUM = ("offset_m", "elevation_m", "latitude", "longitude")
TEST_NUM = ("dry_mass_g", "washed_dry_mass_g", "pan_g")
PLASTICITY_NUM = ("liquid_limit", "plasticity_index")
_META_TEXT_SET, _META_NUM_SET, _TEST_NUM_SET = frozenset(META_TEXT), frozenset(META_NUM), frozenset(TEST_NUM)

FIXED_COLUMNS = (MARKER, "record_id", "kind", "rev", "updated_at", "updated_by", "deleted", "exported_at")
META_COLUMNS = ("sample_id", "project", "material", "zone", "source", "sampling_point", "station",
                "offset_m", "elevation_m", "latitude", "longitude", "lift", "sampled_at", "tested_by",
                "notes", "band_id", "base_id", "retest_of", "rules_json", "meta_extra_json")
TEST_HEAD = TEST_NUM
TEST_TAIL = ("nonplastic", "liquid_limit", "plasticity_index", "dispersive", "test_extra_json")
CALC_COLUMNS = ("calc_d10_mm", "calc_d15_mm", "calc_d60_mm", "calc_d85_mm", "calc_cu", "calc_fines_pct",
                "calc_verdict", "calc_failing_checks", "calc_note", "calc_core_version")
REQUIRED_COLUMNS = FIXED_COLUMNS + ("history_json",)

#: Families of columns that carry one opening [mm] in their name.
FAMILIES = ("retained_g", "passing_pct", "band_min_pct", "band_max_pct")
_FAMILY_RE = re.compile(r"(retained_g|passing_pct|band_min_pct|band_max_pct)@([0-9.eE+-]+)mm", re.ASCII)

_CALC_SET = frozenset(CALC_COLUMNS)
_STATIC_COLUMNS = frozenset(FIXED_COLUMNS + META_COLUMNS + TEST_HEAD + TEST_TAIL + CALC_COLUMNS
                            + ("band_name", "band_extra_json", "history_json"))

#: First characters that make a spreadsheet read a cell as a formula (OWASP),
#: plus the escape character itself so that every text round-trips exactly.
TRIGGERS = frozenset("=+-@\t\r\n'")

_UUID_RE = re.compile(r"[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}", re.ASCII)
_ISO_RE = re.compile(r"(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2}):(\d{2})(\.\d{1,9})?Z", re.ASCII)
_NUM_RE = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?", re.ASCII)  # used with fullmatch
#: Several numbers of :data:`_NUM_RE` joined by U+FFFD (which no cell of a file read can hold).
_NUMS_RE = re.compile(r"(?:[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)"
                      r"(?:\ufffd[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)*", re.ASCII)
#: The times :func:`is_iso_utc` accepts on their text alone: a year other than 0000, a month,
#: a day 01-28 (every month has it), a time of day 00:00:00-23:59:59.
_ISO_SURE_RE = re.compile(r"(?!0000)\d{4}-(?:0[1-9]|1[0-2])-(?:0[1-9]|1\d|2[0-8])"
                          r"T(?:[01]\d|2[0-3]):[0-5]\d:[0-5]\d(?:\.\d{1,9})?Z", re.ASCII)
_MAX_EXACT_INT = 2 ** 53
_FIELD_LIMIT = 1 << 26  # 64 Mi characters per cell while reading


# ---------------------------------------------------------------- small helpers

def _is_num(v) -> bool:
    """A finite JSON number that a float holds exactly."""
    t = type(v)
    if t is float:      # the usual cases first (bool is its own type, never these two)
        return math.isfinite(v)
    if t is int:
        return abs(v) <= _MAX_EXACT_INT
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return False
    if isinstance(v, int):
        return abs(v) <= _MAX_EXACT_INT
    return math.isfinite(v)


def fmt_num(v) -> str:
    """Shortest text that reads back as the same float (``repr``, without a trailing ``.0``)."""
    r = repr(v if type(v) is float else float(v))
    return r[:-2] if r.endswith(".0") else r


def escape_text(s: str) -> str:
    """Neutralise a text cell: prefix ``'`` when it is empty or starts with a formula
    trigger or with ``'`` itself (OWASP CSV injection guidance). :func:`unescape_text`
    undoes it exactly."""
    if not s or s[0] in TRIGGERS:
        return "'" + s
    return s


def unescape_text(cell: str) -> str:
    return cell[1:] if cell[:1] == "'" else cell


#: The encoder of :func:`dump_json`, made once: ``json.dumps`` with these options
#: builds a new one on every call. Holds no state between calls.
_ENCODER = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"), allow_nan=False)


def dump_json(obj) -> str:
    """Compact JSON text (UTF-8 kept, no NaN/Infinity), as ``json.dumps`` with those options."""
    return _ENCODER.encode(obj)


def _reject_constant(name):
    raise ValueError(f"{name} is not a valid JSON number")


_DECODER = json.JSONDecoder(parse_constant=_reject_constant)  # stateless; made once


@contextlib.contextmanager
def acyclic_work():
    """Pause the cyclic garbage collector while a whole file of records is built or
    merged, and restore it as it was. Records are trees (no reference cycles),
    so nothing waits for the collector meanwhile; left running, it would walk
    every record already built again and again as a large file is read (about
    a third of the reading time). Reference counting still frees everything.
    Nested uses pause once; a caller doing several steps on many records (the
    office ``merge``) wraps them all, so the collector does not walk every
    record between the steps either."""
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def is_iso_utc(s) -> bool:
    """``YYYY-MM-DDTHH:MM:SS[.fraction]Z`` naming a real instant (ISO 8601 / RFC 3339, UTC)."""
    if not isinstance(s, str):
        return False
    if _ISO_SURE_RE.fullmatch(s):
        return True
    m = _ISO_RE.fullmatch(s)
    if not m:
        return False
    y, mo, d, h, mi, sec, _ = m.groups()
    if "01" <= mo <= "12" and "01" <= d <= "28" and h <= "23" and mi <= "59" and sec <= "59" and y != "0000":
        return True  # two-digit fields compared as text: a day every month has, a real time of day
    try:
        datetime(int(y), int(mo), int(d), int(h), int(mi), int(sec))
    except ValueError:
        return False
    return True


def _iso(obj: dict, key: str, path: str, *, optional: bool = False):
    v = obj.get(key)
    if v is None and optional:
        return None
    if not is_iso_utc(v):
        p = join(path, key)
        raise InputError("bad_time", f"{p} must be an ISO 8601 UTC time such as 2026-12-01T09:30:00Z, "
                                     f"got {v!r}.", p)
    return v


def _json_value(v, path: str):
    try:
        dump_json(v)
    except (TypeError, ValueError) as exc:
        raise InputError("not_json", f"{path} must hold plain JSON values ({exc}).", path) from None


# ---------------------------------------------------------------- the record

def check_record(rec, path: str = "record", *, check_json: bool = True) -> dict:
    """Validate one record and return it with every key of :data:`RECORD_KEYS`.

    Keys starting with ``_`` are device-local (for instance a cached result)
    and are dropped; any other unknown key is an error, so nothing is lost
    silently. The content of ``test`` and ``band`` is not judged here (a
    half-entered test is a valid record); ``evaluate`` judges it.

    Raises
    ------
    InputError
        With the field path, e.g. ``records[3].history[0].at``.
    """
    require_mapping(rec, path)
    for k in rec:
        if k not in RECORD_KEYS and not (isinstance(k, str) and k.startswith("_")):
            raise InputError("unknown_field", f"{join(path, str(k))} is not a record field; record fields are "
                                              f"{', '.join(RECORD_KEYS)}.", join(path, str(k)))
    rid = rec.get("record_id")
    if not isinstance(rid, str) or not _UUID_RE.fullmatch(rid):
        raise InputError("bad_record_id", f"{join(path, 'record_id')} must be a UUID in lower-case text form "
                                          f"(8-4-4-4-12 hex digits), got {rid!r}.", join(path, "record_id"))
    kind = rec.get("kind")
    if kind not in KINDS:
        raise InputError("bad_kind", f"{join(path, 'kind')} must be one of {', '.join(KINDS)}, got {kind!r}.",
                         join(path, "kind"))
    rev = rec.get("rev")
    if isinstance(rev, bool) or not isinstance(rev, int) or rev < 1:
        raise InputError("bad_rev", f"{join(path, 'rev')} must be a whole number 1 or more, got {rev!r}.",
                         join(path, "rev"))
    updated_at = _iso(rec, "updated_at", path)
    by = rec.get("updated_by")
    if not isinstance(by, str):
        raise InputError("not_a_string", f"{join(path, 'updated_by')} must be text (initials or a name).",
                         join(path, "updated_by"))
    deleted = rec.get("deleted", False)
    if deleted is None:
        deleted = False
    if not isinstance(deleted, bool):
        raise InputError("not_a_boolean", f"{join(path, 'deleted')} must be true or false.", join(path, "deleted"))
    exported_at = _iso(rec, "exported_at", path, optional=True)
    meta = rec.get("meta") or {}
    if not isinstance(meta, dict):
        require_mapping(meta, join(path, "meta"))
    out = {"record_id": rid, "kind": kind, "rev": rev, "updated_at": updated_at, "updated_by": by,
           "deleted": deleted, "exported_at": exported_at, "meta": meta}
    for key in ("test", "band"):
        v = rec.get(key)
        if v is not None and not isinstance(v, dict):
            require_mapping(v, join(path, key))
        out[key] = v
    hist = rec.get("history")
    if hist is None:
        hist = []
    elif not isinstance(hist, list):
        require_list(hist, join(path, "history"))
    for i, h in enumerate(hist):
        if not isinstance(h, dict):
            require_mapping(h, join(join(path, "history"), i))
        hrev = h.get("rev")
        if isinstance(hrev, bool) or not isinstance(hrev, int) or hrev < 1:
            hp = join(join(path, "history"), i)
            raise InputError("bad_rev", f"{join(hp, 'rev')} must be a whole number 1 or more.", join(hp, "rev"))
        if not is_iso_utc(h.get("at")):
            _iso(h, "at", join(join(path, "history"), i))
        if not isinstance(h.get("by"), str):
            hp = join(join(path, "history"), i)
            raise InputError("not_a_string", f"{join(hp, 'by')} must be text.", join(hp, "by"))
    out["history"] = hist
    if check_json:  # a record read from CSV holds parsed JSON and typed cells only
        _plain_json(out, path)
        _no_replacement_char(out, path)
    return out


def _no_replacement_char(value, path: str) -> None:
    """Refuse text holding U+FFFD, the mark a decoder leaves for bytes it could
    not read. The CSV reader takes U+FFFD as the sign of a file saved in
    another encoding, so such text could be exported but never read back; it
    is refused here, where it enters, with the field that holds it."""
    if isinstance(value, str):
        if "\ufffd" in value:
            raise InputError("replacement_char", f"{path or 'record'} holds the character U+FFFD, the mark of "
                             "text read in the wrong encoding; retype it.", path)
    elif isinstance(value, dict):
        for k, v in value.items():
            _no_replacement_char(k, path)
            _no_replacement_char(v, join(path, str(k)))
    elif isinstance(value, list):
        for i, v in enumerate(value):
            _no_replacement_char(v, join(path, i))


def _plain_json(rec: dict, path: str) -> None:
    """Every nested value must be plain JSON (finite numbers, text, true/false/null,
    lists, objects with text keys); the error names the first part that is not."""
    try:
        dump_json([rec["meta"], rec["test"], rec["band"], rec["history"]])
        return
    except (TypeError, ValueError):
        pass
    for key in ("meta", "test", "band", "history"):
        part = rec[key]
        items = part.items() if isinstance(part, dict) else enumerate(part or [])
        for k, v in items:
            _json_value(v, join(join(path, key), k))


def content_key(rec: dict) -> str:
    """Canonical text of a revision's content: equal for equal content whatever the
    key order or int/float spelling of numbers (history and exported_at excluded)."""
    return json.dumps(_floats({k: rec[k] for k in CONTENT_KEYS}), sort_keys=True, ensure_ascii=False,
                      separators=(",", ":"))


def _floats(obj):
    """``obj`` with every int (not bool) turned into a float, for comparisons only."""
    t = type(obj)
    if t is int:
        return float(obj)
    if t is dict:
        return {k: _floats(v) for k, v in obj.items()}
    if t is list:
        return [_floats(v) for v in obj]
    return obj


def row_order(rec: dict):
    """Rows are written by kind (bands, base soils, tests), then record id."""
    return (_KIND_RANK[rec["kind"]], rec["record_id"])


# ---------------------------------------------------------------- record -> cells

def _falling_fit(v, entry_fits) -> bool:
    """A non-empty list of dicts that ``entry_fits`` accepts, openings strictly falling."""
    if not isinstance(v, list) or not v:
        return False
    last = math.inf
    for e in v:
        if not isinstance(e, dict) or not _is_num(e.get("opening_mm")) or not entry_fits(e):
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
    return (lo is not None or hi is not None) and (lo is None or _is_num(lo)) and (hi is None or _is_num(hi))


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
            if not _is_num(x):
                return False
        else:
            return False
    return True


def _bool_cell(b: bool) -> str:
    return "true" if b else "false"


def record_cells(rec: dict) -> dict:
    """The non-blank cells of a checked record's row (calc columns excluded)."""
    c = {MARKER: CSV_VERSION, "record_id": escape_text(rec["record_id"]), "kind": rec["kind"],
         "rev": str(rec["rev"]), "updated_at": rec["updated_at"], "updated_by": escape_text(rec["updated_by"]),
         "deleted": _bool_cell(rec["deleted"]), "history_json": escape_text(dump_json(rec["history"]))}
    if rec["exported_at"] is not None:
        c["exported_at"] = rec["exported_at"]
    extra = {}
    for k, v in rec["meta"].items():
        if k in _META_TEXT_SET and isinstance(v, str):
            c[k] = "'" + v if not v or v[0] in TRIGGERS else v  # escape_text, inlined
        elif k in _META_NUM_SET and _is_num(v):
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
    if k in _TEST_NUM_SET and _is_num(v):
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


#: (family, opening_mm) -> column name, filled as columns are written (bounded: openings come from files).
_COLUMN_NAMES: dict = {}


def _column_name(family: str, opening_mm: float) -> str:
    name = _COLUMN_NAMES.get((family, opening_mm))
    if name is None:
        name = f"{family}@{fmt_num(opening_mm)}mm"
        if len(_COLUMN_NAMES) < 4096:
            _COLUMN_NAMES[(family, opening_mm)] = name
    return name


def _pairs_cells(v, val: str):
    """The cells of ``[{"opening_mm", val}, ...]`` when the columns hold it exactly
    (a non-empty list of such pairs of numbers, openings strictly falling), else None."""
    if not isinstance(v, list) or not v:
        return None
    out, last, names = {}, math.inf, _COLUMN_NAMES
    for e in v:
        if not isinstance(e, dict) or len(e) != 2:
            return None
        op, x = e.get("opening_mm"), e.get(val)
        if not (_is_num(op) and _is_num(x)):
            return None
        op = float(op)
        if not (0 < op < last):
            return None
        last = op
        r = repr(x if type(x) is float else float(x))  # fmt_num, inlined
        out[names.get((val, op)) or _column_name(val, op)] = r[:-2] if r[-2:] == ".0" else r
    return out


def _band_cell(k: str, v, c: dict) -> bool:
    """Put band key ``k`` into its columns if they hold it exactly; False if not."""
    if k == "name" and isinstance(v, str):
        c["band_name"] = escape_text(v)
    elif k == "limits" and _limits_fit(v):
        for e in v:
            o = fmt_num(e["opening_mm"])
            if e["min_pct"] is not None:
                c[f"band_min_pct@{o}mm"] = fmt_num(e["min_pct"])
            if e["max_pct"] is not None:
                c[f"band_max_pct@{o}mm"] = fmt_num(e["max_pct"])
    else:
        return False
    return True


def header_for(cell_dicts) -> list[str]:
    """The header for a set of rows: every static column, and the opening columns
    that some row uses, coarsest first."""
    openings = {f: set() for f in FAMILIES}
    used = set()
    for c in cell_dicts:
        used.update(c)  # each column name once, whatever the number of rows
    for col in used:
        if "@" in col:
            fam, _, rest = col.partition("@")
            openings[fam].add(float(rest[:-2]))
    band_ops = sorted(openings["band_min_pct"] | openings["band_max_pct"], reverse=True)
    cols = list(FIXED_COLUMNS) + list(META_COLUMNS) + list(TEST_HEAD)
    cols += [f"retained_g@{fmt_num(o)}mm" for o in sorted(openings["retained_g"], reverse=True)]
    cols += [f"passing_pct@{fmt_num(o)}mm" for o in sorted(openings["passing_pct"], reverse=True)]
    cols += list(TEST_TAIL) + ["band_name"]
    for o in band_ops:
        cols += [f"band_min_pct@{fmt_num(o)}mm", f"band_max_pct@{fmt_num(o)}mm"]
    cols += ["band_extra_json"] + list(CALC_COLUMNS) + ["history_json"]
    return cols


_NEEDS_QUOTES = re.compile('[,"\r\n]')
#: Columns whose cells this module writes without a comma, quote or line break: the CSV
#: version, a UUID, a kind, a whole number, ISO times, true/false, and numbers (``fmt_num``;
#: the opening columns, whose names hold ``@``, too).
_PLAIN_COLUMNS = frozenset((MARKER, "record_id", "kind", "rev", "updated_at", "deleted", "exported_at")
                           + META_NUM + TEST_NUM + PLASTICITY_NUM + ("nonplastic", "dispersive")
                           + ("calc_d10_mm", "calc_d15_mm", "calc_d60_mm", "calc_d85_mm", "calc_cu",
                              "calc_fines_pct"))


def _quote(cell: str) -> str:
    if _NEEDS_QUOTES.search(cell):
        return '"' + cell.replace('"', '""') + '"'
    return cell


def write_csv(records, summaries=None, *, bom: bool = False) -> str:
    """CSV text of checked records: one header, one row per record, CRLF line ends,
    rows in :func:`row_order`. ``summaries`` maps record id -> calc cells."""
    with acyclic_work():
        return _write_rows(records, summaries, bom)


def _write_rows(records, summaries, bom: bool) -> str:
    recs = sorted(records, key=row_order)
    cells = [record_cells(r) for r in recs]
    if summaries:
        for r, c in zip(recs, cells):
            c.update(summaries.get(r["record_id"], {}))
    header = header_for(cells)
    pos = {h: i for i, h in enumerate(header)}
    lines = [",".join(_quote(h) for h in header)]
    blank = [""] * len(header)
    quotes = _NEEDS_QUOTES.search
    plain = {h for h in header if h in _PLAIN_COLUMNS or "@" in h}  # cells that never need quotes
    for c in cells:
        row = blank[:]
        for col, v in c.items():
            row[pos[col]] = v if col in plain or not quotes(v) else '"' + v.replace('"', '""') + '"'
        lines.append(",".join(row))
    if bom:
        lines[0] = "\ufeff" + lines[0]
    lines.append("")  # the last row ends with CRLF too
    return "\r\n".join(lines)


# ---------------------------------------------------------------- cells -> record

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
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
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
    if not _NUM_RE.fullmatch(cell):
        hint = " Use a point as the decimal mark." if "," in cell else ""
        raise cell_error("not_a_number", f"{where}.{col}", f"must be a number, got {cell!r}.{hint}")
    v = float(cell)
    if not math.isfinite(v):
        raise cell_error("not_finite", f"{where}.{col}", f"must be a finite number, got {cell!r}.")
    return v


def _parse_nums(cells: dict, cols, where: str) -> list[float]:
    """The numbers in the non-blank cells ``cols``, in that order: what
    :func:`_parse_num` gives for each, checked in one pass; when one is not a
    finite number, :func:`_parse_num` names the first that is not."""
    texts = [cells[c] for c in cols]
    if _NUMS_RE.fullmatch("\ufffd".join(texts)):
        vals = list(map(float, texts))
        if math.inf not in vals and -math.inf not in vals:
            return vals
    return [_parse_num(cells[c], where, c) for c in cols]


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
    "static": frozenset of the other columns, "coarse_first": bool}``; ``coarse_first`` is
    True when every family's columns come coarsest first (as :func:`header_for` writes them)."""
    where = f"{path}.row[1]"
    if not header or header[0] != MARKER:
        raise InputError("not_tamis_csv", f"Row 1 must be the header of a tamis CSV file, starting with the "
                                          f"column {MARKER}; got {header[:1]!r}.", where)
    seen, fams, ops_seen = set(), {f: [] for f in FAMILIES}, set()
    for col in header:
        if col in seen:
            raise InputError("duplicate_column", f"Row 1: the column {col!r} appears twice.", f"{where}.{col}")
        seen.add(col)
        if col in _STATIC_COLUMNS:
            continue
        m = _FAMILY_RE.fullmatch(col)
        if not m or not _NUM_RE.fullmatch(m.group(2)) or not (0 < float(m.group(2)) < math.inf):
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
    return {"cols": header, "colinfo": colinfo, "static": frozenset(seen - set(colinfo)),
            "coarse_first": all(fams[f] == sorted(fams[f], key=lambda t: -t[0]) for f in FAMILIES)}


#: META_COLUMNS with how each is read: 0 text, 1 number, 2 the rules object (meta_extra_json comes last, apart).
_META_PLAN = tuple((c, 1 if c in META_NUM else 2 if c == "rules_json" else 0)
                   for c in META_COLUMNS if c != "meta_extra_json")


def _meta_from(cells: dict, where: str) -> dict:
    meta = {}
    get = cells.get
    for col, how in _META_PLAN:
        cell = get(col)
        if not cell:
            continue
        if how == 0:
            meta[col] = cell[1:] if cell[0] == "'" else cell  # unescape_text, inlined
        elif how == 1:
            meta[col] = _parse_num(cell, where, col)
        else:
            meta["rules"] = _parse_json(cell, f"{where}.{col}", dict)
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
    present = [col for col in TEST_NUM if col in cells]
    if present:
        test.update(zip(present, _parse_nums(cells, present, where)))
    for fam, key, val in (("retained_g", "sieves", "retained_g"), ("passing_pct", "passing", "passing_pct")):
        pts = fams[fam]
        if pts:
            vals = _parse_nums(cells, [col for _, col in pts], where)
            test[key] = [{"opening_mm": op, val: v} for (op, _), v in zip(pts, vals)]
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


def row_record(cells: dict, colinfo: dict, where: str, *, check_json: bool = False,
               coarse_first: bool = False) -> dict:
    """One record from the non-blank cells of a row; ``where`` is ``csv.row[n]``;
    ``colinfo`` maps each opening column to ``(family, opening_mm)``;
    ``coarse_first`` (from :func:`parse_header`) says that the header has each
    family's columns coarsest first, so the cells, in header order, need no
    sorting."""
    fams = {f: [] for f in FAMILIES}
    for col in cells:
        info = colinfo.get(col)
        if info is not None:
            fams[info[0]].append((info[1], col))
    if not coarse_first:
        for lst in fams.values():
            lst.sort(key=lambda t: -t[0])
    if cells.get(MARKER) != CSV_VERSION:
        raise cell_error("unsupported_version", f"{where}.{MARKER}", f"must be {CSV_VERSION} (the CSV version "
                         f"this core reads), got {cells.get(MARKER, '')!r}.")
    for col in ("record_id", "kind", "rev", "updated_at", "updated_by", "deleted", "history_json"):
        if not cells.get(col):
            raise cell_error("missing_value", f"{where}.{col}", "is empty; every row needs it.")
    rev_cell = cells["rev"]
    if not rev_cell.isdigit() or not rev_cell.isascii():
        raise cell_error("bad_rev", f"{where}.rev", f"must be a whole number 1 or more, got {rev_cell!r}.")
    rec = {
        "record_id": unescape_text(cells["record_id"]),
        "kind": cells["kind"],
        "rev": int(rev_cell),
        "updated_at": cells["updated_at"],
        "updated_by": unescape_text(cells["updated_by"]),
        "deleted": _parse_bool(cells["deleted"], where, "deleted"),
        "exported_at": cells.get("exported_at") or None,
        "meta": _meta_from(cells, where),
        "test": _test_from(cells, fams, where),
        "band": _band_from(cells, fams, where),
        "history": _parse_json(cells["history_json"], f"{where}.history_json", list),
    }
    if not check_json and _row_fits(rec):
        return rec  # what check_record would return (it builds the same dict, keys in the same order)
    try:
        return check_record(rec, "", check_json=check_json)
    except InputError as err:
        col = _column_of(err.field)
        raise cell_error(err.code, f"{where}.{col}", err.message) from None


def _row_fits(rec: dict) -> bool:
    """True when :func:`check_record` (``check_json=False``) would accept a record
    that :func:`row_record` built and return it unchanged. What the parsers
    already guarantee (``rev`` a whole number, ``deleted`` a bool, ``meta`` a dict,
    ``test`` and ``band`` dicts or None, ``history`` a list, every text a str) is
    not checked again; False sends the record through check_record, which
    names the first fault exactly as before."""
    if rec["rev"] < 1 or rec["kind"] not in _KIND_RANK or not _UUID_RE.fullmatch(rec["record_id"]):
        return False
    if not is_iso_utc(rec["updated_at"]):
        return False
    exp = rec["exported_at"]
    if exp is not None and not is_iso_utc(exp):
        return False
    for h in rec["history"]:
        if type(h) is not dict:
            return False
        hrev = h.get("rev")
        if type(hrev) is not int or hrev < 1 or not is_iso_utc(h.get("at")) or type(h.get("by")) is not str:
            return False
    return True


def read_csv(text: str, path: str = "csv", *, memo: dict | None = None) -> tuple[list[dict], list[dict]]:
    """Parse and validate a whole CSV file.

    Returns ``(records, rows)`` where ``rows[i]`` is ``{"row": n, "calc": {...}}``
    for ``records[i]``: the spreadsheet row number and the stored calc cells
    (kept only for ``report`` to compare; never used as data). Identical rows
    for the same id are read once.

    ``memo`` (optional, a dict the caller keeps while it reads several files,
    see :func:`read_files`): a row whose cells (calc columns aside) are those
    of a row read before gives that row's record object again instead of
    being parsed a second time. The same cells always make the same record,
    so only the work is saved; records are never changed after they are
    built, so sharing one between files is safe.

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
    """The records of several CSV files (``files[i]`` in errors unless ``paths``
    names them), rows repeated across files read once (see ``memo`` in
    :func:`read_csv`)."""
    memo = {}
    with acyclic_work():  # one pause for all files: else each file's end makes the collector walk all before
        return [read_csv(t, f"files[{i}]" if paths is None else paths[i], memo=memo)[0]
                for i, t in enumerate(texts)]


def _memo_key(cols: list[str]):
    """How a row of a file with header ``cols`` is keyed in a reading memo: a function
    of the row naming its non-blank cells and their columns, calc columns left
    out (they are never data), so the same record gives the same key whatever
    the calc cells and whatever other columns the header has. The parts are
    joined by U+FFFD, which :func:`read_csv` refuses anywhere in a file, so
    the key tells the cells apart exactly."""
    sep = "\ufffd"
    calc = [i for i, c in enumerate(cols) if c in _CALC_SET]
    if not calc:
        return lambda row: (sep.join(compress(cols, row)), sep.join(compress(row, row)))
    a, b = calc[0], calc[-1] + 1
    if b - a == len(calc):  # one block (as this module writes them): cut it out at C speed
        rest = cols[:a] + cols[b:]

        def cut(row):
            r = row[:a] + row[b:]
            return sep.join(compress(rest, r)), sep.join(compress(r, r))
        return cut

    def scattered(row):
        pairs = [p for p in compress(zip(cols, row), row) if p[0] not in _CALC_SET]
        return sep.join(p[0] for p in pairs), sep.join(p[1] for p in pairs)
    return scattered


def _read_rows(text: str, path: str, memo):
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    n = 0
    records, rows, by_id = [], [], {}
    hdr = None
    try:
        for n, row in enumerate(reader, start=1):
            if hdr is None:
                hdr = parse_header(row, path)
                cols = hdr["cols"]
                calc_cols = [c for c in CALC_COLUMNS if c in hdr["static"]]
                keyed = None if memo is None else _memo_key(cols)
                continue
            if not any(row):
                continue  # a blank line holds nothing
            where = f"{path}.row[{n}]"
            if len(row) != len(cols):
                raise InputError("wrong_cell_count", f"Row {n} has {len(row)} cells but the header has "
                                                     f"{len(cols)}; the line may be truncated or hold an "
                                                     "unquoted comma.", where)
            if memo is None:
                cells = dict(compress(zip(cols, row), row))  # the non-blank cells
                rec = row_record(cells, hdr["colinfo"], where, coarse_first=hdr["coarse_first"])
            else:
                key = keyed(row)
                rec = memo.get(key)
                if rec is None:
                    cells = dict(compress(zip(cols, row), row))
                    rec = memo[key] = row_record(cells, hdr["colinfo"], where, coarse_first=hdr["coarse_first"])
                elif calc_cols:  # a row read before: only its calc cells are wanted
                    cells = dict(compress(zip(cols, row), row))
            prev = by_id.get(rec["record_id"])
            if prev is not None:
                if prev[0] is rec or (content_key(prev[0]) == content_key(rec) and prev[0]["history"] ==
                                      rec["history"] and prev[0]["exported_at"] == rec["exported_at"]):
                    continue
                raise cell_error("duplicate_id", f"{where}.record_id", f"record {rec['record_id']} is also on row "
                                 f"{prev[1]} with different content.")
            by_id[rec["record_id"]] = (rec, n)
            records.append(rec)
            rows.append({"row": n, "calc": {c: unescape_text(cells[c]) for c in calc_cols if c in cells}
                         if calc_cols else {}})
    except csv.Error as exc:
        n += 1  # the row being read when the reader gave up
        raise InputError("bad_csv", f"Row {n}: {exc} (an opened quote is never closed, or text follows a "
                                    "closing quote); the file may be truncated.", f"{path}.row[{n}]") from None
    if hdr is None:
        raise InputError("empty_file", "The file is empty.", path)
    return records, rows


# ---------------------------------------------------------------- merging

def _head_mark(rec: dict) -> tuple:
    """Identity of a record's current revision: its history entry for ``rev``,
    else ``(rev, updated_at, updated_by)``."""
    for h in rec["history"]:
        if h["rev"] == rec["rev"]:
            return (h["rev"], h["at"], h["by"])
    return (rec["rev"], rec["updated_at"], rec["updated_by"])


def descends(a: dict, b: dict) -> bool:
    """True when revision ``a`` was made from revision ``b``: ``a`` has the higher
    rev and its history holds ``b``'s head entry (same rev, time and author)."""
    if a["rev"] <= b["rev"]:
        return False
    mark = _head_mark(b)
    return any((h["rev"], h["at"], h["by"]) == mark for h in a["history"])


def merge_history(*histories, memo=None) -> list:
    """Union of history entries (an entry once, whatever the key order or int/float
    spelling of its numbers), ordered by rev, time, content."""
    longest = max(histories, key=len) if histories else None  # the first of the longest
    if longest is not None and _ordered(longest):
        texts = {}  # length -> text of that many first entries of ``longest``
        for h in histories:
            if h is longest:
                continue
            n = len(h)
            if n not in texts:
                texts[n] = dump_json(longest[:n])
            if dump_json(h) != texts[n]:
                break
        else:
            # every history is spelled as the start of ``longest`` (copies of one
            # history, or older revisions' histories): ``longest`` is the union, in order
            return list(longest)
    # memo: id(entry) -> (canonical text, text, entry), and text -> canonical text
    # (copies of one entry in several files are spelled alike: canonicalised once)
    memo = {} if memo is None else memo
    best = {}
    for hist in histories:
        for h in hist:
            keys = memo.get(id(h))
            if keys is None:
                spelled = dump_json(h)
                canon = memo.get(spelled)
                if canon is None:
                    canon = memo[spelled] = dump_json(_floats(h))
                keys = memo[id(h)] = (canon, spelled, h)
            prev = best.get(keys[0])
            if prev is None or keys[1] < prev[1]:
                best[keys[0]] = keys
    return [k[2] for k in sorted(best.values(), key=lambda k: (k[2]["rev"], k[2]["at"], k[0]))]


def _ordered(hist: list) -> bool:
    """Entries strictly increasing by (rev, time), so no two can be the same entry."""
    return all((a["rev"], a["at"]) < (b["rev"], b["at"]) for a, b in zip(hist, hist[1:]))


def _latest(values):
    vals = [v for v in values if v is not None]
    return max(vals) if vals else None


def _content_groups(versions: list[dict]) -> dict:
    """Versions of one id grouped by content: ``{sort key: [versions]}``, each
    group's first version the one of smallest spelling. The keys and the first
    versions are the same whatever the order of ``versions``."""
    buckets = {}
    for v in versions:
        buckets.setdefault((v["rev"], v["updated_at"], v["updated_by"], v["deleted"], v["kind"]), []).append(v)
    groups = {}
    for pre, vs in buckets.items():
        if len(vs) == 1:
            groups[(pre, "")] = vs
            continue
        spelled = {}
        for v in vs:  # identical text is identical content (the usual case: copies of one row)
            spelled.setdefault(dump_json({k: v[k] for k in CONTENT_KEYS}), []).append(v)
        canon = {}
        for text in sorted(spelled):  # other spellings are compared canonically (key order, 12 vs 12.0)
            canon.setdefault(content_key(spelled[text][0]) if len(spelled) > 1 else "", []).extend(spelled[text])
        for ck, group in canon.items():
            groups[(pre, ck)] = group
    return groups


def merge_versions(versions: list[dict]) -> tuple[dict, list[dict]]:
    """Merge every known version of ONE record id; the answer does not depend on
    the order of ``versions``.

    Versions with the same content are one version (histories united,
    ``exported_at`` the latest). A version that another one descends from
    (:func:`descends`) is superseded, its history kept in the winner. If
    one version remains it wins. If several remain, they are in conflict:
    the one with the highest (rev, updated_at, content) is kept and each
    other one is returned as a conflicting version, so nothing is lost.

    Returns
    -------
    (kept, others) : the record to keep, and the versions that conflict with it.
    """
    memo = {}
    merged = {}
    for key, vs in _content_groups(versions).items():
        rep = dict(vs[0])
        rep["history"] = merge_history(*(v["history"] for v in vs), memo=memo)
        rep["exported_at"] = _latest(v["exported_at"] for v in vs)
        merged[key] = rep
    keys = sorted(merged)
    if len(keys) == 1:
        return merged[keys[0]], []
    below = {k: {j for j in keys if j != k and descends(merged[k], merged[j])} for k in keys}
    heads = [k for k in keys if not any(k in below[j] for j in keys)]
    heads.sort(key=lambda k: (merged[k]["rev"], merged[k]["updated_at"], k), reverse=True)
    top = heads[0]
    reach, todo = {top}, [top]
    while todo:
        for j in below[todo.pop()]:
            if j not in reach:
                reach.add(j)
                todo.append(j)
    kept = dict(merged[top])
    kept["history"] = merge_history(*(merged[k]["history"] for k in sorted(reach)), memo=memo)
    return kept, [merged[k] for k in heads[1:]]


def merge_all(record_lists) -> tuple[list[dict], list[dict]]:
    """Merge lists of checked records by id. Returns ``(records, conflicts)``,
    records in row order, conflicts as ``{"record_id", "local", "incoming", "reason"}``
    (``local`` is the version kept) ordered by id."""
    with acyclic_work():
        return _merge_all(record_lists)


def _merge_all(record_lists):
    by_id = {}
    for lst in record_lists:
        for r in lst:
            by_id.setdefault(r["record_id"], []).append(r)
    out, conflicts = [], []
    for rid in sorted(by_id):
        vs = by_id[rid]
        if len(vs) > 1:  # copies of one row, read once (read_csv's memo), are one version
            vs = list({id(v): v for v in vs}.values())
        if len(vs) == 1:
            out.append(vs[0])
            continue
        kept, others = merge_versions(vs)
        out.append(kept)
        for o in others:
            conflicts.append({"record_id": rid, "local": kept, "incoming": o, "reason": _conflict_reason(kept, o)})
    out.sort(key=row_order)
    return out, conflicts


def _conflict_reason(a: dict, b: dict) -> str:
    if a["rev"] == b["rev"]:
        return f"both versions are rev {a['rev']} with different content"
    hi, lo = (a, b) if a["rev"] > b["rev"] else (b, a)
    marks = {h["rev"]: (h["at"], h["by"]) for h in hi["history"]}
    if lo["rev"] in marks:
        return (f"rev {hi['rev']} was not made from this rev {lo['rev']}: both changed since their common "
                "ancestor")
    return f"the history of rev {hi['rev']} does not show that it was made from rev {lo['rev']}"


def resolve_conflict(local: dict, incoming: dict, keep: str, at: str, by: str) -> dict:
    """A new revision that settles a conflict: the content of the version ``keep``
    names (``"local"`` or ``"incoming"``), ``rev`` one above both, and a history
    holding both versions' entries plus one saying what was decided. Because its
    history holds both head entries, it descends from (:func:`descends`) and so
    supersedes both versions wherever they turn up later."""
    chosen, other = (local, incoming) if keep == "local" else (incoming, local)
    rev = max(local["rev"], incoming["rev"]) + 1
    hist = merge_history(local["history"], incoming["history"])
    marks = {(h["rev"], h["at"], h["by"]) for h in hist}
    for v in (local, incoming):
        if _head_mark(v) not in marks:  # a version saved without its history entry: record its mark
            hist.append({"rev": v["rev"], "at": v["updated_at"], "by": v["updated_by"],
                         "summary": "revision known from the record only", "changes": []})
    hist.append({"rev": rev, "at": at, "by": by,
                 "summary": f"conflict resolved: kept rev {chosen['rev']} of {chosen['updated_at']} by "
                            f"{chosen['updated_by']}; set aside rev {other['rev']} of {other['updated_at']} by "
                            f"{other['updated_by']}", "changes": []})
    out = dict(chosen, rev=rev, updated_at=at, updated_by=by, history=merge_history(hist))
    out["exported_at"] = None  # a new revision that has not left this device
    return out


def import_records(incoming: list[dict], existing: list[dict], resolve=None, at=None, by=None) -> dict:
    """Merge a file's records into a device's records (both checked).

    ``added``: ids new to the device; ``updated``: records whose stored form
    changes (a newer revision, or history entries gained); ``unchanged``;
    ``conflicts``: both changed, the device's version kept untouched, unless
    ``resolve`` (record id -> ``"local"`` or ``"incoming"``) settles it with
    :func:`resolve_conflict` at time ``at`` by ``by``: then it is in
    ``updated`` and ``resolved``.
    """
    resolve = resolve or {}
    local = {r["record_id"]: r for r in existing}
    out = dict(local)
    added, updated, unchanged, conflicts, resolved = [], [], [], [], []
    for inc in incoming:
        rid = inc["record_id"]
        loc = local.get(rid)
        if loc is None:
            out[rid] = inc
            added.append(rid)
            continue
        kept, others = merge_versions([loc, inc])
        if others and rid in resolve:
            out[rid] = resolve_conflict(loc, inc, resolve[rid], at, by)
            updated.append(rid)
            resolved.append(rid)
        elif others:
            conflicts.append({"record_id": rid, "local": loc, "incoming": inc,
                              "reason": _conflict_reason(loc, inc)})
        elif kept == loc:
            unchanged.append(rid)
        else:
            out[rid] = kept
            updated.append(rid)
    return {"records": sorted(out.values(), key=row_order), "added": sorted(added), "updated": sorted(updated),
            "unchanged": sorted(unchanged), "conflicts": sorted(conflicts, key=lambda c: c["record_id"]),
            "resolved": sorted(resolved)}


def check_records(recs, path: str) -> list[dict]:
    """Check a list of records; the same id twice must carry the same content."""
    out, seen = [], {}
    for i, r in enumerate(require_list(recs, path)):
        rec = check_record(r, join(path, i))
        j = seen.get(rec["record_id"])
        if j is not None:
            if content_key(out[j]) == content_key(rec):
                continue
            raise InputError("duplicate_id", f"{join(join(path, i), 'record_id')} repeats the id of {path}[{j}] "
                                             "with different content.", join(join(path, i), "record_id"))
        seen[rec["record_id"]] = len(out)
        out.append(rec)
    return out


# ---------------------------------------------------------------- ops (tamis.api)

def export_csv(records: list[dict], *, bom: bool = False, context=()) -> str:
    """CSV text of checked records with their calc columns computed now
    (:func:`tamis.summaries.summaries_for`); bands and base soils are looked
    up in ``records``, then in ``context`` (not written)."""
    from .summaries import summaries_for  # the calc columns need the whole core; records does not
    return write_csv(records, summaries_for(records, context), bom=bom)


def op_export_csv(req: dict):
    """``{"records": [...], "bom": false, "context": [...]}`` -> ``{"csv", "count"}``.

    ``context`` (optional) holds records that are looked up for the calc
    columns (a band, a base soil) but not written."""
    recs = check_records(req.get("records"), "records")
    context = check_records(req.get("context") or [], "context")
    bom = req.get("bom", False)
    if not isinstance(bom, bool):
        raise InputError("not_a_boolean", "bom must be true or false.", "bom")
    return {"csv": export_csv(recs, bom=bom, context=context), "count": len(recs)}, []


def op_import_csv(req: dict):
    """``{"csv": text, "existing": [...]}`` -> the merged records to store, and what changed.

    Optional ``"resolve": {record_id: "local"|"incoming"}`` with ``"at"`` (ISO UTC)
    and ``"by"`` settles conflicts the user has decided (:func:`resolve_conflict`)."""
    incoming, rows = read_csv(req.get("csv"), "csv")
    existing = check_records(req.get("existing") or [], "existing")
    resolve = req.get("resolve") or {}
    require_mapping(resolve, "resolve")
    for rid, keep in resolve.items():
        if keep not in ("local", "incoming"):
            raise InputError("unknown_choice", f"resolve.{rid} must be local or incoming, got {keep!r}.",
                             f"resolve.{rid}")
    at = by = None
    if resolve:
        at = _iso(req, "at", "")
        by = req.get("by")
        if not isinstance(by, str):
            raise InputError("not_a_string", "by must be text (initials or a name) when resolve is given.", "by")
    result = import_records(incoming, existing, resolve, at, by)
    result["rows"] = len(rows)
    return result, []


def op_merge(req: dict):
    """``{"files": [csv text, ...]}`` -> ``{"csv", "count", "conflicts"}``."""
    files = require_list(req.get("files"), "files", min_len=1)
    lists = read_files(files)
    merged, conflicts = merge_all(lists)
    return {"csv": export_csv(merged), "count": len(merged), "conflicts": conflicts}, []
