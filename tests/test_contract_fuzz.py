"""Property test of the JSON contract (docs/json-contract.md): valid and hostile requests for every op.

Every request, however malformed, must come back from ``tamis.api.handle`` as one strict JSON reply
(RFC 8259: no NaN or Infinity tokens) and never as an exception. Then:

- an ``ok: false`` reply has a non-empty ``code``, a ``message`` and a ``field`` (text), and is never
  ``internal_error``: extreme but well-formed numbers are input errors naming their field (docs/decisions.md);
- an ``ok: true`` reply holds no value the core could not compute (no ``not_computable`` finding: NaN or
  Infinity never reach a result), and each null D-value, Cu, Cc or fraction of a gradation is explained by a
  finding (``d_below_range``, ``d_above_range``, ``cu_undefined``, ``fraction_undefined``);
- percent passing lies in 0..100 and never rises as sizes fall, in every gradation of every reply;
- a band that ``design_band`` calls feasible is never inverted (min above max) at any sieve.

Requests are the golden requests (one or more per op), mutated at random leaves with hostile values
(extreme numbers, 400-digit integers, ``1e999``, NaN tokens, wrong types, long strings, NUL and
look-alike characters), and realistic tests and base soils generated from monotone curves (invented data).

Examples per op: ``TAMIS_FUZZ_EXAMPLES`` (default 40 in ``make test``; ``make test-fuzz`` runs 10,000).
"""

from __future__ import annotations

import copy
import json
import os
import re
from collections import Counter
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import dicts_with
from tamis import api

EXAMPLES = int(os.environ.get("TAMIS_FUZZ_EXAMPLES", "40"))
SETTINGS = settings(max_examples=EXAMPLES, deadline=None, database=None,
                    suppress_health_check=list(HealthCheck))
GOLDEN = Path(__file__).parent / "golden"
TALLY: Counter = Counter()


def _seeds() -> dict[str, list[dict]]:
    out: dict[str, list[dict]] = {op: [] for op in api.OPS}
    for p in sorted(GOLDEN.glob("*.request.json")):
        req = json.loads(p.read_text(encoding="utf-8"))
        out.setdefault(req["op"], []).append(req)
    for op in ("version", "sieve_presets", "band_presets"):
        out[op].append({"schema": 1, "op": op, "id": 1})
    return out


SEEDS = _seeds()

# --- hostile values ------------------------------------------------------------------------------------
# A value that json.dumps cannot spell is written as a marker string and put in the text afterwards.
RAW = {"__RAW_INF__": "1e999", "__RAW_NINF__": "-1e999", "__RAW_BIG__": "9" * 400, "__RAW_NEGBIG__": "-" + "9" * 400,
       "__RAW_NAN__": "NaN", "__RAW_INFTOK__": "Infinity", "__RAW_TINY__": "1e-400", "__RAW_BIGDEC__": "9" * 400 + ".5"}
HOSTILE = [None, True, False, 0, -1, -1e-9, 1e-300, 1e-200, 1e-12, 1e12, 1e15, 1e103, 1e290, 1e300, 1.7976931348623157e308,
           -1e300, 10 ** 30, 2 ** 63, 0.5, 100.0000001, 5000.0, "", "x", "No. 4", "4.75 mm", "9" * 5000 + "/1 in",
           "1" * 5000, "a" * 20000, "\x00", "\ud800", "＝1+1", [], [1], {}, {"a": 1}, *RAW]
CSV_TOKENS = [",", "\n", "\r\n", '"', '""', "1e999", "9" * 400, "NaN", "-1", "\x00", "＝1+1", "−2", "\ufeff",
              "\ud800", "1e-400", ";", "0x10", " "]


def _encode(req) -> str:
    text = json.dumps(req, allow_nan=True)
    for mark, raw in RAW.items():
        text = text.replace(json.dumps(mark), raw)
    return text


def _leaves(obj, path=()):
    """Paths of every value (containers included) of a JSON tree."""
    yield path
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _leaves(v, path + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _leaves(v, path + (i,))


def _get(obj, path):
    for k in path:
        obj = obj[k]
    return obj


def _set(obj, path, value):
    if not path:
        return value
    _get(obj, path[:-1])[path[-1]] = value
    return obj


@st.composite
def mutated(draw, op: str):
    req = copy.deepcopy(draw(st.sampled_from(SEEDS[op])))
    grown = op.startswith("records_")  # one list at most made longer than the limit; record lists stay short
    for _ in range(draw(st.integers(0, 3))):
        paths = [p for p in _leaves(req) if p and p[0] not in ("op", "schema")] or [("id",)]
        path = draw(st.sampled_from(paths))
        cur = _get(req, path) if path[0] in req else None
        how = draw(st.integers(0, 5))
        if how == 0 and isinstance(cur, str) and len(cur) > 0:      # a hostile token inside a text (a CSV, a label)
            i = draw(st.integers(0, len(cur)))
            new = cur[:i] + draw(st.sampled_from(CSV_TOKENS)) + cur[i + draw(st.integers(0, 8)):]
        elif how == 1 and isinstance(cur, (int, float)) and not isinstance(cur, bool):   # scaled: extreme but sane
            new = cur * draw(st.sampled_from([1e-300, 1e-30, 1e-6, 10.0, 1e6, 1e30, 1e300, -1.0]))
        elif how == 2 and isinstance(cur, list) and cur:             # a list made long (one item repeated)
            n = draw(st.sampled_from([1, 25] if grown else [1, 25, 10_001]))
            grown = grown or n > 25
            new = cur + [copy.deepcopy(cur[-1]) for _ in range(n)]
        elif how == 3 and len(path) > 1 and isinstance(_get(req, path[:-1]), dict):       # a key removed
            del _get(req, path[:-1])[path[-1]]
            continue
        else:
            new = copy.deepcopy(draw(st.sampled_from(HOSTILE)))
        req = _set(req, path, new)
    return _encode(req)


# --- realistic generated requests (invented data) -----------------------------------------------------
_SIEVES = (75.0, 37.5, 19.0, 9.5, 4.75, 2.36, 1.18, 0.6, 0.3, 0.15, 0.075, 0.02, 0.005, 0.002)


@st.composite
def passing_test(draw):
    k = draw(st.integers(2, len(_SIEVES)))
    start = draw(st.integers(0, len(_SIEVES) - k))
    sizes = _SIEVES[start:start + k]
    p = draw(st.floats(0.0, 100.0))
    pts = [{"opening_mm": sizes[0], "passing_pct": p}]
    for d in sizes[1:]:
        p = max(0.0, p - draw(st.floats(0.0, 60.0)))
        pts.append({"opening_mm": d, "passing_pct": p})
    t = {"passing": pts}
    if draw(st.booleans()):
        t["plasticity"] = {"nonplastic": True}
    elif draw(st.booleans()):
        ll = draw(st.floats(10.0, 90.0))
        t["plasticity"] = {"liquid_limit": ll, "plasticity_index": draw(st.floats(0.0, ll * 0.7))}
    if draw(st.booleans()):
        t["dispersive"] = draw(st.booleans())
    return t


@st.composite
def masses_test(draw):
    k = draw(st.integers(2, 10))
    start = draw(st.integers(0, len(_SIEVES) - k))
    sizes = _SIEVES[start:start + k]
    ret = [draw(st.floats(0.0, 2000.0)) for _ in sizes]
    pan = draw(st.floats(0.0, 200.0))
    dry = sum(ret) + pan + draw(st.floats(0.0, 50.0))
    t = {"sieves": [{"opening_mm": d, "retained_g": r} for d, r in zip(sizes, ret)], "pan_g": pan,
         "dry_mass_g": dry if dry > 0 else 1.0}
    return t


_ANY = st.floats(allow_nan=False, allow_infinity=False)
_POSITIVE = st.floats(min_value=5e-324, max_value=1.7976931348623157e308)


@st.composite
def wild_test(draw):
    """A well-formed test whose numbers may be anything finite: openings from 5e-324 to 1.8e308 mm,
    masses up to 1.8e308 g (each must be a result or an input error at its field)."""
    sizes = sorted(set(draw(st.lists(_POSITIVE, min_size=2, max_size=8))), reverse=True)
    if draw(st.booleans()):
        p, pts = 100.0, []
        for d in sizes:
            pts.append({"opening_mm": d, "passing_pct": p})
            p = max(0.0, p - draw(st.floats(0.0, 100.0)))
        return {"passing": pts, "plasticity": {"nonplastic": True}}
    return {"sieves": [{"opening_mm": d, "retained_g": draw(st.floats(0.0, 1.7976931348623157e308))} for d in sizes],
            "dry_mass_g": draw(_POSITIVE), "pan_g": draw(st.floats(0.0, 1e300))}


def realistic(op: str):
    test = st.one_of(passing_test(), masses_test(), wild_test())
    rules = st.fixed_dictionaries({}, optional={"criteria": st.sampled_from(["nrcs-1994", "usbr-2011", "fema-2011",
                                                                              "terzaghi"]),
                                                "void_ratio": st.one_of(st.floats(0.2, 1.5), _ANY),
                                                "shape_factor": _ANY, "hazen_c": _ANY, "kc_pan_lower_mm": _ANY,
                                                "regrade_on_mm": _ANY, "terzaghi_ratio": _ANY,
                                                "dispersive": st.booleans()})
    if op == "gradation":
        return st.builds(lambda t: {"op": op, "test": t}, test)
    if op == "evaluate":
        return st.builds(lambda s, b, r: {"op": op, "sample": s, "base": b, "rules": r}, test,
                         st.one_of(st.none(), test), rules)
    if op == "zones":
        return st.builds(lambda zs, r: {"op": op, "zones": [{"name": f"z{i}", "test": t} for i, t in enumerate(zs)],
                                         "rules": r}, st.lists(test, min_size=2, max_size=4), rules)
    if op == "design_band":
        return st.builds(lambda bs, r: {"op": op, "bases": bs, "rules": r}, st.lists(passing_test(), min_size=1,
                                                                                     max_size=3), rules)
    return None


def requests(op: str):
    gen = realistic(op)
    fuzz = mutated(op)
    return fuzz if gen is None else st.one_of(fuzz, gen.map(lambda r: json.dumps({"schema": 1, "id": 1, **r})))


# --- the properties -----------------------------------------------------------------------------------
def _refuse(name):
    raise AssertionError(f"non-standard JSON constant {name} in the reply")


def _gradations(obj):
    return dicts_with(obj, {"points", "d_mm"})


_EXPLAINS_D = ("d_below_range", "d_above_range", "curve_from_d_values")


def problems(op: str, text: str) -> list[str]:
    """What is wrong with the reply to ``text`` (empty when it keeps the contract)."""
    try:
        out = api.handle(text)
    except BaseException as exc:  # noqa: BLE001 - counting escapes is the point
        return [f"escape: {type(exc).__name__}: {exc}"]
    try:
        r = json.loads(out, parse_constant=_refuse)
    except (AssertionError, ValueError) as exc:
        return [f"not strict JSON: {exc}"]
    if r.get("ok") is False:
        err = r.get("error") or {}
        TALLY[(op, "error")] += 1
        bad = [] if (isinstance(err.get("code"), str) and err["code"] and isinstance(err.get("message"), str)
                     and err["message"] and isinstance(err.get("field"), str)) else [f"error lacks code/message/field: {err}"]
        if err.get("code") == "internal_error":
            bad.append(f"internal_error: {err.get('message')}")
        return bad
    if r.get("ok") is not True:
        return [f"reply is neither ok nor an error: {out[:200]}"]
    TALLY[(op, "ok")] += 1
    bad = []
    findings = r.get("findings") or []
    said = " ".join(f.get("message", "") for f in findings if f.get("code") in _EXPLAINS_D)
    for f in findings:
        if f.get("code") == "not_computable":
            bad.append(f"unexplained null (NaN/Infinity scrubbed): {f.get('field')}")
    has_cu_note = any(f.get("code") == "cu_undefined" for f in findings)
    fractions_said = " ".join(f.get("message", "") for f in findings if f.get("code") == "fraction_undefined")
    for g in _gradations(r.get("result")):
        pts = g["points"]
        for a, b in zip(pts, pts[1:]):
            if not a["opening_mm"] > b["opening_mm"]:
                bad.append(f"points not coarsest first: {a} {b}")
            if b["passing_pct"] > a["passing_pct"]:
                bad.append(f"passing rises as size falls: {a} {b}")
        for pt in pts:
            if not 0.0 <= pt["passing_pct"] <= 100.0:
                bad.append(f"passing outside 0..100: {pt}")
        for k, v in (g.get("d_mm") or {}).items():
            if v is None and not re.search(rf"\b{k}\b", said):
                bad.append(f"unexplained null: d_mm.{k}")
        if (g.get("cu") is None or g.get("cc") is None) and not has_cu_note:
            bad.append("unexplained null: cu/cc without cu_undefined")
        for name in ("cobbles", "gravel", "sand", "fines"):
            if g.get(f"{name}_pct") is None and not re.search(rf"\b{name} \(needs", fractions_said):
                bad.append(f"unexplained null: {name}_pct")
    res = r.get("result") or {}
    if op == "design_band" and res.get("feasible"):
        for lim in res["band"]["limits"]:
            if lim["min_pct"] > lim["max_pct"]:
                bad.append(f"feasible band inverted: {lim}")
        for lim in res["band_unrounded"]:
            if lim["min_unrounded_pct"] > lim["max_unrounded_pct"]:
                bad.append(f"feasible band inverted (unrounded): {lim}")
    return bad


@pytest.fixture(scope="module", autouse=True)
def _report_tally():
    yield
    if TALLY:
        line = ", ".join(f"{op} {kind} {n}" for (op, kind), n in sorted(TALLY.items()))
        print(f"\ncontract fuzz ({EXAMPLES} examples per op): {line}")


@pytest.mark.parametrize("op", sorted(api.OPS))
def test_every_reply_keeps_the_contract(op):
    @SETTINGS
    @given(requests(op))
    def run(text):
        bad = problems(op, text)
        assert not bad, f"{bad[:3]}\nrequest: {text[:1500]}"
    run()


def test_fuzz_covers_every_op():
    assert all(SEEDS[op] for op in api.OPS), [op for op in api.OPS if not SEEDS[op]]


# --- the defects this test was written against, pinned -----------------------------------------------
@pytest.mark.parametrize("text, code, field", [
    ('{"op":"gradation","id":1e999}', "bad_id", "id"),
    ('{"op":"version","id":-1e999}', "bad_id", "id"),
    ('{"op":"gradation","id":1,"test":{"passing":[{"opening_mm":' + "9" * 400 + ',"passing_pct":100},'
     '{"opening_mm":1,"passing_pct":0}]}}', "out_of_range", "test.passing[0].opening_mm"),
    ('{"op":"gradation","id":1,"test":{"passing":[{"opening_mm":2,"passing_pct":100},'
     '{"opening_mm":' + "9" * 400 + ',"passing_pct":0}]}}', "out_of_range", "test.passing[1].opening_mm"),
    ('{"op":"gradation","id":1,"test":{"passing":[{"opening_mm":1e300,"passing_pct":100},'
     '{"opening_mm":1,"passing_pct":0}]}}', "out_of_range", "test.passing[0].opening_mm"),
    ('{"op":"gradation","id":1,"test":{"passing":[{"opening_mm":1e-300,"passing_pct":100},'
     '{"opening_mm":1,"passing_pct":0}]}}', "out_of_range", "test.passing[0].opening_mm"),
    ('{"op":"gradation","id":1,"test":{"passing":[{"opening_mm":1e999,"passing_pct":100},'
     '{"opening_mm":1,"passing_pct":0}]}}', "not_finite", "test.passing[0].opening_mm"),
    ('{"op":"gradation","id":1,"test":{"dry_mass_g":1' + "0" * 400 + ',"sieves":[{"opening_mm":2,"retained_g":1},'
     '{"opening_mm":1,"retained_g":1}]}}', "out_of_range", "test.dry_mass_g"),
    ('{"op":"gradation","id":1,"test":{"dry_mass_g":2e8,"sieves":[{"opening_mm":2,"retained_g":1},'
     '{"opening_mm":1,"retained_g":1}]}}', "out_of_range", "test.dry_mass_g"),
    ('{"op":"gradation","id":1,"test":{"passing":[{"sieve":"' + "9" * 5000 + '/1 in","passing_pct":100},'
     '{"opening_mm":1,"passing_pct":0}]}}', "too_long", "test.passing[0].sieve"),
    ('{"op":"gradation","id":1,"test":{"passing":[{"sieve":"99999999 mm","passing_pct":100},'
     '{"opening_mm":1,"passing_pct":0}]}}', "out_of_range", "test.passing[0].sieve"),
])
def test_extreme_numbers_are_input_errors_naming_their_field(text, code, field):
    r = json.loads(api.handle(text), parse_constant=_refuse)
    assert r["ok"] is False
    assert (r["error"]["code"], r["error"]["field"]) == (code, field), r["error"]


_SAND = {"passing": [{"opening_mm": 4.75, "passing_pct": 100}, {"opening_mm": 0.6, "passing_pct": 40},
                     {"opening_mm": 0.075, "passing_pct": 3}], "plasticity": {"nonplastic": True}}  # invented


@pytest.mark.parametrize("key, value", [("shape_factor", 1e-200), ("shape_factor", 0.5), ("void_ratio", 1e103),
                                        ("void_ratio", 25), ("hazen_c", 1e300), ("kc_pan_lower_mm", 1e-300),
                                        ("regrade_on_mm", 1e6)])
def test_extreme_rules_are_input_errors_naming_the_rule(key, value):
    r = json.loads(api.handle(json.dumps({"op": "evaluate", "id": 1, "sample": _SAND, "rules": {key: value}})))
    assert r["ok"] is False and r["error"]["code"] == "out_of_range" and r["error"]["field"] == f"rules.{key}"


def test_too_many_points_zones_and_bases_are_refused_with_their_list():
    pts = [{"opening_mm": 100.0 * 0.999 ** i, "passing_pct": 100.0 - i * 0.009} for i in range(10_001)]
    r = json.loads(api.handle(json.dumps({"op": "gradation", "id": 1, "test": {"passing": pts}})))
    assert r["error"]["code"] == "too_many_items" and r["error"]["field"] == "test.passing"
    r = json.loads(api.handle(json.dumps({"op": "zones", "id": 1,
                                          "zones": [{"name": f"z{i}", "test": _SAND} for i in range(21)]})))
    assert r["error"]["code"] == "too_many_items" and r["error"]["field"] == "zones"
    r = json.loads(api.handle(json.dumps({"op": "design_band", "id": 1, "bases": [_SAND] * 21})))
    assert r["error"]["code"] == "too_many_items" and r["error"]["field"] == "bases"


def test_ten_thousand_points_are_accepted():
    pts = [{"opening_mm": 100.0 * 0.999 ** i, "passing_pct": 100.0 - i * 0.009} for i in range(10_000)]
    r = json.loads(api.handle(json.dumps({"op": "evaluate", "id": 1, "sample": {"passing": pts}})))
    assert r["ok"] is True, r.get("error")


def test_a_value_an_op_could_not_compute_is_null_with_a_finding(monkeypatch):
    import sys
    import types
    mod = types.ModuleType("tests_fuzz_nan")
    mod.op = lambda req: ({"a": float("nan"), "b": [float("inf"), 1.5]}, [])
    monkeypatch.setitem(sys.modules, "tests_fuzz_nan", mod)
    monkeypatch.setitem(api.OPS, "version", "tests_fuzz_nan:op")
    r = json.loads(api.handle('{"op": "version"}'), parse_constant=_refuse)
    assert r["ok"] is True and r["result"] == {"a": None, "b": [None, 1.5]}
    assert sorted(f["field"] for f in r["findings"] if f["code"] == "not_computable") == ["result.a", "result.b[0]"]


def test_a_reply_that_cannot_be_encoded_is_an_internal_error_not_an_exception(monkeypatch):
    import sys
    import types
    mod = types.ModuleType("tests_fuzz_obj")
    mod.op = lambda req: ({"a": object()}, [])
    monkeypatch.setitem(sys.modules, "tests_fuzz_obj", mod)
    monkeypatch.setitem(api.OPS, "version", "tests_fuzz_obj:op")
    r = json.loads(api.handle('{"op": "version", "id": 4}'), parse_constant=_refuse)
    assert r["ok"] is False and r["error"]["code"] == "internal_error" and r["id"] == 4


def test_every_error_code_the_source_can_return_is_documented():
    src = Path(__file__).parent.parent / "pycore" / "tamis"
    codes = set()
    for py in src.rglob("*.py"):
        codes |= set(re.findall(r'(?:InputError|cell_error)\(\s*"([a-z0-9_]+)"', py.read_text(encoding="utf-8")))
    assert len(codes) > 40 and {"bad_d_value_name", "base_incomplete", "too_many_items"} <= codes
    doc = (Path(__file__).parent.parent / "docs" / "json-contract.md").read_text(encoding="utf-8")
    assert sorted(c for c in codes if f"`{c}`" not in doc) == []


def test_a_check_value_that_is_not_finite_is_explained_not_silently_null(monkeypatch):
    import sys
    import types
    from tamis.checks import Check
    mod = types.ModuleType("tests_fuzz_check")
    mod.op = lambda req: ({"checks": [Check("qa.mass_balance", "fail", "m", float("inf"), 0.3, "<=", "%").to_dict()]},
                          [])
    monkeypatch.setitem(sys.modules, "tests_fuzz_check", mod)
    monkeypatch.setitem(api.OPS, "version", "tests_fuzz_check:op")
    r = json.loads(api.handle('{"op": "version"}'), parse_constant=_refuse)
    assert r["result"]["checks"][0]["value"] is None
    assert [f["field"] for f in r["findings"] if f["code"] == "not_computable"] == ["result.checks[0].value"]


def test_a_400_digit_split_sieve_is_an_input_error_at_its_field():
    req = json.loads((GOLDEN / "evaluate-filter-clay-core-hydrometer.request.json").read_text(encoding="utf-8"))
    text = re.sub(r'"split_mm": [0-9.]+', '"split_mm": ' + "9" * 400, json.dumps(req), count=1)
    assert "9" * 400 in text
    r = json.loads(api.handle(text), parse_constant=_refuse)
    assert r["ok"] is False and r["error"]["code"] == "out_of_range"
    assert r["error"]["field"] == "base.sedimentation.split_mm"
