"""A gradation curve: percent passing against particle size.

The curve is a list of measured points (sieve opening [mm], percent passing
[%]). Between points it is read by log-linear interpolation: linear in
percent, logarithmic in size, which is the straight line between two points on
the usual semi-log gradation chart. Outside the measured points nothing is
extrapolated: a D-value that the points do not bracket is ``None``.

References
----------
- D-value interpolation on the semi-log plot: common practice (see
  ``docs/methods.md``); the formula is
  ``D_x = d_s * (d_l / d_s) ** ((x - P_s) / (P_l - P_s))``.
- Cu = D60/D10 and Cc = D30**2 / (D10 * D60): ASTM D2487 (coefficient of
  uniformity and of curvature).
- Gravel / sand / fines limits 75 mm, 4.75 mm, 0.075 mm: ASTM D2487 (USCS).
- Fineness modulus: ASTM C125 (definition of terms), the sum of cumulative
  percentages retained on 150 um, 300 um, 600 um, 1.18, 2.36, 4.75, 9.5, 19.0,
  37.5, 75 and 150 mm, divided by 100.
"""

from __future__ import annotations

import math
from bisect import bisect_left, bisect_right
from dataclasses import dataclass
from functools import cached_property

from ..errors import InputError, join

#: Relative tolerance for treating two openings as the same sieve.
SAME_SIEVE_RTOL = 1e-6

#: D-values reported by default [%].
STANDARD_D_PCTS = (5, 10, 15, 20, 30, 50, 60, 85, 90, 95)

#: Size limits of the USCS fractions [mm] (ASTM D2487).
COBBLE_MM = 75.0
GRAVEL_SAND_MM = 4.75
SAND_FINES_MM = 0.075

#: ASTM C125 sieves for the fineness modulus [mm].
FM_SIEVES_MM = (150.0, 75.0, 37.5, 19.0, 9.5, 4.75, 2.36, 1.18, 0.6, 0.3, 0.15)


# --- Logarithm and exponential from IEEE-754 basic operations only ---------
# The platform's libm (glibc under CPython, musl/emscripten under Pyodide) may
# differ in the last bit of log and exp, which would make the browser and the
# office disagree in the 16th digit of a D-value. These two functions use only
# +, -, *, / and the exact frexp/ldexp, which every IEEE-754 engine evaluates
# identically, so both engines return the same bits. Accuracy: a few units in
# the last place (tested against math.log and math.exp).

_LN2_HI = 6.93147180369123816490e-01   # high part of ln 2 (exact in 32 bits)
_LN2_LO = 1.90821492927058770002e-10   # ln 2 - _LN2_HI
_SQRT_HALF = 0.70710678118654752440
_ATANH_COEFFS = tuple(1.0 / (2 * k + 1) for k in range(1, 13))
_EXP_COEFFS = tuple(1.0 / math.factorial(n) for n in range(18))


# The polynomials are written out (Horner form, same order of operations as a
# loop ``acc = acc * r + c`` from the highest coefficient): the same bits, with
# no loop overhead.
(_A1, _A2, _A3, _A4, _A5, _A6, _A7, _A8, _A9, _A10, _A11, _A12) = _ATANH_COEFFS
(_E0, _E1, _E2, _E3, _E4, _E5, _E6, _E7, _E8, _E9, _E10, _E11, _E12, _E13, _E14, _E15, _E16,
 _E17) = _EXP_COEFFS
_LN2 = _LN2_HI + _LN2_LO


def _ln_parts(x: float) -> tuple[int, float, float]:
    """``(e, 2 s, 2 s poly)`` with ln x = (e ln2_hi + 2 s) + (2 s poly + e ln2_lo)."""
    m, e = math.frexp(x)            # x = m * 2**e, 0.5 <= m < 1, exact
    if m < _SQRT_HALF:
        m, e = m * 2.0, e - 1       # m in [sqrt(1/2), sqrt(2)), exact
    s = (m - 1.0) / (m + 1.0)       # ln m = 2 atanh s, |s| < 0.172
    z = s * s
    # poly = s2 (1/3 + s2 (1/5 + ... + s2 (1/25)))
    poly = (((((((((((_A12 * z + _A11) * z + _A10) * z + _A9) * z + _A8) * z + _A7) * z + _A6) * z + _A5) * z
                 + _A4) * z + _A3) * z + _A2) * z + _A1) * z
    two_s = 2.0 * s
    return e, two_s, two_s * poly


def ln(x: float) -> float:
    """Natural logarithm of ``x`` > 0, platform-independent to the last bit."""
    e, two_s, tail = _ln_parts(x)
    return (e * _LN2_HI + two_s) + (tail + e * _LN2_LO)


def ln_and_ln4(x: float) -> tuple[float, float]:
    """``(ln(x), ln(4.0 * x))`` with the bits of :func:`ln`, for half the work:
    4x has the mantissa of x and an exponent 2 higher (exact in binary)."""
    if not math.isfinite(4.0 * x):
        return ln(x), ln(4.0 * x)
    e, two_s, tail = _ln_parts(x)
    e4 = e + 2
    return (e * _LN2_HI + two_s) + (tail + e * _LN2_LO), (e4 * _LN2_HI + two_s) + (tail + e4 * _LN2_LO)


def exp(y: float) -> float:
    """Exponential of ``y`` (|y| < 700), platform-independent to the last bit."""
    k = round(y / _LN2)                     # an int
    r = (y - k * _LN2_HI) - k * _LN2_LO     # |r| <= ~0.347
    acc = ((((((((((((((((_E17 * r + _E16) * r + _E15) * r + _E14) * r + _E13) * r + _E12) * r + _E11) * r
                     + _E10) * r + _E9) * r + _E8) * r + _E7) * r + _E6) * r + _E5) * r + _E4) * r + _E3) * r
            + _E2) * r + _E1) * r + _E0
    return math.ldexp(acc, k)


def same_size(a_mm: float, b_mm: float) -> bool:
    """True when two openings [mm] denote the same sieve."""
    return abs(a_mm - b_mm) <= SAME_SIEVE_RTOL * (a_mm if a_mm > b_mm else b_mm)


@dataclass(frozen=True)
class Curve:
    """Measured points of a gradation, coarsest first.

    Attributes
    ----------
    points : tuple of (opening_mm, passing_pct)
        Sieve opening [mm], strictly decreasing; percent passing [%],
        non-increasing along the tuple (it never rises as sizes fall).
    """

    points: tuple[tuple[float, float], ...]

    @property
    def coarsest_mm(self) -> float:
        return self.points[0][0]

    @property
    def finest_mm(self) -> float:
        return self.points[-1][0]

    def to_points(self) -> list[dict]:
        return [{"opening_mm": d, "passing_pct": p} for d, p in self.points]

    @cached_property
    def log_sizes(self) -> tuple[float, ...]:
        """ln(opening_mm) of each point, computed once (:func:`ln`)."""
        return tuple(ln(d) for d, _ in self.points)

    @cached_property
    def _sizes_read(self) -> dict:
        """Sizes already read by :func:`size_at` on this curve, by percent (a curve never changes, and the
        D-values of one request are read by several checks)."""
        return {}

    @cached_property
    def _neg_pcts(self) -> tuple[float, ...]:
        """-passing_pct of each point (non-decreasing, for :mod:`bisect` in :func:`size_at`)."""
        return tuple(-p for _, p in self.points)

    @cached_property
    def _neg_sizes(self) -> tuple[float, ...] | None:
        """-opening_mm of each point (increasing, for :func:`bisect.bisect_right`),
        or ``None`` when two neighbouring points are not distinct sieves
        (:func:`same_size`) and a reader must scan every point instead."""
        pts = self.points
        for (d1, _), (d2, _) in zip(pts, pts[1:]):
            if not d1 > d2 or same_size(d1, d2):
                return None
        return tuple(-d for d, _ in pts)

    def index_at(self, size_mm: float) -> tuple[int, bool]:
        """``(k, on_point)`` for the first point k, coarse to fine, that is the
        same sieve as ``size_mm`` (``on_point`` True) or finer than it (False);
        ``k == len(points)`` when every point is coarser than ``size_mm``.

        Same answer as scanning the points in order. On curves whose
        neighbouring points are distinct sieves (every curve made by
        :func:`make_curve`) only the two points either side of ``size_mm``
        need to be compared: a coarser point that is the same sieve as
        ``size_mm`` would also be the same sieve as every point between them.
        """
        pts = self.points
        neg = self._neg_sizes
        if neg is None:
            for k, (d, _) in enumerate(pts):
                if same_size(size_mm, d):
                    return k, True
                if size_mm > d:
                    return k, False
            return len(pts), False
        j = bisect_right(neg, -size_mm)     # first point finer than size_mm (opening < size_mm)
        # same_size() written out (this is the inner loop of the stability scans)
        if j > 0:
            d = pts[j - 1][0]               # d >= size_mm
            if d - size_mm <= SAME_SIEVE_RTOL * d:
                return j - 1, True
        if j < len(pts):
            d = pts[j][0]                   # d < size_mm
            if size_mm - d <= SAME_SIEVE_RTOL * size_mm:
                return j, True
        return j, False


def make_curve(points, path: str = "passing", field_of=None) -> Curve:
    """Build a :class:`Curve` from ``(opening_mm, passing_pct)`` pairs in any order.

    Parameters
    ----------
    points : iterable of (float, float)
        Opening [mm] > 0 and percent passing [%] in 0..100, in entry order.
    path : str
        Field path of the list, used in error messages (``passing[2].opening_mm``).
    field_of : callable, optional
        ``field_of(i, "opening_mm" | "passing_pct" | "")`` -> the field path of
        point ``i`` when the points do not come from one list (e.g. D-values
        beside sieve points); by default ``path[i].name``.

    Raises
    ------
    InputError
        Fewer than two points, a non-positive opening, a percentage outside
        0..100, two points at the same opening, or a percentage that rises as
        sizes fall.
    """
    if field_of is None:
        def field_of(i: int, name: str) -> str:
            return join(join(path, i), name) if name else join(path, i)
    pts = [(float(d), float(p), i) for i, (d, p) in enumerate(points)]
    if len(pts) < 2:
        raise InputError("too_few_points", f"{path} needs at least two sieves to make a curve.", path)
    for d, p, i in pts:
        if not (math.isfinite(d) and d > 0):
            f = field_of(i, "opening_mm")
            raise InputError("bad_opening", f"{f} must be a positive size in mm.", f)
        if not (math.isfinite(p) and 0.0 <= p <= 100.0):
            f = field_of(i, "passing_pct")
            raise InputError("passing_out_of_range", f"{f} must lie between 0 and 100 %, got {p:g}.", f)
    pts.sort(key=lambda t: -t[0])
    for (d1, p1, i1), (d2, p2, i2) in zip(pts, pts[1:]):
        if same_size(d1, d2):
            f = field_of(i2, "opening_mm")
            raise InputError("duplicate_opening",
                             f"{f} repeats the opening {d2:g} mm of {field_of(i1, '')}.", f)
        if p2 > p1:
            f = field_of(i2, "passing_pct")
            raise InputError("passing_rises",
                             f"{f} = {p2:g} % at {d2:g} mm is more than {p1:g} % at the coarser {d1:g} mm; "
                             "percent passing cannot rise as sizes fall.", f)
    return Curve(tuple((d, p) for d, p, _ in pts))


def size_at(curve: Curve, pct: float) -> float | None:
    """Particle size [mm] at ``pct`` percent passing (D-value), or ``None``.

    Scans from coarse to fine and uses the first pair of adjacent points that
    brackets ``pct``, skipping flat segments. So D100 is the finest sieve that
    still passes 100 %. Returns ``None`` when ``pct`` lies above the coarsest
    or below the finest measured percentage: never extrapolated.

    Parameters
    ----------
    curve : Curve
    pct : float
        Percent passing [%], 0..100.

    Returns
    -------
    float or None
        Size [mm].

    Examples
    --------
    >>> c = make_curve([(2.0, 80.0), (0.2, 20.0)])
    >>> round(size_at(c, 50.0), 6)   # geometric mean of 2.0 and 0.2
    0.632456
    """
    read = curve._sizes_read
    if pct in read:
        return read[pct]
    size = read[pct] = _size_at(curve, pct)
    return size


def _size_at(curve: Curve, pct: float) -> float | None:
    """:func:`size_at`, computed."""
    pts = curve.points
    neg = curve._neg_pcts
    # The first pair (k-1, k), coarse to fine, with p_k <= pct <= p_(k-1) and p_k != p_(k-1) is found by
    # bisection on the non-increasing percentages: k is the first point with p_k <= pct (then
    # p_(k-1) > pct), or, when even the coarsest point has p_0 <= pct, the end of the run of points at
    # exactly pct (no earlier k qualifies). Same answer as scanning the pairs in order.
    k = bisect_left(neg, -pct)              # first point with p_k <= pct
    if k == 0:
        if pts and pts[0][1] == pct:
            j = bisect_right(neg, -pct)     # first point with p_j < pct
            return pts[j - 1][0]            # the finest point of the run at pct (the last one if all are)
        return None
    if k == len(pts):
        return None
    p_l, p_s = pts[k - 1][1], pts[k][1]
    if pct == p_s:
        return pts[k][0]
    logs = curve.log_sizes
    t = (pct - p_s) / (p_l - p_s)
    return exp(logs[k] + t * (logs[k - 1] - logs[k]))


def ln_size_at(curve: Curve, pct: float) -> float | None:
    """ln of the size at ``pct`` for comparing D-values, or ``None`` where :func:`size_at` is ``None``.

    The same bisection as :func:`size_at` without the exponential: ``ln(point)`` (:attr:`Curve.log_sizes`)
    where the size is a measured point, else the argument :func:`size_at` gives :func:`exp`. So it is
    within a few units in the last place of ln(size_at(curve, pct)), never the same bits: for ordering and
    comparing only, never for a reported figure."""
    neg = curve._neg_pcts
    k = bisect_left(neg, -pct)
    pts = curve.points
    logs = curve.log_sizes
    if k == 0:
        if pts and pts[0][1] == pct:
            return logs[bisect_right(neg, -pct) - 1]
        return None
    if k == len(pts):
        return None
    p_l, p_s = pts[k - 1][1], pts[k][1]
    if pct == p_s:
        return logs[k]
    return logs[k] + (pct - p_s) / (p_l - p_s) * (logs[k - 1] - logs[k])


def ln_sizes_at(curve: Curve, pcts) -> list[float | None]:
    """``[ln_size_at(curve, p) for p in pcts]``, the same values, in one sweep along the points instead of a
    bisection each: O(n + m) when ``pcts`` is sorted (any order gives the same answer)."""
    pts = curve.points
    logs = curve.log_sizes
    n = len(pts)
    out = []
    k = n                                   # the number of points with p > pct, kept up to date
    for pct in pcts:
        while k > 0 and pts[k - 1][1] <= pct:
            k -= 1
        while k < n and pts[k][1] > pct:
            k += 1
        if k == 0:
            out.append(ln_size_at(curve, pct) if pts[0][1] == pct else None)
        elif k == n:
            out.append(None)
        else:
            p_l, p_s = pts[k - 1][1], pts[k][1]
            out.append(logs[k] if pct == p_s else logs[k] + (pct - p_s) / (p_l - p_s) * (logs[k - 1] - logs[k]))
    return out


def passing_at(curve: Curve, size_mm: float, ln_size: float | None = None) -> float | None:
    """Percent passing [%] at ``size_mm`` [mm], log-linear between points.

    Above the coarsest sieve the answer is 100 % only if that sieve already
    passes 100 %; below the finest it is 0 % only if that sieve passes 0 %.
    Otherwise the size lies outside the measured range and the answer is
    ``None``. ``ln_size``: ``ln(size_mm)`` (:func:`ln`) when the caller has
    it already; the answer is the same.
    """
    if size_mm <= 0 or not math.isfinite(size_mm):
        return None
    pts = curve.points
    k, on_point = curve.index_at(size_mm)
    if on_point:
        return pts[k][1]
    if k == 0:
        return 100.0 if pts[0][1] >= 100.0 else None
    if k == len(pts):
        return 0.0 if pts[-1][1] <= 0.0 else None
    p_s = pts[k][1]
    logs = curve.log_sizes
    t = ((ln(size_mm) if ln_size is None else ln_size) - logs[k]) / (logs[k - 1] - logs[k])
    return p_s + t * (pts[k - 1][1] - p_s)


def d_values(curve: Curve, pcts=STANDARD_D_PCTS) -> dict[str, float | None]:
    """``{"D10": size_mm or None, ...}`` for each percentage in ``pcts``."""
    names = STANDARD_D_NAMES if pcts is STANDARD_D_PCTS else d_names(pcts)
    return {name: size_at(curve, p) for name, p in names}


def d_names(pcts) -> tuple[tuple[str, float], ...]:
    """``(("D5", 5.0), ...)``: the key :func:`d_values` gives each percentage of ``pcts``, and the percentage."""
    return tuple((f"D{p:g}", float(p)) for p in pcts)


#: :func:`d_names` of :data:`STANDARD_D_PCTS`.
STANDARD_D_NAMES = d_names(STANDARD_D_PCTS)


def coefficient_of_uniformity(d60_mm: float | None, d10_mm: float | None) -> float | None:
    """Cu = D60 / D10 [-] (ASTM D2487); ``None`` when either is unknown."""
    if d60_mm is None or d10_mm is None or d10_mm <= 0:
        return None
    return d60_mm / d10_mm


def coefficient_of_curvature(d30_mm: float | None, d10_mm: float | None,
                             d60_mm: float | None) -> float | None:
    """Cc = D30**2 / (D10 * D60) [-] (ASTM D2487); ``None`` when any is unknown."""
    if d30_mm is None or d10_mm is None or d60_mm is None or d10_mm <= 0 or d60_mm <= 0:
        return None
    return d30_mm * d30_mm / (d10_mm * d60_mm)


@dataclass(frozen=True)
class Fractions:
    """Mass fractions of the whole sample [%] (ASTM D2487 size limits).

    Each is ``None`` when the curve does not reach the size limit it needs.
    """

    cobbles_pct: float | None
    gravel_pct: float | None
    sand_pct: float | None
    fines_pct: float | None


def fractions(curve: Curve) -> Fractions:
    """Cobbles (> 75 mm), gravel (75-4.75 mm), sand (4.75-0.075 mm) and fines
    (< 0.075 mm) as percent of the whole sample [%]."""
    p75 = passing_at(curve, COBBLE_MM)
    p475 = passing_at(curve, GRAVEL_SAND_MM)
    p0075 = passing_at(curve, SAND_FINES_MM)
    cobbles = None if p75 is None else 100.0 - p75
    gravel = None if (p75 is None or p475 is None) else p75 - p475
    sand = None if (p475 is None or p0075 is None) else p475 - p0075
    return Fractions(cobbles, gravel, sand, p0075)


@dataclass(frozen=True)
class Regraded:
    """A curve regraded on one sieve: sizes above it removed, the rest scaled.

    Attributes
    ----------
    curve : Curve
        Regraded points; the regrading sieve passes 100 %.
    on_mm : float
        Regrading sieve [mm].
    factor : float
        Correction factor CF = 100 / P(on_mm) [-].
    passing_on_pct : float
        P(on_mm) of the original curve [%].
    """

    curve: Curve
    on_mm: float
    factor: float
    passing_on_pct: float


def regrade(curve: Curve, on_mm: float = GRAVEL_SAND_MM) -> Regraded | None:
    """Regrade ``curve`` on the ``on_mm`` sieve: drop coarser sizes and scale
    P'(d) = P(d) * 100 / P(on_mm) for d <= on_mm.

    Returns ``None`` when P(on_mm) is unknown (the sieve lies outside the
    measured range) or zero (nothing passes it, so nothing is left to regrade).
    If ``on_mm`` is not one of the measured sieves its percentage is read from
    the curve by the same log-linear interpolation.

    References
    ----------
    Regrading on the No. 4 (4.75 mm) sieve before the base-soil category is
    found: USDA NRCS NEH Part 633 Ch. 26 (1994), design step 3 (from memory;
    see ``docs/criteria.md`` for provenance).
    """
    p_on = passing_at(curve, on_mm)
    if p_on is None or p_on <= 0.0:
        return None
    cf = 100.0 / p_on
    pts = [(on_mm, 100.0)]
    for d, p in curve.points:
        if d < on_mm and not same_size(d, on_mm):
            # p <= p_on on a valid curve; min() only absorbs float rounding of p * cf.
            pts.append((d, min(100.0, p * cf)))
    if len(pts) < 2:
        return None
    return Regraded(Curve(tuple(pts)), on_mm, cf, p_on)


def fineness_modulus(curve: Curve) -> float | None:
    """Fineness modulus [-] per ASTM C125: the sum of the cumulative percentages
    retained on the C125 sieves (150 um to 150 mm), divided by 100.

    Every C125 sieve finer than the coarsest measured sieve must have been
    measured (no interpolation: the modulus is defined on actual sieves).
    Sieves coarser than the coarsest one retain nothing only if that sieve
    passes 100 %; otherwise the modulus is ``None``.
    """
    total = 0.0
    for s in FM_SIEVES_MM:
        k, on_point = curve.index_at(s)
        hit = curve.points[k][1] if on_point else None
        if hit is None:
            if s > curve.coarsest_mm and curve.points[0][1] >= 100.0:
                hit = 100.0
            else:
                return None
        total += 100.0 - hit
    return total / 100.0
