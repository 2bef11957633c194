"""The short cuts taken for speed give what the long way gives (issue 17; docs/decisions.md).

Each short cut is checked against the long way it replaces: ``errors.number`` on the values its fast path
accepts and on every value that must fall through to the checks with their messages; Kezdi's ranking of the
split candidates by the log of the ratio against reading every candidate exactly (the scan as it was);
``copy_check`` against ``dataclasses.replace`` and ``new_check`` against ``Check``; the registry's source
texts composed at import against the entries they come from; USCS's decided percentages in fixed decimal
contexts against a local context. The curves are invented, for the test only.
"""

from __future__ import annotations

import dataclasses
import math
from decimal import Decimal, localcontext

import pytest
from hypothesis import given, settings
from hypothesis import strategies as s

from tamis import registry
from tamis.checks import WARN, Check, copy_check, new_check
from tamis.criteria import stability as st
from tamis.criteria.tables import RULE_SETS
from tamis.errors import NUMBER_MAX_ABS, NUMBER_MIN_ABS, InputError, number
from tamis.lab.curve import d_values, ln, ln_size_at, ln_sizes_at, make_curve, size_at
from tamis.lab.uscs import DECIDE_DIGITS, decided_pct

from test_stability_scans_exact import curves


class _NotDict(dict):
    """A mapping that is not exactly a dict: :func:`number` takes its long way for it."""


def _outcome(obj, key, **bounds):
    try:
        v = number(obj, key, "t", **bounds)
        return ("value", v, math.copysign(1.0, v) if isinstance(v, float) else None)
    except InputError as err:
        return ("error", err.code, err.message, err.field)


EDGES = [0.0, -0.0, NUMBER_MIN_ABS, -NUMBER_MIN_ABS, NUMBER_MIN_ABS / 2, NUMBER_MAX_ABS, -NUMBER_MAX_ABS,
         NUMBER_MAX_ABS * (1 + 1e-15), 1e300, math.inf, -math.inf, math.nan, 1.0, -1.0, 100.0, 100.5,
         0, 1, -1, 10**12, -(10**12), 10**12 + 1, 10**400, True, False, "1", None, [1.0], {"a": 1}]
BOUNDS = [{}, {"minimum": 0.0}, {"minimum": 0}, {"exclusive_minimum": 0.0}, {"maximum": 100.0},
          {"minimum": 0.0, "maximum": 100.0}, {"exclusive_minimum": 0.0, "maximum": 10_000.0},
          {"required": False}, {"required": False, "default": 7.0}]


@pytest.mark.parametrize("bounds", BOUNDS)
def test_number_gives_the_same_value_or_error_either_way(bounds):
    for v in EDGES:
        assert _outcome({"x": v}, "x", **bounds) == _outcome(_NotDict(x=v), "x", **bounds), v
    assert _outcome({}, "x", **bounds) == _outcome(_NotDict(), "x", **bounds)


@settings(max_examples=300, deadline=None)
@given(s.one_of(s.floats(allow_nan=True, allow_infinity=True), s.integers(-(10**13), 10**13)),
       s.sampled_from(BOUNDS))
def test_number_gives_the_same_value_or_error_either_way_on_any_number(v, bounds):
    assert _outcome({"x": v}, "x", **bounds) == _outcome(_NotDict(x=v), "x", **bounds)


def test_number_fast_path_still_refuses_what_it_must():
    with pytest.raises(InputError) as e:
        number({"x": 1e-13}, "x", "sample.passing[2]")
    assert (e.value.code, e.value.field) == ("out_of_range", "sample.passing[2].x")
    with pytest.raises(InputError) as e:
        number({"x": 0.0}, "x", "p", exclusive_minimum=0.0)
    assert (e.value.code, e.value.field) == ("out_of_range", "p.x")


def _kezdi_worst_reading_every_candidate(curve, lo, hi):
    """The Kezdi scan as it was before the ranking by logarithm: every candidate read by size_at."""
    worst = None
    for ps in sorted(st.kezdi_candidates(curve, lo, hi)):
        dc, df = size_at(curve, ps + 0.15 * (100.0 - ps)), size_at(curve, 0.85 * ps)
        if dc is None or df is None or df <= 0:
            continue
        if worst is None or dc / df > worst[0]:
            worst = (dc / df, ps)
    return worst


@settings(max_examples=300, deadline=None)
@given(curves(), s.floats(0.0, 40.0), s.floats(20.0, 100.0))
def test_kezdi_ranked_by_logarithm_gives_the_same_bits_as_reading_every_candidate(points, lo, hi):
    c = make_curve(points)
    assert st._kezdi_worst(c, lo, hi) == _kezdi_worst_reading_every_candidate(make_curve(points), lo, hi)


def test_kezdi_ranking_keeps_a_near_tie_to_be_decided_exactly():
    # a straight line on the semi-log chart (10 points per halving): the ratio is 2 ** 1.5 at every split, so
    # the candidates tie up to rounding and the first largest ratio in split order is the one reported. A
    # ranking by logarithm alone (a margin of 0) reports the split 58.8 % here, the exact reading 47.1 %
    c = make_curve([(4.75, 100.0), (2.375, 90.0), (1.1875, 80.0), (0.59375, 70.0), (0.296875, 60.0),
                    (0.1484375, 50.0), (0.07421875, 40.0)])
    want = _kezdi_worst_reading_every_candidate(make_curve(c.points), 10.0, 60.0)
    assert want[1] == pytest.approx(47.0588236, abs=1e-6)
    assert st._kezdi_worst(c, 10.0, 60.0) == want


@settings(max_examples=200, deadline=None)
@given(curves(), s.floats(0.0, 100.0))
def test_ln_size_at_is_the_log_of_size_at_and_none_where_it_is(points, pct):
    c = make_curve(points)
    d = size_at(c, pct)
    lg = ln_size_at(c, pct)
    assert (d is None) == (lg is None)
    if d is not None:
        assert lg == pytest.approx(ln(d), abs=1e-12)


@settings(max_examples=200, deadline=None)
@given(curves(), s.lists(s.one_of(s.floats(-1.0, 101.0), s.sampled_from([0.0, 100.0, 15.0, 50.0])), max_size=40),
       s.booleans())
def test_ln_sizes_at_in_one_sweep_is_ln_size_at_of_each(points, pcts, ordered):
    c = make_curve(points)
    pcts = sorted(pcts) if ordered else pcts
    pcts += [p for _, p in points]              # on the measured percentages too, flat steps included
    assert ln_sizes_at(c, pcts) == [ln_size_at(c, p) for p in pcts]


def test_new_check_is_the_check_the_dataclass_makes():
    args = ("qa.mass_balance", "pass", "m", 0.1, 0.3, "<=", "%", "src", {"k": 1}, True)
    made = new_check(*args)
    assert made == Check(*args) and type(made) is Check
    assert new_check("a", "fail", "m") == Check("a", "fail", "m")          # the defaults, extra a new {}
    assert new_check("a", "fail", "m").extra is not new_check("a", "fail", "m").extra
    with pytest.raises(dataclasses.FrozenInstanceError):
        made.status = "fail"
    with pytest.raises(ValueError):
        new_check("a", "maybe", "m")


def test_copy_check_is_dataclasses_replace_without_validating_again():
    c = registry.make_check("stability.istomina", WARN, "m", value=12.0, limit=10.0, relation="<=", unit="-",
                            extra={"a": 1})
    assert copy_check(c, advisory=True) == dataclasses.replace(c, advisory=True)
    assert copy_check(c, extra={"a": 1, "subject": "sample"}) == dataclasses.replace(
        c, extra={"a": 1, "subject": "sample"})
    assert c.advisory is False and c.extra == {"a": 1}       # the original is left as it was
    with pytest.raises(ValueError):
        copy_check(c, status="maybe")


def test_source_texts_composed_at_import_are_those_of_their_entries():
    variants = [""] + sorted(RULE_SETS)
    for e in registry.ENTRIES:
        for v in variants:
            try:
                want = registry.entry(e.id, v)
            except KeyError:
                continue
            if want.carries == registry.GIVEN:
                assert registry.source_text(e.id, v, "given text") == "given text"
                continue
            composed = want.carries or f"{want.source}, {want.edition}, {want.locator} [{want.provenance}]"
            assert registry.source_text(e.id, v) == composed
            with pytest.raises(ValueError):
                registry.source_text(e.id, v, "a source given where the registry's is carried")


def test_d_values_names_each_percentage_as_before():
    c = make_curve([(4.75, 100.0), (1.18, 60.0), (0.3, 20.0), (0.075, 2.0)])
    assert list(d_values(c)) == ["D5", "D10", "D15", "D20", "D30", "D50", "D60", "D85", "D90", "D95"]
    got = d_values(c, (12.5, 50, 99.0))
    assert list(got) == ["D12.5", "D50", "D99"]
    assert got["D50"] == size_at(c, 50.0) and got["D99"] == size_at(c, 99.0)


def _decided_pct_in_a_local_context(num_pct, minus_pct=0.0, of_pct=100.0):
    """uscs.decided_pct as it was: the arithmetic in a local decimal context of 40 digits, then 12."""
    with localcontext() as ctx:
        ctx.prec = 40
        v = (Decimal(repr(num_pct)) - Decimal(repr(minus_pct))) * 100 / Decimal(repr(of_pct))
        ctx.prec = DECIDE_DIGITS
        return float(+v)


@settings(max_examples=500, deadline=None)
@given(s.floats(0.0, 100.0), s.floats(0.0, 1.0), s.floats(1e-3, 100.0), s.integers(0, 4))
def test_decided_pct_with_fixed_contexts_is_the_local_context_form(a, share, of, digits):
    a = round(a, digits) if digits < 4 else a
    b = round(a * share, digits) if digits < 4 else a * share
    assert decided_pct(a, b, of) == _decided_pct_in_a_local_context(a, b, of)
    assert decided_pct(a) == _decided_pct_in_a_local_context(a)


def test_decided_pct_keeps_an_edge_an_edge():
    # the cases its docstring names: float noise either side of an edge must not decide a class
    assert decided_pct(55.3, 10.6) == 44.7
    assert decided_pct(4.545, 0.0, 90.9) == 5.0
