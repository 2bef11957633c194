"""Terzaghi filter ratios (Terzaghi & Peck, Soil Mechanics in Engineering
Practice, 1948 and later editions; from memory).

Retention: D15F / D85B <= R; permeability: D15F / D15B >= R, with R between 4
and 5 (``rules.terzaghi_ratio``, default 4). Both read on the curves as given,
without regrading.
"""

from __future__ import annotations


def terzaghi_d15f_max_mm(d85b_mm: float, ratio: float) -> float:
    """Maximum D15F [mm] = ratio x D85B [mm]."""
    return ratio * d85b_mm


def terzaghi_d15f_min_mm(d15b_mm: float, ratio: float) -> float:
    """Minimum D15F [mm] = ratio x D15B [mm]."""
    return ratio * d15b_mm
