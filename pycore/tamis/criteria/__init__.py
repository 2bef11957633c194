"""Published granular-filter criteria, one module per method family.

:func:`run_filter_checks` is the hook ``evaluate`` and ``zones`` call: the
filter-material and internal-stability checks of the sample always, and the
retention and permeability checks when a base soil is given. Every check id
is listed once in :mod:`tamis.registry` with its source, edition and
provenance, and every threshold in :mod:`tamis.criteria.tables`.

Modules: ``tables`` (thresholds), ``registry`` (check ids and sources),
``rules`` (the ``rules`` object and its defaults), ``nrcs`` and ``terzaghi``
(D15F limits), ``base`` (regrading, category), ``pairs`` (retention and
permeability checks), ``material`` (fines, plasticity, size, segregation),
``stability`` (internal stability), ``permeability`` (k estimates).

All verdicts are screening checks: the project specification, local codes and
the engineer of record govern.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ..lab.curve import size_at
from ..checks import FAIL, Finding, copy_check
from .base import analyse_base, base_info
from .bounds import d_range
from .material import material_checks, material_limits
from .against_base import permeability_check, permeability_limit, retention_check
from .permeability import hazen_estimate, kozeny_carman_estimate, ratio_estimate
from .rules import parse_rules
from .stability import stability_checks
from .tables import RULE_SETS


@dataclass(frozen=True)
class FilterOutcome:
    """What the criteria add to an evaluation.

    Attributes
    ----------
    checks : list of Check
        Filter-material checks, retention and permeability (with a base),
        internal stability, permeability estimates (status not_applicable).
    limits : dict
        ``d15_max_mm``, ``d15_min_mm``, ``d90_max_mm``, ``d100_max_mm``,
        ``fines_max_pct``, ``d85b_mm``, ``d15b_mm`` (values or None).
    base_info : dict
        ``base_category`` (1-4 or None), ``a_pct``, ``base_regraded``.
    findings : list of Finding
    rules_used : dict
        The rules after defaults.
    """

    checks: list = field(default_factory=list)
    limits: dict = field(default_factory=dict)
    base_info: dict = field(default_factory=dict)
    findings: list = field(default_factory=list)
    rules_used: dict = field(default_factory=dict)


def _props(reduced) -> dict:
    return dict(getattr(reduced, "props", None) or {})


def _advisory_flags(checks) -> list:
    """A warning for each advisory internal-stability method that finds the
    filter unstable, so that the flag is seen even though it does not decide
    the verdict."""
    return [Finding("warning", "stability_flag",
                    f"{c.message} This internal-stability indicator is not part of the verdict "
                    "(rules.stability_in_verdict is false); the engineer should consider it.",
                    source=c.source)
            for c in checks if c.status == FAIL]


def run_filter_checks(sample, base=None, rules=None, path: str = "rules") -> FilterOutcome:
    """Run the filter criteria on ``sample`` (a ``Reduced``), against ``base`` when given.

    Raises :class:`~tamis.errors.InputError` for bad ``rules`` (field path
    under ``path``).
    """
    r = parse_rules(rules, path)
    rs = RULE_SETS[r["criteria"]]
    curve = sample.curve
    props = _props(sample)
    checks = material_checks(curve, props)
    findings: list = []
    limits = {"d15_max_mm": None, "d15_min_mm": None, **material_limits(curve), "d85b_mm": None, "d15b_mm": None}
    binfo = base_info(None)
    d15f = size_at(curve, 15.0)
    d15f_range = d_range(curve, 15.0, "D15 of the filter")
    if base is not None:
        bprops = _props(base)
        disp = r["dispersive"] if r["dispersive"] is not None else bprops.get("dispersive")
        b = analyse_base(base.curve, disp, rs["regrade"], r["regrade_on_mm"], "base",
                         regrade_wanted=rs["regrade"] and r["regrade"])
        findings.extend(b.findings)
        ret, ret_lim = retention_check(d15f, b, rs, r, d15f_range)
        perm = permeability_check(d15f, b, rs, r, d15f_range)
        checks[0:0] = [ret, perm]
        # the limits block carries exact limits only (a bound that decided a check stays in the check)
        limits.update({"d15_max_mm": ret_lim["limit_mm"], "d15_min_mm": permeability_limit(b, rs, r)[0],
                       "d85b_mm": b.d85b_mm, "d15b_mm": b.d15b_mm})
        binfo = base_info(b, bprops, findings)
    if r["stability"]:
        st, st_find = stability_checks(curve, r["kenney_lau_boundary"])
        if not r["stability_in_verdict"]:
            st = [copy_check(c, advisory=True) for c in st]
            findings.extend(_advisory_flags(st))
        checks.extend(st)
        findings.extend(st_find)
    hz, hz_find = hazen_estimate(curve, r["hazen_c"])
    kc, kc_find = kozeny_carman_estimate(curve, props, r)
    estimates = [hz, kc] + ([ratio_estimate(d15f, limits["d15b_mm"])] if base is not None else [])
    checks.extend(copy_check(c, advisory=True) for c in estimates)
    findings.extend(hz_find + kc_find)
    return FilterOutcome(checks=checks, limits=limits, base_info=binfo, findings=findings, rules_used=r)


__all__ = ["FilterOutcome", "run_filter_checks"]
