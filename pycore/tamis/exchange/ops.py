"""The record ops of :mod:`tamis.api`: ``records_export_csv``, ``records_import_csv``, ``records_merge``."""

from __future__ import annotations

from ..errors import InputError, require_list, require_mapping
from .csv_format import DIALECTS
from .csv_read import read_csv, read_files
from .csv_write import write_csv
from .merge import import_records, merge_all
from .record import check_records, iso_field
from .summaries import summaries_for


def export_csv(records: list[dict], *, bom: bool = False, context=(), dialect: str = "standard") -> str:
    """CSV text of checked records with their calc columns computed now
    (:func:`tamis.exchange.summaries.summaries_for`); bands and base soils are looked
    up in ``records``, then in ``context`` (not written). ``dialect``: ``"standard"``
    (commas, decimal point) or ``"decimal_comma"`` (semicolons, decimal comma)."""
    return write_csv(records, summaries_for(records, context), bom=bom, dialect=dialect)


def op_export_csv(req: dict):
    """``{"records": [...], "bom": false, "context": [...], "dialect": "standard"}`` -> ``{"csv", "count"}``.

    ``context`` (optional) holds records that are looked up for the calc
    columns (a band, a base soil) but not written; ``dialect`` (optional)
    ``"decimal_comma"`` writes the variant for spreadsheets that use the decimal comma."""
    recs = check_records(req.get("records"), "records")
    context = check_records(req.get("context") or [], "context")
    bom = req.get("bom", False)
    if not isinstance(bom, bool):
        raise InputError("not_a_boolean", "bom must be true or false.", "bom")
    dialect = req.get("dialect", "standard")
    if dialect not in DIALECTS:
        raise InputError("unknown_choice", f"dialect must be one of {', '.join(DIALECTS)}, got {dialect!r}.",
                         "dialect")
    return {"csv": export_csv(recs, bom=bom, context=context, dialect=dialect), "count": len(recs)}, []


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
        at = iso_field(req, "at", "")
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
