"""Thresholds of the lab QA checks (``qa.*`` in :mod:`tamis.registry`), as plain data.

:mod:`tamis.lab.sieve_analysis` reads its numbers from here and nowhere else
(the rule in DEVELOPERS.md). Each number says where it comes from.
"""

from __future__ import annotations

#: ASTM C136 §8.7 (C136/C136M-14 checklist item 9, read): the mass after sieving
#: must agree with the mass put on the sieves within 0.3 % of the original dry mass.
MASS_BALANCE_LIMIT_PCT = 0.3

#: ASTM C136/C136M-19 §8.3 (read): 7 kg/m2 of sieving surface below 4.75 mm.
OVERLOAD_FINE_KG_PER_M2 = 7.0
#: ... and 2.5 x opening [mm] x effective sieving area [m2] kg at and above 4.75 mm.
OVERLOAD_COARSE_FACTOR = 2.5

#: Sieve frames: id -> (description, effective sieving area [m2], from memory).
#: The 203 and 305 mm areas reproduce the 200 g and 469 g of the C136-14
#: checklist item 7 (read), which supports them.
FRAMES: dict[str, tuple[str, float]] = {
    "203": ("203 mm (8 in) round", 0.0285),
    "254": ("254 mm (10 in) round", 0.0457),
    "305": ("305 mm (12 in) round", 0.0670),
    "350x350": ("350 x 350 mm rectangular", 0.1225),
    "372x580": ("372 x 580 mm rectangular", 0.2158),
}
DEFAULT_FRAME = "203"

#: Minimum dry test-sample mass [g] by largest particle [mm], ASTM C136
#: (fine aggregate 300 g; coarse aggregate by nominal maximum size). From memory.
SPECIMEN_MIN_G: tuple[tuple[float, float], ...] = (
    (4.75, 300.0), (9.5, 1000.0), (12.5, 2000.0), (19.0, 5000.0), (25.0, 10000.0), (37.5, 15000.0),
    (50.0, 20000.0), (63.0, 35000.0), (75.0, 60000.0), (90.0, 100000.0), (100.0, 150000.0),
    (125.0, 300000.0),
)
#: Nominal maximum size: one sieve larger than the first sieve to retain more
#: than 10 % (WAQTC FOP for AASHTO T 2, Oct 2014, read).
NMS_RETAINED_PCT = 10.0
