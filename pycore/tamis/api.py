"""The JSON boundary: ``handle(request_json: str) -> str``.

This is the only entry point the web worker, the command line and the golden
tests use. A request and a response are JSON *strings*; see
``docs/json-contract.md`` for the schema.

Request::

    {"schema": 1, "op": "gradation", "id": 7, ...}

Response::

    {"schema": 1, "id": 7, "ok": true, "core_version": "0.1.0",
     "result": {...}, "findings": [...]}

or, for bad input::

    {"schema": 1, "id": 7, "ok": false,
     "error": {"code": "negative_mass", "message": "...", "field": "test.sieves[2].retained_g"}}

The output never holds NaN or Infinity (``allow_nan=False``); an undefined
quantity is ``null`` with a finding that says why.
"""

from __future__ import annotations

import importlib
import json
import math

from . import __version__
from .errors import InputError, join
from .checks import Finding

SCHEMA = 1

#: op name -> "module:function". Each function takes the request dict and
#: returns ``(result_dict, findings_list)``; modules are imported on first use.
OPS: dict[str, str] = {
    "version": "tamis.api:op_version",
    "gradation": "tamis.lab.reduction:op_gradation",
    "evaluate": "tamis.project.evaluate:op_evaluate",
    "zones": "tamis.project.zones:op_zones",
    "design_band": "tamis.project.design_band:op_design_band",
    "sieve_presets": "tamis.lab.sieves:op_presets",
    "band_presets": "tamis.lab.bands:op_presets",
    "records_export_csv": "tamis.exchange.ops:op_export_csv",
    "records_import_csv": "tamis.exchange.ops:op_import_csv",
    "records_merge": "tamis.exchange.ops:op_merge",
    "report_html": "tamis.exchange.report_html:op_report_html",
    "lot_summary": "tamis.exchange.lots:op_lot_summary",
    "frequency_presets": "tamis.exchange.lots:op_frequency_presets",
    "pwl": "tamis.project.pwl:op_pwl",
}


def op_version(request: dict):
    return {"core_version": __version__, "schema": SCHEMA, "ops": sorted(OPS)}, []


def _resolve(op: str):
    target = OPS[op]
    mod_name, func_name = target.split(":")
    return getattr(importlib.import_module(mod_name), func_name)


def _reject_constant(name: str):
    raise InputError("not_finite", f"{name} is not a valid JSON number; use a finite number.", "")


def _dumps(obj) -> str:
    return json.dumps(obj, allow_nan=False, ensure_ascii=True, separators=(",", ":"))


def _error(req_id, err: InputError) -> str:
    return _dumps({"schema": SCHEMA, "id": req_id, "ok": False, "error": err.to_dict()})


def _scrub(obj, path: str = "result", found: list | None = None):
    """Replace any non-finite float by None (a last guard; ops should not make them),
    appending the path of each replaced value to ``found``."""
    if isinstance(obj, float):
        if math.isfinite(obj):
            return obj
        if found is not None:
            found.append(path)
        return None
    if isinstance(obj, dict):
        return {k: _scrub(v, join(path, str(k)), found) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_scrub(v, join(path, i), found) for i, v in enumerate(obj)]
    return obj


def _reply(req_id, result, findings) -> str:
    """The ``ok: true`` reply. A NaN or Infinity an op let through becomes null with a
    ``not_computable`` warning naming where it was (the contract: every null is explained)."""
    out = {"schema": SCHEMA, "id": req_id, "ok": True, "core_version": __version__, "result": result,
           "findings": [f.to_dict() if isinstance(f, Finding) else f for f in findings]}
    try:
        return _dumps(out)
    except ValueError:
        found: list[str] = []
        out["result"] = _scrub(result, "result", found)
        out["findings"] = _scrub(out["findings"], "findings", found)
        out["findings"] += [{"level": "warning", "code": "not_computable",
                             "message": f"{p} could not be computed from these numbers (it is not a finite "
                                        "number); it is given as null. Check the input for extreme values.",
                             "field": p, "source": ""} for p in found]
        return _dumps(out)


def _safe_id(req_id):
    """The id as it may be echoed: strings, finite numbers, booleans and null."""
    if isinstance(req_id, float) and not math.isfinite(req_id):
        return None
    return req_id


def handle(request_json: str) -> str:
    """Answer one JSON request string with one JSON response string.

    Never raises for bad input: malformed JSON, an unknown op, missing or
    non-numeric fields, NaN, negative masses... all come back as
    ``{"ok": false, "error": {"code", "message", "field"}}``.
    """
    req_id = None
    try:
        if not isinstance(request_json, str):
            raise InputError("not_a_string", "The request must be a JSON string.", "")
        try:
            req = json.loads(request_json, parse_constant=_reject_constant)
        except InputError:
            raise
        except (ValueError, RecursionError) as exc:
            raise InputError("bad_json", f"The request is not valid JSON: {exc}.", "") from None
        if not isinstance(req, dict):
            raise InputError("not_an_object", "The request must be a JSON object.", "")
        req_id = req.get("id")
        if isinstance(req_id, (dict, list)) or _safe_id(req_id) is not req_id:
            req_id = None
            raise InputError("bad_id", "id must be a string, a finite number or null.", "id")
        schema = req.get("schema", SCHEMA)
        if schema != SCHEMA or isinstance(schema, bool):
            raise InputError("unsupported_schema", f"schema must be {SCHEMA}; got {schema!r}.", "schema")
        op = req.get("op")
        if not isinstance(op, str) or op not in OPS:
            raise InputError("unknown_op", f"op must be one of {', '.join(sorted(OPS))}; got {op!r}.", "op")
        result, findings = _resolve(op)(req)
        return _reply(req_id, result, findings)
    except InputError as err:
        failure = err
    except Exception as exc:  # a defect in the core: say so, never a traceback
        failure = _internal(exc)
    return _last_resort(req_id, failure)


def _internal(exc: BaseException) -> InputError:
    try:
        what = f"{type(exc).__name__}: {exc}"[:500]
    except Exception:  # an exception whose text cannot be made
        what = type(exc).__name__
    return InputError("internal_error", f"tamis could not compute this request ({what}). "
                      "Please report it with the input.", "")


def _last_resort(req_id, err: InputError) -> str:
    """The error reply, or an ``internal_error`` reply when even that fails (a reply that cannot be
    encoded as strict JSON): ``handle`` never raises."""
    try:
        return _error(req_id, err)
    except Exception as exc:
        try:
            return _error(_safe_id(req_id) if isinstance(req_id, (str, int, float, bool, type(None))) else None,
                          _internal(exc))
        except Exception:
            return _dumps({"schema": SCHEMA, "id": None, "ok": False,
                           "error": {"code": "internal_error", "message": "tamis could not encode its reply. "
                                     "Please report it with the input.", "field": ""}})
