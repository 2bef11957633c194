"""Internal stability (suffusion) of a filter, one pure function per method.

Each method gives its own check, verdict and the value that decided it; they
are never merged into one verdict, because they disagree (Kezdi, Kenney & Lau
and Istomina can call one curve unstable while Burenkova calls it stable).
P(d) is read on the curve as measured (not regraded). A method that needs a
part of the curve that was not measured reports ``needs_data`` unless the
measured part already shows instability: nothing is extrapolated.

Each method is evaluated within its domain of application (the registry's
"applies" text, from memory): for a filter within the 5 % fines rule the split
and H/F methods leave out the fines (:func:`fines_domain`, docs/decisions.md
D9) and Wan & Fell is not applicable outside its calibration unless it flags.
The scans read only the breakpoints of the piecewise log-linear curve, where
their extremes lie: O(n log n) in the number of points.

Sources (all from memory; see the registry): Kezdi (1979) Soil Physics,
Elsevier; Kenney & Lau (1985) CGJ 22(2) and reply (1986) CGJ 23; Li & Fannin
(2008) CGJ 45:1303-1309; Burenkova (1993) in Filters in Geotechnical and
Hydraulic Engineering, Balkema; Wan & Fell (2008) JGGE 134(3):401-407;
Istomina (1957).
"""

from __future__ import annotations

from ..checks import FAIL, NEEDS_DATA, NOT_APPLICABLE, PASS, WARN, Check, Finding
from ..lab.curve import Curve, coefficient_of_uniformity, exp, ln, ln_and_ln4, ln_sizes_at, passing_at, same_size, \
    size_at
from ..registry import make_check
from .tables import BURENKOVA, ISTOMINA, KEZDI_FINE_PART_FINES_MAX, KEZDI_LIMIT, KL_CU_NARROW_MAX, \
    KL_F_MAX_NARROW_PCT, KL_F_MAX_WIDE_PCT, LI_FANNIN_F_SPLIT_PCT, MATERIAL, NO_200_MM, WAN_FELL, WAN_FELL_CUTOFF

_EPS = 1e-9


def fines_domain(fines_pct: float | None) -> float | None:
    """The fines limit [%] when a filter with ``fines_pct`` [%] passing 0.075 mm meets the fines rule
    (``filter.fines``, 5 %), else None.

    For such a filter the split and H/F methods are evaluated on the material the sieves measured and
    not on the fines (docs/decisions.md D9): the
    H/F scans start at 0.075 mm, and Kezdi skips the splits whose fine part is more than half fines.
    A result there would be driven only by the fines, whose gradation below 0.075 mm was not
    measured and which the fines rule already limits. Otherwise (fines above 5 % or unknown) the
    whole measured curve is scanned as before.
    """
    limit = MATERIAL["fines_max_pct"]
    if fines_pct is None or fines_pct > limit:
        return None
    return limit


def _span(curve: Curve) -> tuple[float, float]:
    """(percent at the finest sieve, percent at the coarsest sieve) [%]."""
    return curve.points[-1][1], curve.points[0][1]


def _three_way(check_id: str, failed: bool, complete: bool, fail_msg: str, incomplete_msg: str, pass_msg: str,
               **kw) -> Check:
    """fail when the measured part already fails; else needs_data when part of the
    method's range was not measured; else pass."""
    if failed:
        return make_check(check_id, FAIL, fail_msg, **kw)
    if not complete:
        return make_check(check_id, NEEDS_DATA, incomplete_msg, **kw)
    return make_check(check_id, PASS, pass_msg, **kw)


# ----------------------------------------------------------------- Kezdi 1979
#: Margin [in ln of the ratio] beyond which a Kezdi candidate cannot be the largest: 1e-9, some 10^5 times the
#: rounding of the logarithms and exponentials it covers.
_KEZDI_LN_MARGIN = 1e-9


def kezdi_candidates(curve: Curve, lo: float, hi: float) -> set[float]:
    """The splits Ps in [lo, hi] where the Kezdi ratio can be largest: the ends, and each split where
    Ps + 0.15 (100 - Ps) or 0.85 Ps meets a measured percentage, with 1e-7 either side (flat steps)."""
    cands = {lo, hi}
    for _, p in curve.points:
        for ps in ((p - 15.0) / 0.85, p / 0.85):
            for s in (ps - 1e-7, ps, ps + 1e-7):
                if lo <= s <= hi:
                    cands.add(s)
    return cands


def _kezdi_worst(curve: Curve, lo: float, hi: float):
    """(largest D'15c / d'85f, split Ps) over splits Ps in [lo, hi], or None.

    The log of the ratio is linear in Ps between the splits where Ps + 0.15 (100 - Ps) or 0.85 Ps meets a
    measured percentage, so the maximum is read at those splits (approached from both sides where the
    curve has flat steps) and at the ends: about 6 candidates per point, each read by bisection
    (:func:`tamis.lab.curve.size_at`), O(n log n) in all."""
    cands = kezdi_candidates(curve, lo, hi)
    # The ratio is compared first through its logarithm (no exponential per candidate): a candidate whose
    # ln(D'15c / d'85f) lies more than _KEZDI_LN_MARGIN below the largest cannot hold the largest ratio, since
    # both are within a few units in the last place of the exact values. The few left are read as before
    # (size_at, the first largest in split order), so the answer has the same bits as reading every candidate.
    order = sorted(cands)
    lcs = ln_sizes_at(curve, [ps + 0.15 * (100.0 - ps) for ps in order])
    lfs = ln_sizes_at(curve, [0.85 * ps for ps in order])
    logs = [(lc - lf, ps) for lc, lf, ps in zip(lcs, lfs, order) if lc is not None and lf is not None]
    if not logs:
        return None
    top = max(lr for lr, _ in logs) - _KEZDI_LN_MARGIN
    worst = None
    for lr, ps in logs:
        if lr < top:
            continue
        dc = size_at(curve, ps + 0.15 * (100.0 - ps))
        df = size_at(curve, 0.85 * ps)
        if dc is None or df is None or df <= 0:
            continue
        r = dc / df
        if worst is None or r > worst[0]:
            worst = (r, ps)
    return worst


def kezdi_1979(curve: Curve, fines_pct: float | None = None) -> Check:
    """Kezdi split test: at every split, D'15 of the coarse part / d'85 of the
    fine part <= 4 (both parts renormalised to 100 %).

    With the split at Ps % passing, D'15c is the size at Ps + 0.15 (100 - Ps)
    and d'85f the size at 0.85 Ps on the whole curve. The log of the ratio is
    linear in Ps between breakpoints, so its maximum is found at breakpoints
    (approached from both sides where the curve has flat steps).

    Splits are kept where both parts are read on measured material: D'15c no
    higher than the coarsest point below 100 % and d'85f no lower than the
    finest point above 0 %. Between the last sieve passing 100 % and the first
    one retaining material (and likewise at the 0 % end) the curve is only an
    interpolation across an unmeasured interval, and reading a vanishing part
    there would make the verdict depend on which empty sieve topped the stack
    (implementation choice, derived; see docs/decisions.md D5).

    ``fines_pct``: P(0.075 mm) of a filter that meets the fines rule (:func:`fines_domain`); splits whose
    fine part is more than half that material (Ps < 2 x fines) are then not evaluated, and the message
    says so with the ratio they would give.
    """
    p_min, p_max = _span(curve)
    inner = [p for _, p in curve.points if 0.0 < p < 100.0]
    p_top = max(inner) if (inner and p_max >= 100.0) else p_max
    p_bot = min(inner) if (inner and p_min <= 0.0) else p_min
    lo = max(p_bot / 0.85, _EPS)
    hi = min((p_top - 15.0) / 0.85, 100.0 - _EPS)
    incomplete = p_min > 0.0 or p_max < 100.0
    dom = fines_domain(fines_pct)
    full_lo = lo
    if dom is not None:
        # splits whose fine part is more than half fines are outside the evaluated domain (see fines_domain);
        # below them lie the splits that would need the unmeasured gradation of the fines
        lo = max(lo, fines_pct / KEZDI_FINE_PART_FINES_MAX)
        incomplete = p_max < 100.0
    if hi < lo:
        return make_check("stability.kezdi", NEEDS_DATA,
                          "Kezdi split test cannot be made: the measured curve is too short.", limit=KEZDI_LIMIT,
                          relation="<=", unit="-")
    worst = _kezdi_worst(curve, lo, hi)
    if worst is None:
        return make_check("stability.kezdi", NEEDS_DATA, "Kezdi split test: no split could be read.",
                          limit=KEZDI_LIMIT, relation="<=", unit="-")
    r, ps = worst
    d = size_at(curve, ps)          # the split size, read only where the ratio is largest
    extra = {"split_passing_pct": ps, "split_mm": d, "complete": not incomplete}
    note = ""
    if dom is not None and lo > full_lo:
        left = _kezdi_worst(curve, full_lo, min(lo, hi))
        extra.update({"splits_from_pct": lo, "not_evaluated": "splits whose fine part is mostly fines"})
        note = (f" Splits below {lo:.3g} % passing were not evaluated: there more than half of the fine part is "
                f"the {fines_pct:.3g} % finer than 0.075 mm, which meets the {dom:g} % fines rule; "
                + _fines_reason(curve).replace("its gradation", "the gradation of the fines")
                + (f" (the ratio there would reach {left[0]:.3g})." if left is not None else "."))
        if left is not None:
            extra["not_evaluated_max_ratio"] = left[0]
    return _three_way("stability.kezdi", r > KEZDI_LIMIT, not incomplete,
                      f"Kezdi: D'15 coarse / d'85 fine reaches {r:.3g} (> {KEZDI_LIMIT:g}) at the split "
                      f"{ps:.1f} % passing: the fine part could wash out of the coarse part." + note,
                      f"Kezdi: the largest ratio over the measured splits is {r:.3g} (<= {KEZDI_LIMIT:g}), but "
                      "splits beyond the measured curve could not be read; add finer (hydrometer) or coarser "
                      "points." + note,
                      f"Kezdi: the largest D'15 coarse / d'85 fine is {r:.3g} (<= {KEZDI_LIMIT:g})." + note,
                      value=r, limit=KEZDI_LIMIT, relation="<=", unit="-", extra=extra)


# ------------------------------------------------ Kenney & Lau, Li & Fannin
def _kl_f_max(curve: Curve) -> tuple[float, str]:
    """F limit [%] of the H/F scan from Cu (Cu > 3 widely graded: 20 %, else 30 %)."""
    d60, d10 = size_at(curve, 60.0), size_at(curve, 10.0)
    cu = coefficient_of_uniformity(d60, d10)
    if cu is not None:
        wide = cu > KL_CU_NARROW_MAX
        return (KL_F_MAX_WIDE_PCT if wide else KL_F_MAX_NARROW_PCT), f"Cu = {cu:.3g}"
    finest_mm, finest_pct = curve.points[-1]
    if d60 is not None and finest_pct > 10.0 and d60 / finest_mm > KL_CU_NARROW_MAX:
        return KL_F_MAX_WIDE_PCT, f"Cu > {d60 / finest_mm:.3g} (D10 below the finest sieve)"
    return KL_F_MAX_NARROW_PCT, "Cu unknown: the wider F range (30 %) is scanned"


def hf_scan(curve: Curve, f_max_pct: float, d_min_mm: float | None = None
            ) -> tuple[list[tuple[float, float, float]], bool]:
    """(d_mm, F_pct, H_pct) at the breakpoints of F in (0, f_max_pct], F = P(d), H = P(4d) - P(d).

    Between consecutive breakpoints (the measured sizes d_i, the sizes d_i / 4, the ends of the F range
    and D15) both P(d) and P(4d) are linear in ln d, so H/F is a linear-fractional function of ln d
    (monotone) and H - min(F, 15) is linear: the minimum of either lies at a breakpoint, and the scan
    reads only those, about 2n + 3 of them, each by bisection (O(n log n)). Where F reaches 0 at the
    fine end of an interval, H/F there either tends to infinity or is constant, so the other end gives
    the minimum. (An earlier version also read 40 points inside each interval, with the same minimum
    up to rounding in the last digits.)

    ``d_min_mm``: the scan starts there (0.075 mm for a filter within the fines rule,
    :func:`fines_domain`); the finer part is then outside the evaluated domain, not missing data.

    Returns the samples and whether the scan covered the whole F range
    (False when the curve stops above F = 0 or P(4d) is unknown somewhere).
    """
    p_min, _ = _span(curve)
    d_lo = curve.finest_mm
    d_hi = size_at(curve, f_max_pct)
    complete = p_min <= 0.0
    if d_hi is None:
        if p_min > f_max_pct:
            return [], False
        d_hi = curve.coarsest_mm
    if p_min <= 0.0:
        d_zero = size_at(curve, 0.0)
        d_lo = d_zero if d_zero is not None else d_lo
    if d_min_mm is not None and d_min_mm >= d_lo:
        d_lo, complete = d_min_mm, True
    breaks = {d_lo, d_hi}
    d15 = size_at(curve, LI_FANNIN_F_SPLIT_PCT)
    if d15 is not None and d_lo < d15 < d_hi:
        breaks.add(d15)
    for d, _ in curve.points:
        for b in (d, d / 4.0):
            if d_lo < b < d_hi:
                breaks.add(b)
    samples = []
    for d in sorted(breaks):
        ln_d, ln_4d = ln_and_ln4(d)
        f = passing_at(curve, d, ln_d)
        if f is None or f <= 0.0 or f > f_max_pct + 1e-9:
            continue
        p4 = passing_at(curve, 4.0 * d, ln_4d)
        if p4 is None:
            complete = False
            continue
        samples.append((d, f, p4 - f))
    return samples, complete


def hf_scan_of(curve: Curve, d_min_mm: float | None = None
               ) -> tuple[float, str, list[tuple[float, float, float]], bool]:
    """``(f_max_pct, basis, samples, complete)``: the H/F scan over the Kenney & Lau
    F range of this curve (:func:`_kl_f_max`, :func:`hf_scan`), from ``d_min_mm`` when given."""
    f_max, basis = _kl_f_max(curve)
    samples, complete = hf_scan(curve, f_max, d_min_mm)
    return f_max, basis, samples, complete


def _fines_reason(curve: Curve) -> str:
    """Why the fines of a filter within the fines rule are not evaluated by a stability method."""
    if curve.finest_mm < NO_200_MM and not same_size(curve.finest_mm, NO_200_MM):
        return "the fines rule already limits it, and a result there would be driven only by the fines"
    return ("its gradation was not measured (no point below 0.075 mm), and a result there would be driven only "
            "by the fines")


def _hf_not_evaluated(curve: Curve, fines_pct: float | None) -> str:
    """The sentence saying which part of an H/F scan was outside its evaluated domain ('' when none)."""
    dom = fines_domain(fines_pct)
    if dom is None or fines_pct <= 0.0:
        return ""
    return (f" F below {fines_pct:.3g} % (the material finer than 0.075 mm, which meets the {dom:g} % fines "
            f"rule) was not evaluated: {_fines_reason(curve)}.")


def _hf_prepare(curve: Curve, check_id: str, name: str, limit=None, unit: str = "-", scan=None,
                fines_pct: float | None = None):
    """The H/F scan shared by Kenney & Lau and Li & Fannin: (samples, complete,
    extra, None, note), or a ``needs_data`` check in the fourth place when nothing can be scanned.
    ``fines_pct`` as for :func:`kenney_lau`; ``note`` says what was not evaluated."""
    if scan is None:
        scan = hf_scan_of(curve, NO_200_MM if fines_domain(fines_pct) is not None else None)
    f_max, basis, samples, complete = scan
    extra = {"f_max_pct": f_max, "f_range_basis": basis, "complete": complete}
    note = _hf_not_evaluated(curve, fines_pct)
    if note:
        extra["scan_from_mm"] = NO_200_MM
    if samples:
        return samples, complete, extra, None, note
    return samples, complete, extra, make_check(
        check_id, NEEDS_DATA, f"{name}: the curve does not reach F <= {f_max:g} %; add finer points.",
        limit=limit, relation=">=", unit=unit, extra=extra), note


def kenney_lau(curve: Curve, boundary: float = 1.0, *, scan=None, fines_pct: float | None = None) -> Check:
    """Kenney & Lau: stable when (H/F)min >= boundary (1.0, 1986 reply; 1.3, 1985)
    over F <= 20 % (Cu > 3) or F <= 30 % (Cu <= 3).

    ``fines_pct``: P(0.075 mm); for a filter within the fines rule (:func:`fines_domain`) the scan
    starts at 0.075 mm. ``scan``: the ``(f_max_pct, basis, samples, complete)`` of :func:`hf_scan_of`
    for this curve and domain, when the caller already has it (the scan is the costly part)."""
    samples, complete, extra, missing, note = _hf_prepare(curve, "stability.kenney_lau", "Kenney & Lau",
                                                          limit=boundary, unit="-", scan=scan, fines_pct=fines_pct)
    if missing:
        return missing
    extra.update({"boundary": boundary, "complete": complete})
    d, f, h = min(samples, key=lambda s: s[2] / s[1])
    r = h / f
    extra.update({"at_mm": d, "f_pct": f, "h_pct": h})
    return _three_way("stability.kenney_lau", r < boundary, complete,
                      f"Kenney & Lau: (H/F)min = {r:.3g} < {boundary:g} at F = {f:.3g} % ({d:.3g} mm): "
                      "internally unstable." + note,
                      f"Kenney & Lau: (H/F)min = {r:.3g} over the measured range, but F below "
                      f"{curve.points[-1][1]:.3g} % was not measured; add hydrometer points.",
                      f"Kenney & Lau: (H/F)min = {r:.3g} >= {boundary:g}." + note,
                      value=r, limit=boundary, relation=">=", unit="-", extra=extra)


def li_fannin_2008(curve: Curve, *, scan=None, fines_pct: float | None = None) -> Check:
    """Li & Fannin: unstable when H < F for F < 15 %, or H < 15 % for F >= 15 %,
    over the Kenney & Lau F range (``scan`` and ``fines_pct`` as for :func:`kenney_lau`)."""
    samples, complete, extra, missing, note = _hf_prepare(curve, "stability.li_fannin", "Li & Fannin", unit="%",
                                                          scan=scan, fines_pct=fines_pct)
    if missing:
        return missing

    def need(f):
        return f if f < LI_FANNIN_F_SPLIT_PCT else LI_FANNIN_F_SPLIT_PCT

    d, f, h = min(samples, key=lambda s: s[2] - need(s[1]))
    req = need(f)
    extra.update({"at_mm": d, "f_pct": f})
    return _three_way("stability.li_fannin", h < req, complete,
                      f"Li & Fannin: H = {h:.3g} % < {req:.3g} % at F = {f:.3g} % ({d:.3g} mm): "
                      "internally unstable." + note,
                      f"Li & Fannin: no shortfall over the measured range (tightest H = {h:.3g} % against "
                      f"{req:.3g} %), but finer parts were not measured.",
                      f"Li & Fannin: H >= the boundary everywhere (tightest H = {h:.3g} % against {req:.3g} %)."
                      + note,
                      value=h, limit=req, relation=">=", unit="%", extra=extra)


# --------------------------------------------- Burenkova, Wan & Fell (h', h'')
_LN10 = ln(10.0)


def _log10(x: float) -> float:
    """log10 through the core's platform-independent ln (same bits in CPython and Pyodide)."""
    return ln(x) / _LN10


def burenkova_bounds(h2: float) -> tuple[float, float]:
    """(lower, upper) bounds of h' for h'' (Burenkova 1993)."""
    lg = _log10(h2)
    return BURENKOVA["lower_a"] * lg + BURENKOVA["b"], BURENKOVA["upper_a"] * lg + BURENKOVA["b"]


def _h_ratios(curve: Curve):
    d90, d60, d15 = size_at(curve, 90.0), size_at(curve, 60.0), size_at(curve, 15.0)
    if d90 is None or d60 is None or d15 is None:
        return None
    return d90 / d60, d90 / d15


def burenkova_1993(curve: Curve) -> Check:
    """Burenkova: non-suffusive when 0.76 log10(h'') + 1 < h' < 1.86 log10(h'') + 1,
    h' = d90/d60, h'' = d90/d15."""
    hr = _h_ratios(curve)
    if hr is None:
        return make_check("stability.burenkova", NEEDS_DATA,
                          "Burenkova needs D15, D60 and D90 inside the measured curve.", unit="-")
    h1, h2 = hr
    lower, upper = burenkova_bounds(h2)
    extra = {"h_prime": h1, "h_double_prime": h2, "lower": lower, "upper": upper}
    if h1 <= lower:
        return make_check("stability.burenkova", FAIL,
                          f"Burenkova: h' = {h1:.4g} is not above the lower bound {lower:.4g}: suffusive.",
                          value=h1, limit=lower, relation=">", unit="-", extra=extra)
    if h1 >= upper:
        return make_check("stability.burenkova", FAIL,
                          f"Burenkova: h' = {h1:.4g} is not below the upper bound {upper:.4g}: suffusive.",
                          value=h1, limit=upper, relation="<", unit="-", extra=extra)
    nearer, rel = (lower, ">") if h1 - lower <= upper - h1 else (upper, "<")
    return make_check("stability.burenkova", PASS,
                      f"Burenkova: h' = {h1:.4g} lies between {lower:.4g} and {upper:.4g}: non-suffusive.",
                      value=h1, limit=nearer, relation=rel, unit="-", extra=extra)


def wan_fell_probability(h1: float, h2: float) -> float:
    """P(unstable) = e^Z / (1 + e^Z), Z = 2.378 log10(h'') - 3.648 h' + 3.701 (Wan & Fell 2008)."""
    z = WAN_FELL["a"] * _log10(h2) + WAN_FELL["b"] * h1 + WAN_FELL["c"]
    return 1.0 / (1.0 + exp(-z)) if z >= 0 else exp(z) / (1.0 + exp(z))


def wan_fell_2008(curve: Curve) -> tuple[Check, list[Finding]]:
    """Wan & Fell probability of internal instability; warns at P >= 0.5 (cut-off ours).

    Domain (from memory): the regression was fitted on broadly graded silt-sand-gravel and
    clay-silt-sand-gravel soils, not gap-graded. A sample with at most 5 % fines lies outside it: the
    check is ``not_applicable`` there (the probability is still given in the message), except that a
    probability of 0.5 or more still warns, with the caveat, so that no flag is dropped."""
    findings: list[Finding] = []
    hr = _h_ratios(curve)
    if hr is None:
        return make_check("stability.wan_fell", NEEDS_DATA,
                          "Wan & Fell needs D15, D60 and D90 inside the measured curve.", unit="-"), findings
    h1, h2 = hr
    p = wan_fell_probability(h1, h2)
    fines = passing_at(curve, NO_200_MM)
    outside = fines is None or fines <= MATERIAL["fines_max_pct"]
    extra = {"h_prime": h1, "h_double_prime": h2, "cutoff_source": "ours, no source", "probability": p,
             "outside_calibration": outside}
    st = PASS if p < WAN_FELL_CUTOFF else WARN
    msg = (f"Wan & Fell: probability of internal instability {p:.3g} "
           + ("(below 0.5)." if st == PASS else "(0.5 or more: more likely unstable than not)."))
    if outside:
        why = ("the fines content is unknown" if fines is None else
               f"this sample has {fines:.3g} % fines")
        caveat = (f" The method was fitted on broadly graded silt-sand-gravel soils and {why}, so the sample is "
                  "outside its calibration")
        if st == PASS:
            st = NOT_APPLICABLE
            msg = (f"Wan & Fell not evaluated: it was fitted on broadly graded silt-sand-gravel soils and {why} "
                   f"(outside its calibration; its formula would give a probability of {p:.3g}).")
        else:
            msg += caveat + "; the flag is indicative."
    return make_check("stability.wan_fell", st, msg, value=p, limit=WAN_FELL_CUTOFF, relation="<", unit="-",
                      extra=extra), findings


# ------------------------------------------------------------ Istomina 1957
def istomina_1957(curve: Curve) -> Check:
    """Istomina: Cu <= 10 stable, 10 < Cu <= 20 transitional (warn), Cu > 20 unstable."""
    d60, d10 = size_at(curve, 60.0), size_at(curve, 10.0)
    cu = coefficient_of_uniformity(d60, d10)
    lim_s, lim_t = ISTOMINA["stable_max"], ISTOMINA["transition_max"]
    if cu is None:
        finest_mm, finest_pct = curve.points[-1]
        if d60 is not None and finest_pct > 10.0 and d60 / finest_mm > lim_t:
            low = d60 / finest_mm
            return make_check("stability.istomina", FAIL,
                              f"Istomina: Cu is at least {low:.3g} (D10 lies below the finest sieve), above "
                              f"{lim_t:g}: unstable.", value=low, limit=lim_t, relation="<=", unit="-",
                              extra={"cu_is_lower_bound": True})
        return make_check("stability.istomina", NEEDS_DATA, "Istomina needs D10 and D60 inside the measured curve.",
                          limit=lim_s, relation="<=", unit="-")
    if cu <= lim_s:
        return make_check("stability.istomina", PASS, f"Istomina: Cu = {cu:.3g} <= {lim_s:g}: stable.", value=cu,
                          limit=lim_s, relation="<=", unit="-")
    if cu <= lim_t:
        return make_check("stability.istomina", WARN,
                          f"Istomina: Cu = {cu:.3g} is between {lim_s:g} and {lim_t:g}: transitional.", value=cu,
                          limit=lim_s, relation="<=", unit="-")
    return make_check("stability.istomina", FAIL, f"Istomina: Cu = {cu:.3g} > {lim_t:g}: unstable.", value=cu,
                      limit=lim_t, relation="<=", unit="-")


def stability_checks(curve: Curve, kenney_lau_boundary: float = 1.0) -> tuple[list[Check], list[Finding]]:
    """All internal-stability methods, each its own check, each within its domain (:func:`fines_domain`)."""
    fines = passing_at(curve, NO_200_MM)
    wf, findings = wan_fell_2008(curve)
    dom = fines_domain(fines)
    scan = hf_scan_of(curve, NO_200_MM if dom is not None else None)    # one scan for both H/F methods
    return [kezdi_1979(curve, fines if dom is not None else None),
            kenney_lau(curve, kenney_lau_boundary, scan=scan, fines_pct=fines),
            li_fannin_2008(curve, scan=scan, fines_pct=fines),
            burenkova_1993(curve), wf, istomina_1957(curve)], findings
