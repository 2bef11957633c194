"""The JSON envelope of tamis.api.handle (docs/json-contract.md, schema 1).

These checks are about the boundary itself: every malformed request becomes
``ok: false`` with a code, a message and a field path, never a traceback; the
output is strict JSON (RFC 8259: no NaN or Infinity tokens).
"""

import json

import pytest

import tamis
from tamis import api


def call(text):
    out = api.handle(text)
    assert isinstance(out, str)
    # RFC 8259 strict parse: refuse NaN/Infinity tokens in our own output.
    def refuse(name):
        raise AssertionError(f"non-standard JSON constant {name} in output")
    return json.loads(out, parse_constant=refuse)


def test_version_op_echoes_id_and_core_version():
    r = call(json.dumps({"schema": 1, "op": "version", "id": "abc"}))
    assert r["ok"] is True and r["id"] == "abc" and r["schema"] == 1
    assert r["core_version"] == tamis.__version__ == r["result"]["core_version"]
    assert "gradation" in r["result"]["ops"] and "evaluate" in r["result"]["ops"]


@pytest.mark.parametrize("text, code, field", [
    ("{not json", "bad_json", ""),
    ("[1, 2]", "not_an_object", ""),
    ('"gradation"', "not_an_object", ""),
    ('{"schema": 1, "op": "no_such_op"}', "unknown_op", "op"),
    ('{"schema": 1}', "unknown_op", "op"),
    ('{"schema": 2, "op": "version"}', "unsupported_schema", "schema"),
    ('{"schema": true, "op": "version"}', "unsupported_schema", "schema"),
    ('{"schema": 1, "op": "version", "x": NaN}', "not_finite", ""),
    ('{"schema": 1, "op": "version", "x": Infinity}', "not_finite", ""),
    ('{"schema": 1, "op": "version", "id": [1]}', "bad_id", "id"),
])
def test_malformed_requests_are_refused_with_code_and_field(text, code, field):
    r = call(text)
    assert r["ok"] is False
    assert r["error"]["code"] == code
    assert r["error"]["field"] == field
    assert r["error"]["message"]
    assert "Traceback" not in r["error"]["message"]


def test_request_that_is_not_a_string_is_refused():
    r = json.loads(api.handle({"op": "version"}))  # a dict, not a JSON string
    assert r["ok"] is False and r["error"]["code"] == "not_a_string"


def test_unexpected_defect_is_reported_not_raised(monkeypatch):
    def boom(req):
        raise ZeroDivisionError("division by zero")
    monkeypatch.setitem(api.OPS, "version", "tests_boom:boom")
    import sys, types
    mod = types.ModuleType("tests_boom")
    mod.boom = boom
    monkeypatch.setitem(sys.modules, "tests_boom", mod)
    r = call('{"schema": 1, "op": "version", "id": 5}')
    assert r["ok"] is False and r["id"] == 5
    assert r["error"]["code"] == "internal_error"
    assert "ZeroDivisionError" in r["error"]["message"]


def test_non_finite_numbers_made_by_an_op_never_reach_the_output(monkeypatch):
    import sys, types
    mod = types.ModuleType("tests_nan")
    mod.op = lambda req: ({"a": float("nan"), "b": [float("inf"), 1.5]}, [])
    monkeypatch.setitem(sys.modules, "tests_nan", mod)
    monkeypatch.setitem(api.OPS, "version", "tests_nan:op")
    r = call('{"schema": 1, "op": "version"}')
    assert r["ok"] is True
    assert r["result"] == {"a": None, "b": [None, 1.5]}


def test_d_value_on_a_measured_point_is_that_sieve_exactly():
    # A D-value whose percentage equals a measured point is the sieve opening itself
    # (no round trip through log/exp), so "exactly at the limit" compares exactly.
    from tamis.lab.curve import make_curve, size_at
    c = make_curve([(4.75, 100.0), (1.18, 60.0), (0.3, 15.0), (0.075, 3.0)])
    assert size_at(c, 15.0) == 0.3
    assert size_at(c, 60.0) == 1.18
    assert size_at(c, 100.0) == 4.75
