"""The record: the unit the app stores, the CSV carries (one row) and the office merges.

Its shape is documented in ``docs/records.md``. :func:`check_record` validates
one record (field paths such as ``records[3].rev``) and returns it with every
key present; :func:`check_records` a list of them; :func:`content_key` is the
canonical text of a revision's content, which merging compares.

The CSV format is in :mod:`tamis.exchange.csv_format` (layout),
:mod:`~tamis.exchange.csv_write` and :mod:`~tamis.exchange.csv_read`; merging in
:mod:`tamis.exchange.merge`; the API ops in :mod:`tamis.exchange.ops`.

References
----------
- RFC 9562 (IETF, May 2024), section 4: the text form of a UUID.
- ISO 8601-1:2019 / RFC 3339: date-time with ``Z`` for UTC.
"""

from __future__ import annotations

import contextlib
import gc
import json
import math
import re
from datetime import datetime

from ..errors import InputError, join, require_list, require_mapping

#: Record kinds, in the order their rows are written.
KINDS = ("band", "base", "lot", "test")
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

_UUID_RE = re.compile(r"[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}", re.ASCII)
_ISO_RE = re.compile(r"(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2}):(\d{2})(\.\d{1,9})?Z", re.ASCII)
_MAX_EXACT_INT = 2 ** 53
_MAX_FLOAT_INT = 2 ** 1023


def is_number(v) -> bool:
    """A finite JSON number that a float holds exactly (true and false are not numbers)."""
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return False
    if isinstance(v, int):
        return abs(v) <= _MAX_EXACT_INT
    return math.isfinite(v)


#: The encoder of :func:`dump_json`, made once: ``json.dumps`` with these options
#: builds a new one on every call. Holds no state between calls.
_ENCODER = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"), allow_nan=False)


def dump_json(obj) -> str:
    """Compact JSON text (UTF-8 kept, no NaN/Infinity), as ``json.dumps`` with those options."""
    return _ENCODER.encode(obj)


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
    m = _ISO_RE.fullmatch(s) if isinstance(s, str) else None
    if not m:
        return False
    y, mo, d, h, mi, sec, _ = m.groups()
    try:
        datetime(int(y), int(mo), int(d), int(h), int(mi), int(sec))
    except ValueError:
        return False
    return True


def iso_field(obj: dict, key: str, path: str, *, optional: bool = False):
    """``obj[key]``, an ISO 8601 UTC time (:func:`is_iso_utc`), or None when ``optional`` and absent;
    else an error at ``path.key``."""
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
    if isinstance(rev, bool) or not isinstance(rev, int) or not 1 <= rev <= _MAX_EXACT_INT:
        shown = f"{rev!r}"[:40]
        raise InputError("bad_rev", f"{join(path, 'rev')} must be a whole number from 1 to 2^53, got {shown}.",
                         join(path, "rev"))
    updated_at = iso_field(rec, "updated_at", path)
    by = rec.get("updated_by")
    if not isinstance(by, str):
        raise InputError("not_a_string", f"{join(path, 'updated_by')} must be text (initials or a name).",
                         join(path, "updated_by"))
    deleted = rec.get("deleted", False)
    if deleted is None:
        deleted = False
    if not isinstance(deleted, bool):
        raise InputError("not_a_boolean", f"{join(path, 'deleted')} must be true or false.", join(path, "deleted"))
    exported_at = iso_field(rec, "exported_at", path, optional=True)
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
        if isinstance(hrev, bool) or not isinstance(hrev, int) or not 1 <= hrev <= _MAX_EXACT_INT:
            hp = join(join(path, "history"), i)
            raise InputError("bad_rev", f"{join(hp, 'rev')} must be a whole number 1 or more.", join(hp, "rev"))
        iso_field(h, "at", join(join(path, "history"), i))
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
        if "\x00" in value:  # refused by the CSV reader too: such a record could never be read back
            raise InputError("nul_character", f"{path or 'record'} holds a NUL character (code 0), which no "
                             "text of a record may hold; retype it.", path)
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
    return json.dumps(floats_only({k: rec[k] for k in CONTENT_KEYS}), sort_keys=True, ensure_ascii=False,
                      separators=(",", ":"))


def floats_only(obj):
    """``obj`` with every int (not bool) turned into a float, for comparisons only."""
    t = type(obj)
    if t is int:
        return float(obj) if -_MAX_FLOAT_INT < obj < _MAX_FLOAT_INT else obj  # beyond any float: kept as it is
    if t is dict:
        return {k: floats_only(v) for k, v in obj.items()}
    if t is list:
        return [floats_only(v) for v in obj]
    return obj


def row_order(rec: dict):
    """Rows are written by kind (bands, base soils, lots, tests), then record id."""
    return (_KIND_RANK[rec["kind"]], rec["record_id"])


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
