"""The ``evaluate`` op: one sample judged on its lab QA, its band and the filter criteria.

:func:`evaluate_reduced` puts together what the lower layers give: the lab QA
checks of the sample (and of its base soil), the band checks
(:mod:`tamis.lab.bands`) and the filter criteria (:mod:`tamis.criteria`), then
one verdict. The op parses the request; the exchange's calc columns call
:func:`evaluate_reduced` directly with a band and a base soil parsed once per
file.
"""

from __future__ import annotations

from dataclasses import dataclass

from .. import SCREENING_NOTICE
from ..checks import Check, copy_check, verdict
from ..criteria import run_filter_checks
from ..errors import require_mapping
from ..lab.bands import band_checks, parse_band
from ..lab.reduction import Reduced, reduce_test, require_field


def _tag(checks, subject: str) -> list[Check]:
    """Copies of ``checks`` with ``extra.subject`` set (:func:`~tamis.checks.copy_check`)."""
    return [copy_check(c, extra={**c.extra, "subject": subject}) for c in checks]


@dataclass(frozen=True)
class Evaluation:
    """What :func:`evaluate_reduced` finds: everything the ``evaluate`` op returns, unserialised.

    Attributes
    ----------
    sample, base : Reduced, Reduced or None
        As given (never modified).
    band : tamis.lab.bands.Band or None
        As given.
    checks : list of Check
        Lab QA of the sample (subject ``sample``), of the base (subject
        ``base``), the band checks (subject ``sample``), then the filter criteria.
    findings : list of Finding
    outcome : tamis.criteria.FilterOutcome
    verdict : str
        ``accept`` / ``reject`` / ``review`` of ``checks``.
    """

    sample: Reduced
    base: Reduced | None
    band: object
    checks: list
    findings: list
    outcome: object
    verdict: str


def evaluate_reduced(sample: Reduced, base: Reduced | None = None, band=None, rules: dict | None = None) -> Evaluation:
    """The ``evaluate`` op after parsing: a reduced sample, optionally a reduced base
    soil and a parsed band (:func:`tamis.lab.bands.parse_band`), and the ``rules``
    dict (or None) -> :class:`Evaluation`.

    The op calls it, and so do the calc columns of the CSV exchange
    (:mod:`tamis.exchange.summaries`) with a base and a band parsed once per file:
    ``sample``, ``base`` and ``band`` are only read, never modified, so they
    may be shared between calls. Raises :class:`~tamis.errors.InputError` for
    bad ``rules`` (field path under ``rules``).
    """
    checks = _tag(sample.checks, "sample")
    findings = list(sample.findings)
    if base is not None:
        checks += _tag(base.checks, "base")
        findings += base.findings
    if band is not None:
        checks += _tag(band_checks(band, sample.curve), "sample")
    outcome = run_filter_checks(sample, base, rules, "rules")
    checks += list(outcome.checks)
    findings += list(outcome.findings)
    return Evaluation(sample, base, band, checks, findings, outcome, verdict(checks))


def op_evaluate(req: dict):
    """API op ``evaluate``: a sample, optionally its base soil, band and rules ->
    QA, band and filter checks and one verdict (parsed here, judged by
    :func:`evaluate_reduced`)."""
    sample = reduce_test(require_field(req, "sample"), "sample")
    base = None if req.get("base") is None else reduce_test(req["base"], "base")
    rules = req.get("rules")
    if rules is not None:
        require_mapping(rules, "rules")
    band = None if req.get("band") is None else parse_band(req["band"], "band")
    ev = evaluate_reduced(sample, base, band, rules)
    outcome = ev.outcome
    info = outcome.base_info or {}
    result = {
        "sample": sample.gradation,
        "base": None if base is None else base.gradation,
        "base_category": info.get("base_category"),
        "base_regraded": info.get("base_regraded"),
        "a_pct": info.get("a_pct"),
        "limits": dict(outcome.limits),
        "band": None if band is None else band.name,
        "rules": dict(outcome.rules_used),
        "checks": [c.to_dict() for c in ev.checks],
        "verdict": ev.verdict,
        "notice": SCREENING_NOTICE,
    }
    return result, ev.findings
