"""Percent within limits (PWL): quality level analysis of a lot from its sample.

Given n test values of one quantity (percent passing a sieve, fines), the
sample mean and standard deviation give the quality indices

    Q_U = (USL - mean) / s,    Q_L = (mean - LSL) / s,

and the estimated percent of the lot within each limit is the standardised
beta-distribution estimator of highway acceptance practice (Lieberman and
Resnikoff 1955, the basis of the FHWA / AASHTO PWL tables):

    P_U = 100 * I_x(a, a),  a = (n - 2) / 2,  x = 1/2 + Q_U * sqrt(n) / (2 (n - 1)),

x clipped to [0, 1] (so P_U = 100 from Q_U = (n - 1)/sqrt(n) up, and 0 from
-(n - 1)/sqrt(n) down); the same with Q_L for P_L; with both limits
PWL = P_U + P_L - 100. ``I_x`` is the regularised incomplete beta function,
computed here (:func:`reg_inc_beta`) because the core is standard-library only.

Sources: FHWA Technical Advisory T 5080.12, "Specification Conformity
Analysis" (June 23, 1989), Table 1B (the Q needed for a given P_U, n = 3..),
which the tests reproduce at its printed two decimals; the estimator as coded
in jaspAcceptanceSampling (R/decideVariableLots.R). The combination
PWL = P_U + P_L - 100 is the usual statement of the two-sided case (from
memory: the FHWA or AASHTO sentence itself was not read).

This is a statistical summary of the tests, not an acceptance rule: it
decides nothing unless the project's specification makes it the rule (with
its own acceptable quality level and pay factors).
"""

from __future__ import annotations

import math

from ..checks import Finding
from ..errors import InputError, number, require_list

#: The estimator needs a = (n - 2)/2 > 0.
MIN_N = 3

_EPS = 1e-15
_TINY = 1e-300


def _beta_cf(a: float, b: float, x: float) -> float:
    """Continued fraction of the incomplete beta function (modified Lentz method)."""
    qab, qap, qam = a + b, a + 1.0, a - 1.0
    c, d = 1.0, 1.0 - qab * x / qap
    if abs(d) < _TINY:
        d = _TINY
    d = 1.0 / d
    h = d
    for m in range(1, 1000):
        m2 = 2 * m
        aa = m * (b - m) * x / ((qam + m2) * (a + m2))
        d = 1.0 + aa * d
        d = _TINY if abs(d) < _TINY else d
        c = 1.0 + aa / c
        c = _TINY if abs(c) < _TINY else c
        d = 1.0 / d
        h *= d * c
        aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2))
        d = 1.0 + aa * d
        d = _TINY if abs(d) < _TINY else d
        c = 1.0 + aa / c
        c = _TINY if abs(c) < _TINY else c
        d = 1.0 / d
        delta = d * c
        h *= delta
        if abs(delta - 1.0) < _EPS:
            return h
    raise ArithmeticError(f"incomplete beta did not converge (a={a}, b={b}, x={x})")


def reg_inc_beta(x: float, a: float, b: float) -> float:
    """Regularised incomplete beta function I_x(a, b) for 0 <= x <= 1, a, b > 0.

    The continued fraction of the incomplete beta function, evaluated by the
    modified Lentz method, on x < (a + 1)/(a + b + 2) and through
    I_x(a, b) = 1 - I_{1-x}(b, a) above (the standard method; checked against
    ``scipy.special.betainc`` in the tests).
    """
    if not (a > 0 and b > 0):
        raise ValueError("a and b must be > 0")
    if x <= 0.0:
        return 0.0
    if x >= 1.0:
        return 1.0
    ln_front = (math.lgamma(a + b) - math.lgamma(a) - math.lgamma(b)
                + a * math.log(x) + b * math.log1p(-x))
    front = math.exp(ln_front)
    if x < (a + 1.0) / (a + b + 2.0):
        return front * _beta_cf(a, b, x) / a
    return 1.0 - front * _beta_cf(b, a, 1.0 - x) / b


def percent_within_one_limit(q: float, n: int) -> float:
    """Estimated percent of the lot on the good side of one limit [%], from its quality index ``q``
    and the sample size ``n`` (>= 3): 100 * I_x((n-2)/2, (n-2)/2), x = 1/2 + q sqrt(n)/(2(n-1)), clipped."""
    if n < MIN_N:
        raise ValueError(f"n must be at least {MIN_N}")
    a = (n - 2) / 2.0
    x = 0.5 + q * math.sqrt(n) / (2.0 * (n - 1))
    x = min(1.0, max(0.0, x))
    return 100.0 * reg_inc_beta(x, a, a)


def mean_and_sd(values) -> tuple[float, float]:
    """Sample mean and standard deviation (n - 1 in the denominator) of at least two values."""
    n = len(values)
    m = math.fsum(values) / n
    var = math.fsum((v - m) ** 2 for v in values) / (n - 1)
    return m, math.sqrt(var)


def pwl(values, lower=None, upper=None) -> dict:
    """Quality level analysis of ``values`` against ``lower`` and/or ``upper`` (same unit as the values).

    Returns ``{"n", "mean", "sd", "q_lower", "q_upper", "pl_pct", "pu_pct", "pwl_pct", "note"}``, numbers
    unrounded; a quantity that cannot be estimated is None with ``note`` saying why (fewer than
    :data:`MIN_N` values; no spread, where the estimator is undefined). With one limit only, PWL is the
    percent within that limit.
    """
    vals = [float(v) for v in values]
    n = len(vals)
    out = {"n": n, "mean": None, "sd": None, "lower": lower, "upper": upper, "q_lower": None, "q_upper": None,
           "pl_pct": None, "pu_pct": None, "pwl_pct": None, "note": None}
    if lower is None and upper is None:
        out["note"] = "no limit to estimate against"
        return out
    if n >= 1:
        out["mean"] = math.fsum(vals) / n
    if n < MIN_N:
        out["note"] = f"{n} test{'s' if n != 1 else ''}: the estimator needs at least {MIN_N}"
        return out
    m, s = mean_and_sd(vals)
    out["mean"], out["sd"] = m, s
    if s == 0.0:
        out["note"] = "all values equal: no spread, the estimator is undefined"
        return out
    pl = pu = 100.0
    if lower is not None:
        out["q_lower"] = (m - lower) / s
        pl = out["pl_pct"] = percent_within_one_limit(out["q_lower"], n)
    if upper is not None:
        out["q_upper"] = (upper - m) / s
        pu = out["pu_pct"] = percent_within_one_limit(out["q_upper"], n)
    total = pu + pl - 100.0
    if total < 0.0:  # both tails estimated at more than the whole lot: said, not hidden
        out["note"] = f"P_U + P_L - 100 = {total:.3g}: the lot lies mostly outside both limits; PWL shown as 0"
        total = 0.0
    out["pwl_pct"] = total
    return out


def op_pwl(req: dict):
    """API op ``pwl``: ``{"values": [...], "lower": x?, "upper": y?}`` -> :func:`pwl` (a statistical
    summary, not an acceptance rule)."""
    row = dict(enumerate(require_list(req.get("values"), "values")))
    vals = [number(row, i, "values") for i in range(len(row))]  # finite, within the request limits
    lower = number(req, "lower", "", required=False)
    upper = number(req, "upper", "", required=False)
    if lower is not None and upper is not None and lower > upper:
        raise InputError("limits_inverted", f"lower ({lower:g}) is above upper ({upper:g}).", "lower")
    res = pwl(vals, lower, upper)
    findings = []
    if res["note"]:
        findings.append(Finding("note", "pwl_not_estimated", res["note"], "values"))
    res["notice"] = NOTICE
    return res, findings


NOTICE = ("Percent within limits is a statistical summary of the tests, not an acceptance rule, unless the "
          "project's specification makes it one.")
