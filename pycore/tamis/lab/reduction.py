"""A test reduced to its gradation, and the ``gradation`` and ``evaluate`` ops.

:func:`reduce_test` is the one place a test becomes a :class:`Reduced`: the
curve, the gradation dict of the JSON contract, the soil properties, the lab
QA checks and the findings. The criteria package, the zone sequences and the
records all start from it.

Nothing is rounded here: every number is carried at full precision and only
the display rounds.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from . import SCREENING_NOTICE
from .bands import band_checks, parse_band
from .classify import Plasticity, classify
from .curve import STANDARD_D_PCTS, Curve, coefficient_of_curvature, coefficient_of_uniformity, d_values, \
    fineness_modulus, fractions
from .errors import InputError, boolean, join, number, require_mapping
from .findings import Check, Finding, verdict
from .sieve_test import parse_test


@dataclass(frozen=True)
class Reduced:
    """A reduced test.

    Attributes
    ----------
    curve : tamis.curve.Curve
    gradation : dict
        The "A gradation (output)" dict of the JSON contract (``points``,
        ``d_mm``, ``cu``, ``cc``, ``gravel_pct``, ``sand_pct``, ``fines_pct``,
        ``uscs``) plus ``cobbles_pct`` and ``fineness_modulus``.
    props : dict
        ``nonplastic``, ``liquid_limit`` [%], ``plasticity_index`` [%], ``dispersive``.
    checks : list of Check
        Lab QA checks (``qa.*``).
    findings : list of Finding
    table : list of dict
        Per-sieve rows (opening_mm, label, retained_g, retained_pct,
        cum_retained_pct, passing_pct); masses ``None`` in the passing form.
    mass : dict or None
        Mass summary of the masses form.
    form : str
        ``"masses"`` or ``"passing"``.
    """

    curve: Curve
    gradation: dict
    props: dict
    checks: list
    findings: list
    table: list = field(default_factory=list)
    mass: dict | None = None
    form: str = "masses"


def parse_props(test: dict, path: str) -> dict:
    """Plasticity and dispersivity of a test (``plasticity``, ``dispersive``)."""
    props = {"nonplastic": None, "liquid_limit": None, "plasticity_index": None,
             "dispersive": boolean(test, "dispersive", path)}
    pl = test.get("plasticity")
    if pl is None:
        return props
    pp = join(path, "plasticity")
    require_mapping(pl, pp)
    np_ = boolean(pl, "nonplastic", pp)
    ll = number(pl, "liquid_limit", pp, required=False, minimum=0.0)
    pi = number(pl, "plasticity_index", pp, required=False, minimum=0.0)
    if (ll is None) != (pi is None):
        missing = "plasticity_index" if pi is None else "liquid_limit"
        raise InputError("missing_field", f"{join(pp, missing)} is required with the other Atterberg limit.",
                         join(pp, missing))
    if ll is not None and pi > ll:
        raise InputError("pi_exceeds_ll", f"{join(pp, 'plasticity_index')} = {pi:g} cannot exceed the liquid "
                         f"limit {ll:g} (PI = LL - PL).", join(pp, "plasticity_index"))
    if np_ and pi is not None and pi > 0:
        raise InputError("conflicting_fields", f"{join(pp, 'nonplastic')} is true but the plasticity index is "
                         f"{pi:g}.", join(pp, "nonplastic"))
    props.update(nonplastic=np_, liquid_limit=ll, plasticity_index=pi)
    return props


def gradation_of(curve: Curve, props: dict, path: str = "test.sieves") -> tuple[dict, list[Finding]]:
    """The gradation dict of a curve and the findings that explain its nulls
    (``path`` names the list of points in the input)."""
    findings: list[Finding] = []
    d = d_values(curve, STANDARD_D_PCTS)
    cu = coefficient_of_uniformity(d["D60"], d["D10"])
    cc = coefficient_of_curvature(d["D30"], d["D10"], d["D60"])
    fr = fractions(curve)
    finest_d, finest_p = curve.points[-1]
    top_d, top_p = curve.points[0]
    below = [k for k, v in d.items() if v is None and float(k[1:]) < finest_p]
    above = [k for k, v in d.items() if v is None and float(k[1:]) > top_p]
    if below:
        findings.append(Finding("note", "d_below_range", f"{', '.join(below)} not determined: {finest_p:.1f} % "
                                f"still passes the finest sieve ({finest_d:g} mm); a hydrometer analysis "
                                "(ASTM D7928) would be needed. Never extrapolated.", path))
    if above:
        findings.append(Finding("note", "d_above_range", f"{', '.join(above)} not determined: only {top_p:.1f} % "
                                f"passes the top sieve ({top_d:g} mm); add a coarser sieve.", path))
    if cu is None:
        findings.append(Finding("note", "cu_undefined", "Cu and Cc need D10, D30 and D60.", path))
    uscs = classify(curve, Plasticity(props["nonplastic"], props["liquid_limit"], props["plasticity_index"]))
    for w in uscs.warnings:
        findings.append(Finding("warning", "u_line", w, path.rsplit(".", 1)[0] + ".plasticity",
                                "ASTM D2487 plasticity chart (U-line from memory)"))
    g = {"points": curve.to_points(), "d_mm": d, "cu": cu, "cc": cc, "gravel_pct": fr.gravel_pct,
         "sand_pct": fr.sand_pct, "fines_pct": fr.fines_pct, "uscs": uscs.to_dict(),
         "cobbles_pct": fr.cobbles_pct, "fineness_modulus": fineness_modulus(curve)}
    return g, findings


def reduce_test(test_obj: dict, path: str) -> Reduced:
    """Parse and reduce one test dict (DESIGN.md "A test (input)").

    Raises :class:`tamis.errors.InputError` with a field path under ``path``.
    """
    st = parse_test(test_obj, path)
    props = parse_props(test_obj, path)
    g, more = gradation_of(st.curve, props, join(path, "passing" if st.form == "passing" else "sieves"))
    return Reduced(st.curve, g, props, list(st.checks), list(st.findings) + more,
                   [r.to_dict() for r in st.rows], None if st.masses is None else st.masses.to_dict(), st.form)


def _require(req: dict, key: str):
    if req.get(key) is None:
        raise InputError("missing_field", f"{key} is required.", key)
    return req[key]


def op_gradation(req: dict):
    """API op ``gradation``: ``{"test": {...}}`` -> the gradation dict plus
    ``checks`` (lab QA), ``table``, ``mass`` and ``form``."""
    red = reduce_test(_require(req, "test"), "test")
    result = dict(red.gradation)
    result.update(checks=[c.to_dict() for c in red.checks], table=red.table, mass=red.mass, form=red.form,
                  props=red.props, verdict=verdict(red.checks), notice=SCREENING_NOTICE)
    return result, red.findings


def _tag(checks, subject: str) -> list[Check]:
    """Copies of ``checks`` with ``extra.subject`` set. As ``dataclasses.replace``
    (the same fields, through ``__init__``), without its per-call field scan:
    this runs for every check of every evaluation."""
    return [type(c)(**{**c.__dict__, "extra": {**c.extra, "subject": subject}}) for c in checks]


@dataclass(frozen=True)
class Evaluation:
    """What :func:`evaluate_reduced` finds: everything the ``evaluate`` op returns, unserialised.

    Attributes
    ----------
    sample, base : Reduced, Reduced or None
        As given (never modified).
    band : tamis.bands.Band or None
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
    soil and a parsed band (:func:`tamis.bands.parse_band`), and the ``rules``
    dict (or None) -> :class:`Evaluation`.

    The op calls it, and so do the calc columns of the CSV exchange
    (:mod:`tamis.summaries`) with a base and a band parsed once per file:
    ``sample``, ``base`` and ``band`` are only read, never modified, so they
    may be shared between calls. Raises :class:`~tamis.errors.InputError` for
    bad ``rules`` (field path under ``rules``).
    """
    from . import criteria  # written in parallel; imported late so a broken criteria module names itself
    checks = _tag(sample.checks, "sample")
    findings = list(sample.findings)
    if base is not None:
        checks += _tag(base.checks, "base")
        findings += base.findings
    if band is not None:
        checks += _tag(band_checks(band, sample.curve), "sample")
    outcome = criteria.run_filter_checks(sample, base, rules, "rules")
    checks += list(outcome.checks)
    findings += list(outcome.findings)
    return Evaluation(sample, base, band, checks, findings, outcome, verdict(checks))


def op_evaluate(req: dict):
    """API op ``evaluate``: a sample, optionally its base soil, band and rules ->
    QA, band and filter checks and one verdict (parsed here, judged by
    :func:`evaluate_reduced`)."""
    sample = reduce_test(_require(req, "sample"), "sample")
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
