"""Sedimentation (hydrometer) readings -> particle diameters and percent finer.

The test is the one of ASTM D7928-17 ("Particle-Size Distribution of
Fine-Grained Soils Using the Sedimentation (Hydrometer) Analysis"); only its
title and scope were read (75 um down to about 0.2 um, material passing the
2.0 mm or a finer sieve, combined with sieving by the general method). Its own
equations were not read, so the reduction uses the classical form that its
predecessor ASTM D422 and the textbooks print, each number tagged:

- corrected reading  R_c = R - C_c, with C_c the composite correction: the
  hydrometer's reading in the dispersant blank at the suspension temperature
  (measured per reading, one value, or interpolated in a calibration at
  temperatures);
- effective depth  L = L(R + C_m) from the hydrometer's calibration, C_m the
  meniscus correction; for a 152H without a calibration L = 16.3 - 0.1641 R
  [cm] (Das, Eq. 3.29, read; V_h = 67 cm3, cylinder area 27.8 cm2);
- Stokes' law  D = K sqrt(L / t), K = sqrt(30 eta / (980 (G_s - 1))), eta in
  poise, t in min, D in mm (the D422 K table's form: Das & Sobhan, Principles
  of Geotechnical Engineering, 9th ed., Table 2.9, read);
- the viscosity of water eta(T) from the International Critical Tables
  (1928/29) values read at 16-30 C, interpolated linearly in ln(eta);
- percent finer of the suspension: 152H  P = 100 a R_c / W with
  a = 1.65 G_s / ((G_s - 1) 2.65) (the formula from memory; it reproduces the
  printed a table, read); 151H  P = 100 000 (G_s / (G_s - 1)) (R_c - 1) / W
  (from memory, the D422 form with water of unit density);
- percent finer of the whole specimen  P_w = P x (percent passing the split
  sieve) / 100 (atechcenter hydrometer procedure, Step III, read).

Nothing is clamped: readings outside the method's limits are reduced as given
and carry a warning.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..checks import Finding
from ..errors import MASS_MAX_G, InputError, join, number, require_list, require_mapping, text

#: International Critical Tables (1928/29) viscosity of water [cP] (read).
VISCOSITY_CP = ((16.0, 1.1156), (18.0, 1.0603), (20.0, 1.0087), (22.0, 0.9608), (23.0, 0.9380),
                (24.0, 0.9161), (25.0, 0.8949), (26.0, 0.8746), (28.0, 0.8363), (30.0, 0.8004))
#: Temperatures the viscosity table covers [C]; outside them the value is
#: extrapolated from the two end points and the reading carries a warning.
TEMP_RANGE_C = (VISCOSITY_CP[0][0], VISCOSITY_CP[-1][0])
#: 152H effective depth L = L0 - S R [cm] (Das, Eq. 3.29, read).
DEPTH_152H = (16.3, 0.1641)
#: Earliest elapsed time of a reading the method schedules [min] (from memory: 1 min).
EARLIEST_MIN = 1.0
#: Stokes' range of the method [mm]: 75 um to about 0.2 um (D7928-17 scope, read).
STOKES_RANGE_MM = (0.0002, 0.075)
#: Accepted input ranges (common practice, no source: wide around any real test, so that nothing
#: overflows): specific gravity 1 < Gs <= 10; water temperature 0 to 100 C; elapsed time at most
#: 10^7 min (about 19 years).
GS_MAX = 10.0
WATER_C = (0.0, 100.0)
TIME_MAX_MIN = 1e7
#: Split sieves the method allows [mm].
SPLIT_SIEVES_MM = (2.0, 0.075)
SOURCE = "ASTM D7928-17 scope (read); reduction per D422 form, Das Eq. 3.29, ICT viscosity"


def viscosity_poise(temp_c: float) -> float:
    """Viscosity of water [poise] at ``temp_c`` (ICT 1928/29 table, ln-linear between points)."""
    t = VISCOSITY_CP
    i = 0
    while i < len(t) - 2 and temp_c > t[i + 1][0]:
        i += 1
    (t1, v1), (t2, v2) = t[i], t[i + 1]
    f = (temp_c - t1) / (t2 - t1)
    return math.exp(math.log(v1) + f * (math.log(v2) - math.log(v1))) / 100.0


def stokes_k(temp_c: float, gs: float) -> float:
    """K [mm sqrt(min/cm)] of D = K sqrt(L/t)."""
    return math.sqrt(30.0 * viscosity_poise(temp_c) / (980.0 * (gs - 1.0)))


def a_factor(gs: float) -> float:
    """152H specific-gravity factor a = 1.65 G_s / ((G_s - 1) 2.65) (from memory)."""
    return 1.65 * gs / ((gs - 1.0) * 2.65)


def _line(pairs: list, x: float) -> float:
    """Piecewise-linear y(x) through ``pairs`` sorted by x, extended from the end segments."""
    i = 0
    while i < len(pairs) - 2 and x > pairs[i + 1][0]:
        i += 1
    (x1, y1), (x2, y2) = pairs[i], pairs[i + 1]
    return y1 + (x - x1) * (y2 - y1) / (x2 - x1)


def _pairs(obj: dict, key: str, path: str, xk: str, yk: str) -> list:
    p = join(path, key)
    items = require_list(obj.get(key), p, min_len=2)
    out = []
    for i, it in enumerate(items):
        ip = join(p, i)
        require_mapping(it, ip)
        out.append((number(it, xk, ip), number(it, yk, ip), join(ip, xk)))
    out.sort(key=lambda r: r[0])
    for a, b in zip(out, out[1:]):
        if a[0] == b[0]:
            raise InputError("duplicate_point", f"{b[2]} repeats {a[0]:g}.", b[2])
    return [(x, y) for x, y, _ in out]


@dataclass(frozen=True)
class Reading:
    """One reduced reading."""

    time_min: float
    reading: float
    temperature_c: float
    composite_correction: float
    corrected_reading: float
    effective_depth_cm: float
    k: float
    diameter_mm: float
    finer_suspension_pct: float
    finer_pct: float

    def to_dict(self) -> dict:
        return {"time_min": self.time_min, "reading": self.reading, "temperature_c": self.temperature_c,
                "composite_correction": self.composite_correction, "corrected_reading": self.corrected_reading,
                "effective_depth_cm": self.effective_depth_cm, "k": self.k, "diameter_mm": self.diameter_mm,
                "finer_suspension_pct": self.finer_suspension_pct, "finer_pct": self.finer_pct}


@dataclass(frozen=True)
class Sedimentation:
    hydrometer: str
    specific_gravity: float
    dry_mass_g: float
    split_mm: float
    passing_split_pct: float
    readings: tuple[Reading, ...]
    findings: tuple[Finding, ...]

    def to_dict(self) -> dict:
        return {"hydrometer": self.hydrometer, "specific_gravity": self.specific_gravity,
                "dry_mass_g": self.dry_mass_g, "split_mm": self.split_mm,
                "passing_split_pct": self.passing_split_pct, "readings": [r.to_dict() for r in self.readings]}


def reduce_sedimentation(sed, path: str, passing_split_pct: float) -> Sedimentation:
    """Reduce ``sed`` (docs/json-contract.md, "A sedimentation (input)").

    ``passing_split_pct`` is the percent of the whole specimen passing the
    split sieve, read from the sieve part of the test. Raises
    :class:`InputError` with field paths under ``path``.
    """
    require_mapping(sed, path)
    hyd = text(sed, "hydrometer", path, required=True, choices=("152H", "151H"))
    gs = number(sed, "specific_gravity", path, exclusive_minimum=1.0, maximum=GS_MAX)
    w = number(sed, "dry_mass_g", path, exclusive_minimum=0.0, maximum=MASS_MAX_G)
    split = number(sed, "split_mm", path)
    sp = join(path, "split_mm")
    if not any(abs(split - s) <= 1e-9 * s for s in SPLIT_SIEVES_MM):
        raise InputError("unknown_choice", f"{sp} must be 2 or 0.075 (mm), the sieves the method splits on; "
                         f"got {split:g}.", sp)
    pass_split = passing_split_pct
    meniscus = number(sed, "meniscus_correction", path, required=False, default=0.0)
    cc_fixed = number(sed, "composite_correction", path, required=False)
    cc_cal = None
    if sed.get("correction_calibration") is not None:
        if cc_fixed is not None:
            cp = join(path, "correction_calibration")
            raise InputError("conflicting_fields", f"give either {join(path, 'composite_correction')} or {cp}.",
                             cp)
        cc_cal = _pairs(sed, "correction_calibration", path, "temperature_c", "composite_correction")
    depth = None
    if sed.get("depth_calibration") is not None:
        depth = _pairs(sed, "depth_calibration", path, "reading", "depth_cm")
    elif hyd == "151H":
        dp = join(path, "depth_calibration")
        raise InputError("missing_field", f"{dp} (reading, depth_cm pairs) is required for a 151H hydrometer.", dp)
    findings: list[Finding] = []
    rp = join(path, "readings")
    out: list[Reading] = []
    for i, it in enumerate(require_list(sed.get("readings"), rp, min_len=1)):
        ip = join(rp, i)
        require_mapping(it, ip)
        t = number(it, "time_min", ip, exclusive_minimum=0.0, maximum=TIME_MAX_MIN)
        r = number(it, "reading", ip)
        temp = number(it, "temperature_c", ip, minimum=WATER_C[0], maximum=WATER_C[1])
        cc = number(it, "composite_correction", ip, required=False)
        if cc is None:
            cc = cc_fixed
        if cc is None and cc_cal is not None:
            cc = _line(cc_cal, temp)
            lo, hi = cc_cal[0][0], cc_cal[-1][0]
            if not lo <= temp <= hi:
                findings.append(Finding("warning", "sed_correction_extrapolated", f"{join(ip, 'temperature_c')} = "
                                        f"{temp:g} C lies outside the correction calibration ({lo:g}-{hi:g} C); "
                                        "the composite correction is extrapolated.", join(ip, "temperature_c")))
        if cc is None:
            raise InputError("missing_field", f"{join(ip, 'composite_correction')} (or a composite correction "
                             "for the sheet) is required.", join(ip, "composite_correction"))
        if out and t <= out[-1].time_min:
            raise InputError("times_not_increasing", f"{join(ip, 'time_min')} = {t:g} min must come after the "
                             f"previous reading's {out[-1].time_min:g} min.", join(ip, "time_min"))
        rc = r - cc
        if hyd == "152H":
            rd = r + meniscus
            big_l = _line(depth, rd) if depth else DEPTH_152H[0] - DEPTH_152H[1] * rd
            p_susp = 100.0 * a_factor(gs) * rc / w
        else:
            big_l = _line(depth, r + meniscus)
            p_susp = 100000.0 * gs / (gs - 1.0) * (rc - 1.0) / w
        if big_l <= 0:
            raise InputError("bad_depth", f"{join(ip, 'reading')}: the effective depth {big_l:g} cm is not "
                             "positive; check the reading and the depth calibration.", join(ip, "reading"))
        k = stokes_k(temp, gs)
        d = k * math.sqrt(big_l / t)
        out.append(Reading(t, r, temp, cc, rc, big_l, k, d, p_susp, p_susp * pass_split / 100.0))
        if t < EARLIEST_MIN:
            findings.append(Finding("warning", "sed_early_reading", f"{join(ip, 'time_min')} = {t:g} min is before "
                                    f"the method's earliest reading ({EARLIEST_MIN:g} min, from memory).",
                                    join(ip, "time_min"), SOURCE))
        if not TEMP_RANGE_C[0] <= temp <= TEMP_RANGE_C[1]:
            findings.append(Finding("warning", "sed_temperature_range", f"{join(ip, 'temperature_c')} = {temp:g} C "
                                    f"is outside {TEMP_RANGE_C[0]:g}-{TEMP_RANGE_C[1]:g} C, the range of the "
                                    "viscosity table used; the viscosity is extrapolated.",
                                    join(ip, "temperature_c"), SOURCE))
        if not STOKES_RANGE_MM[0] <= d <= STOKES_RANGE_MM[1]:
            findings.append(Finding("warning", "sed_stokes_range", f"{ip}: the diameter {d:.4g} mm is outside "
                                    f"Stokes' range of the method ({STOKES_RANGE_MM[0]:g}-{STOKES_RANGE_MM[1]:g} mm).",
                                    ip, SOURCE))
        if not 0.0 <= p_susp <= 100.0:
            findings.append(Finding("warning", "sed_percent_range", f"{ip}: {p_susp:.1f} % finer of the suspension "
                                    "is outside 0-100 %; check the reading, the correction and the dry mass.", ip,
                                    SOURCE))
        if len(out) > 1 and rc > out[-2].corrected_reading:
            findings.append(Finding("warning", "sed_reading_rises", f"{join(ip, 'reading')}: the corrected reading "
                                    f"{rc:g} is higher than the earlier {out[-2].corrected_reading:g}; a reading "
                                    "should fall with time.", join(ip, "reading"), SOURCE))
    return Sedimentation(hyd, gs, w, split, pass_split, tuple(out), tuple(findings))
