"""A test reduced to its gradation, and the ``gradation`` op.

:func:`reduce_test` is the one place a test becomes a :class:`Reduced`: the
curve, the gradation dict of the JSON contract, the soil properties, the lab
QA checks and the findings. The criteria, the ``evaluate`` op, the zone
sequences and the exchange's calc columns all start from it.

Nothing is rounded here: every number is carried at full precision and only
the display rounds.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .. import SCREENING_NOTICE
from ..checks import Finding, verdict
from ..errors import InputError, boolean, join, number, require_mapping
from .curve import STANDARD_D_NAMES, STANDARD_D_PCTS, Curve, coefficient_of_curvature, coefficient_of_uniformity, d_values, \
    fineness_modulus, fractions, make_curve, same_size
from .sedimentation import reduce_sedimentation
from .sieve_analysis import parse_test
from .uscs import Plasticity, classify


#: Largest Atterberg limit accepted [%] (bentonites reach several hundred; common practice, no source).
LIMIT_MAX_PCT = 1000.0


@dataclass(frozen=True)
class Reduced:
    """A reduced test.

    Attributes
    ----------
    curve : tamis.lab.curve.Curve
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
    sedimentation: dict | None = None


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
    ll = number(pl, "liquid_limit", pp, required=False, minimum=0.0, maximum=LIMIT_MAX_PCT)
    pi = number(pl, "plasticity_index", pp, required=False, minimum=0.0, maximum=LIMIT_MAX_PCT)
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


def gradation_of(curve: Curve, props: dict, path: str = "test.sieves", *,
                 finest_is_reading: bool = False) -> tuple[dict, list[Finding]]:
    """The gradation dict of a curve and the findings that explain its nulls
    (``path`` names the list of points in the input; ``finest_is_reading``: the
    finest point is a hydrometer reading, not a sieve)."""
    findings: list[Finding] = []
    d = d_values(curve, STANDARD_D_PCTS)
    cu = coefficient_of_uniformity(d["D60"], d["D10"])
    cc = coefficient_of_curvature(d["D30"], d["D10"], d["D60"])
    fr = fractions(curve)
    finest_d, finest_p = curve.points[-1]
    top_d, top_p = curve.points[0]
    below = [k for k, p in STANDARD_D_NAMES if d[k] is None and p < finest_p]
    above = [k for k, p in STANDARD_D_NAMES if d[k] is None and p > top_p]
    if below and finest_is_reading:
        findings.append(Finding("note", "d_below_range", f"{', '.join(below)} not determined: {finest_p:.1f} % "
                                f"is still finer than the last hydrometer reading ({finest_d:g} mm); a later "
                                "reading would be needed. Never extrapolated.", path))
    elif below:
        findings.append(Finding("note", "d_below_range", f"{', '.join(below)} not determined: {finest_p:.1f} % "
                                f"still passes the finest sieve ({finest_d:g} mm); a hydrometer analysis "
                                "(ASTM D7928) would be needed. Never extrapolated.", path))
    if above:
        findings.append(Finding("note", "d_above_range", f"{', '.join(above)} not determined: only {top_p:.1f} % "
                                f"passes the top sieve ({top_d:g} mm); add a coarser sieve.", path))
    if cu is None:
        findings.append(Finding("note", "cu_undefined", "Cu and Cc need D10, D30 and D60.", path))
    unknown = [(name, size) for name, size, v in (("cobbles", "75 mm", fr.cobbles_pct), ("gravel", "75 and 4.75 mm",
                                                                                         fr.gravel_pct),
                                                  ("sand", "4.75 and 0.075 mm", fr.sand_pct),
                                                  ("fines", "0.075 mm", fr.fines_pct)) if v is None]
    if unknown:
        findings.append(Finding("note", "fraction_undefined", "Not determined: " + "; ".join(
            f"{name} (needs the percent passing {size}, which the curve does not reach)" for name, size in unknown)
            + ". Never extrapolated.", path))
    uscs = classify(curve, Plasticity(props["nonplastic"], props["liquid_limit"], props["plasticity_index"]))
    for w in uscs.warnings:
        findings.append(Finding("warning", "u_line", w, path.rsplit(".", 1)[0] + ".plasticity",
                                "ASTM D2487 plasticity chart (U-line from memory)"))
    g = {"points": curve.to_points(), "d_mm": d, "cu": cu, "cc": cc, "gravel_pct": fr.gravel_pct,
         "sand_pct": fr.sand_pct, "fines_pct": fr.fines_pct, "uscs": uscs.to_dict(),
         "cobbles_pct": fr.cobbles_pct, "fineness_modulus": fineness_modulus(curve)}
    return g, findings


def reduce_test(test_obj: dict, path: str) -> Reduced:
    """Parse and reduce one test dict (``docs/json-contract.md``, "A test (input)").

    Raises :class:`tamis.errors.InputError` with a field path under ``path``.
    """
    st = parse_test(test_obj, path)
    props = parse_props(test_obj, path)
    curve, sed, more_sed = st.curve, None, []
    if test_obj.get("sedimentation") is not None:
        curve, sed, more_sed = combine(st.curve, test_obj["sedimentation"], join(path, "sedimentation"))
    sieve_sizes = {d for d, _ in st.curve.points}
    g, more = gradation_of(curve, props, join(path, "passing" if st.form == "passing" else "sieves"),
                           finest_is_reading=sed is not None and curve.points[-1][0] not in sieve_sizes)
    if sed is not None:
        for pt in g["points"]:
            pt["source"] = "sieve" if pt["opening_mm"] in sieve_sizes else "sedimentation"
    return Reduced(curve, g, props, list(st.checks), list(st.findings) + more_sed + more,
                   [r.to_dict() for r in st.rows], None if st.masses is None else st.masses.to_dict(), st.form,
                   sed)


def combine(sieve_curve: Curve, sed_obj, path: str) -> tuple[Curve, dict, list[Finding]]:
    """The sieve curve with the sedimentation points finer than its finest
    sieve: ``(curve, sedimentation dict, findings)``.

    The percent passing the split sieve is read from the sieve curve, which
    must hold that sieve. A reading whose diameter is not finer than the
    finest sieve stays in the reduced table but not in the curve (a note says
    so); a point that rises above the sieve curve is an error on its reading.
    """
    require_mapping(sed_obj, path)
    split = number(sed_obj, "split_mm", path)  # a 400-digit split is refused here, at its field
    at_split = next((p for d, p in sieve_curve.points if same_size(d, split)), None)
    sed = reduce_sedimentation(sed_obj, path, 0.0 if at_split is None else at_split)
    if at_split is None:
        sp = join(path, "split_mm")
        raise InputError("split_sieve_missing", f"{sp} = {sed.split_mm:g} mm is not one of the test's sieves; the "
                         "percent passing it is read from the sieve analysis.", sp)
    finest = sieve_curve.finest_mm
    used = [(i, r) for i, r in enumerate(sed.readings) if r.diameter_mm < finest and not same_size(r.diameter_mm,
                                                                                                      finest)]
    findings = list(sed.findings)
    left = len(sed.readings) - len(used)
    if left:
        findings.append(Finding("note", "sed_above_finest_sieve", f"{left} reading(s) give a diameter not finer "
                                f"than the finest sieve ({finest:g} mm): they are in the reduced table but not in "
                                "the curve, where the sieves govern.", join(path, "readings")))
    n = len(sieve_curve.points)
    pts = list(sieve_curve.points) + [(r.diameter_mm, r.finer_pct) for _, r in used]
    rp = join(path, "readings")

    def field_of(k: int, name: str) -> str:
        if k < n:
            return join(path, "split_mm")
        return join(join(rp, used[k - n][0]), "reading")

    curve = make_curve(pts, rp, field_of)
    return curve, sed.to_dict(), findings


def require_field(req: dict, key: str):
    """``req[key]``, which the op needs; an error naming ``key`` when it is missing or null."""
    if req.get(key) is None:
        raise InputError("missing_field", f"{key} is required.", key)
    return req[key]


def op_gradation(req: dict):
    """API op ``gradation``: ``{"test": {...}}`` -> the gradation dict plus
    ``checks`` (lab QA), ``table``, ``mass`` and ``form``."""
    red = reduce_test(require_field(req, "test"), "test")
    result = dict(red.gradation)
    result.update(checks=[c.to_dict() for c in red.checks], table=red.table, mass=red.mass, form=red.form,
                  props=red.props, **({} if red.sedimentation is None else {"sedimentation": red.sedimentation}), verdict=verdict(red.checks), notice=SCREENING_NOTICE)
    return result, red.findings
