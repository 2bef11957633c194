"""The exact breakpoint scans of Kenney & Lau, Li & Fannin and Kezdi against a very fine brute-force grid,
on curves that hypothesis invents.

The scans read the piecewise log-linear curve only at its breakpoints (``tamis.criteria.stability``): between
two breakpoints H/F is monotone, H - min(F, 15) is linear and the log of Kezdi's ratio is linear, so the
extreme lies at a breakpoint. Here an independent numpy implementation of each rule (log-linear interpolation
by ``numpy.interp``, the rule evaluated at every point of a grid of ``GRID`` points, uniform in ln d for the
H/F methods and in the split percentage for Kezdi) checks two things on every invented curve:

1. the exact scan is never less extreme than the grid: no grid point has a smaller (H/F), a smaller
   H - min(F, 15) or a larger D'15c / d'85f than the scan reports (up to ``NOISE`` for binary rounding), so a
   scan can only be more exact than a grid, never miss an extreme that the grid finds;
2. the grid converges to the scan: its extreme lies within ``TOL`` of the scan's (the grid's spacing is
   what stands between them), so the scan's extreme is a value of the curve, not an artefact.

The rules (from memory, see docs/criteria.md): Kenney & Lau (1985) CGJ 22(2) and reply (1986) CGJ 23,
(H/F)min over F <= 20 % (Cu > 3) or 30 %; Li & Fannin (2008) CGJ 45:1303-1309, H >= F for F < 15 %, H >= 15 %
above; Kezdi (1979) Soil Physics, split curve D'15c / d'85f over the splits read on measured material
(docs/decisions.md D5). The curves are invented, for the test only.
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as s

from tamis.criteria import stability as st
from tamis.lab.curve import make_curve, size_at

#: Points of the brute-force grid.
GRID = 100_001
#: Binary rounding allowed between the core's ln/exp and numpy's (relative).
NOISE = 1e-9
#: How close the grid's extreme must come to the exact one (relative, or absolute on a margin in %).
TOL = 2e-3


@s.composite
def curves(draw):
    """A sieve curve of 3-10 points, coarsest first: sizes falling by a factor 1.3-3 per sieve, passing
    falling by 0-40 points per sieve (flat steps included), the top at 100 % or below, the bottom at 0 % or
    above."""
    n = draw(s.integers(3, 10))
    d = draw(s.floats(2.0, 100.0))
    top = draw(s.sampled_from([100.0, 100.0, draw(s.floats(60.0, 99.9))]))
    pts, p = [], top
    for i in range(n):
        pts.append((d, round(p, 1)))
        d /= draw(s.floats(1.3, 3.0))
        p = max(0.0, p - draw(s.sampled_from([0.0, draw(s.floats(0.5, 40.0))])))
    return pts


def _interp(points, x_log):
    xs = np.log([q[0] for q in points][::-1])
    ys = np.array([q[1] for q in points][::-1], dtype=float)
    return np.interp(x_log, xs, ys)


def _grid_hf(points, f_max):
    """(F, H) on the grid of d over the scan's F range (F > 0, F <= f_max, P(4d) known)."""
    c = make_curve(points)
    d_lo = c.finest_mm
    if c.points[-1][1] <= 0.0:
        d_lo = size_at(c, 0.0)
    d_hi = size_at(c, f_max)
    d_hi = c.coarsest_mm if d_hi is None else d_hi
    ln_d = np.linspace(math.log(d_lo), math.log(d_hi), GRID)
    f = _interp(points, ln_d)
    top_d, top_p = points[0]
    above = ln_d + math.log(4.0) > math.log(top_d)
    p4 = np.where(above, 100.0 if top_p >= 100.0 else np.nan, _interp(points, ln_d + math.log(4.0)))
    ok = (f > 0.0) & (f <= f_max + 1e-9) & ~np.isnan(p4)
    return f[ok], (p4 - f)[ok]


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(curves())
def test_kenney_lau_and_li_fannin_scans_are_exact(points):
    c = make_curve(points)
    kl = st.kenney_lau(c, 1.0)
    lf = st.li_fannin_2008(c)
    if kl.status == "needs_data" and kl.value is None:
        return                                          # nothing scanned: no extreme to compare
    f, h = _grid_hf(points, kl.extra["f_max_pct"])
    if f.size == 0:
        return
    # Kenney & Lau: min H/F
    grid_kl = float(np.min(h / f))
    assert kl.value <= grid_kl + NOISE * max(1.0, abs(grid_kl)), (kl.value, grid_kl)
    assert grid_kl - kl.value <= TOL * max(1.0, abs(kl.value)), (kl.value, grid_kl)
    # the reported point lies on the curve: H and F there give the reported ratio
    assert kl.value == kl.extra["h_pct"] / kl.extra["f_pct"]
    # Li & Fannin: min H - min(F, 15) [% points]. Between two breakpoints the margin is linear in ln d. On the
    # interval where F falls to 0 at the fine end it tends to H = P(4 d0) >= 0 there, a limit that F = 0 (outside
    # the method's F > 0) does not attain and that can never fail the rule; the scan reads the points it can
    # attain (docs/decisions.md D23). So: the verdict equals the grid's everywhere, and the value is the
    # grid's minimum over the F the scan reads (from its finest sample up).
    margin = lf.value - lf.limit
    m = h - np.minimum(f, 15.0)
    grid_fails = bool(np.any(m < -NOISE * 100.0))
    assert (lf.status == "fail") == grid_fails or abs(float(np.min(m))) <= TOL * 100.0, (lf.status, float(np.min(m)))
    _, f_lo, h_lo = min(st.hf_scan_of(c)[2], key=lambda s: s[1])     # the finest sample the scan reads
    read = f >= f_lo * (1.0 - 1e-12)
    if read.any():                                      # (the scan may read one point the grid steps over)
        grid_lf = float(np.min(m[read]))
        assert margin <= grid_lf + NOISE * 100.0, (margin, grid_lf)
        assert grid_lf - margin <= TOL * 100.0, (margin, grid_lf)
    below = m[~read]
    # the unread fine end lies between its limit (>= 0) and the finest sample's margin: never tighter than both
    assert below.size == 0 or float(np.min(below)) >= min(0.0, h_lo - min(f_lo, 15.0)) - NOISE * 100.0


def _ln_size(points, pct):
    """ln of the size at each percentage of ``pct``, by the D-value rule: the first pair of points, coarse to
    fine, that brackets it and is not flat (so the curve of size against percent jumps at a flat step: below
    the step it ends at the step's finest point, from the step up it starts at its coarsest)."""
    segs = sorted((p_s, p_l, math.log(d_s), math.log(d_l))
                  for (d_l, p_l), (d_s, p_s) in zip(points, points[1:]) if p_l != p_s)
    lo = np.array([g[0] for g in segs])
    j = np.clip(np.searchsorted(lo, pct, side="right") - 1, 0, len(segs) - 1)
    p_s, p_l, l_s, l_l = (np.array([g[k] for g in segs])[j] for k in range(4))
    return l_s + (pct - p_s) / (p_l - p_s) * (l_l - l_s)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(curves())
def test_kezdi_scan_is_exact(points):
    c = make_curve(points)
    kz = st.kezdi_1979(c)
    if kz.value is None:
        return                                          # the curve is too short for any split
    p_min, p_max = points[-1][1], points[0][1]
    inner = [p for _, p in points if 0.0 < p < 100.0]
    p_top = max(inner) if (inner and p_max >= 100.0) else p_max
    p_bot = min(inner) if (inner and p_min <= 0.0) else p_min
    lo, hi = max(p_bot / 0.85, 1e-9), min((p_top - 15.0) / 0.85, 100.0 - 1e-9)
    ps = np.linspace(lo, hi, GRID)
    dc = _ln_size(points, ps + 0.15 * (100.0 - ps))
    df = _ln_size(points, 0.85 * ps)
    grid = float(np.max(np.exp(dc - df)))
    assert grid <= kz.value * (1.0 + 1e-6), (kz.value, grid)     # ps +- 1e-7 reads a jump's one-sided limit
    assert kz.value - grid <= TOL * kz.value, (kz.value, grid)
