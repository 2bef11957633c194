"""Specification bands: per-sieve minimum and maximum percent passing.

A band is ``{"name", "limits": [{"opening_mm" (or "sieve"), "min_pct",
"max_pct"}, ...]}``; either limit of a sieve may be ``null`` (one-sided).
Optional extra requirements, used by the ASTM C33 fine-aggregate preset and
available to any band: ``fm_min`` / ``fm_max`` (fineness modulus, ASTM C125
sieves) and ``max_between_sieves_pct`` (most that may pass one band sieve and
be retained on the next finer band sieve).

Compliance is read on the sample's curve at each band sieve
(:func:`tamis.lab.curve.passing_at`): where the sample was not sieved on that
size, the value is interpolated log-linearly and a pass there is only a
warning; where the curve does not reach the size it is ``needs_data``.
Everything is compared unrounded.
"""

from __future__ import annotations

from dataclasses import dataclass

from .curve import Curve, fineness_modulus, passing_at, same_size
from ..errors import InputError, join, number, require_list, require_mapping, text
from ..checks import FAIL, NEEDS_DATA, NOT_APPLICABLE, PASS, WARN, Check, compare, new_check
from ..registry import source_text
from .sieves import label_for, resolve_opening

SRC_USER_BAND = "project specification band (entered by the user)"

_C33_SRC = ("ASTM C33/C33M, Table 1, fine aggregate grading (values read in published reproductions; edition of "
            "the reproduction not stated; older editions used 10-30 % at 300 um and 2-10 % at 150 um)")

#: Presets: only gradings a published standard defines.
PRESETS: tuple[dict, ...] = (
    {"id": "astm-c33-fine", "name": "ASTM C33 fine aggregate (Table 1)",
     "limits": [{"opening_mm": 9.5, "min_pct": 100, "max_pct": 100},
                {"opening_mm": 4.75, "min_pct": 95, "max_pct": 100},
                {"opening_mm": 2.36, "min_pct": 80, "max_pct": 100},
                {"opening_mm": 1.18, "min_pct": 50, "max_pct": 85},
                {"opening_mm": 0.6, "min_pct": 25, "max_pct": 60},
                {"opening_mm": 0.3, "min_pct": 5, "max_pct": 30},
                {"opening_mm": 0.15, "min_pct": 0, "max_pct": 10}],
     "fm_min": 2.3, "fm_max": 3.1, "max_between_sieves_pct": 45.0,
     "source": _C33_SRC + "; FM 2.3-3.1 and at most 45 % between consecutive sieves (read in a reproduction)",
     "provenance": "read (secondary reproduction)"},
    {"id": "astm-c33-57", "name": "ASTM C33 coarse aggregate size No. 57 (25 to 4.75 mm)",
     "limits": [{"opening_mm": 37.5, "min_pct": 100, "max_pct": 100},
                {"opening_mm": 25.0, "min_pct": 95, "max_pct": 100},
                {"opening_mm": 12.5, "min_pct": 25, "max_pct": 60},
                {"opening_mm": 4.75, "min_pct": 0, "max_pct": 10},
                {"opening_mm": 2.36, "min_pct": 0, "max_pct": 5}],
     "source": "ASTM C33/C33M Table 3 (= ASTM D448), size No. 57 (read in agency specifications quoting it; "
               "edition not stated)",
     "provenance": "read (secondary reproduction)"},
    {"id": "astm-c33-67", "name": "ASTM C33 coarse aggregate size No. 67 (19 to 4.75 mm)",
     "limits": [{"opening_mm": 25.0, "min_pct": 100, "max_pct": 100},
                {"opening_mm": 19.0, "min_pct": 90, "max_pct": 100},
                {"opening_mm": 9.5, "min_pct": 20, "max_pct": 55},
                {"opening_mm": 4.75, "min_pct": 0, "max_pct": 10},
                {"opening_mm": 2.36, "min_pct": 0, "max_pct": 5}],
     "source": "ASTM C33/C33M Table 3 (= ASTM D448), size No. 67 (read in agency specifications quoting it; "
               "edition not stated)",
     "provenance": "read (secondary reproduction)"},
)


#: Largest fineness modulus a band may state [-]: ASTM C125 sums 11 sieves of at most 100 % each, / 100.
FM_MAX = 11.0


@dataclass(frozen=True)
class Limit:
    opening_mm: float
    min_pct: float | None
    max_pct: float | None
    path: str


@dataclass(frozen=True)
class Band:
    name: str
    limits: tuple[Limit, ...]  # coarsest first
    fm_min: float | None = None
    fm_max: float | None = None
    max_between_sieves_pct: float | None = None
    source: str = SRC_USER_BAND


def parse_band(obj, path: str = "band") -> Band:
    """Parse a band with field paths; :class:`InputError` for any malformed part."""
    require_mapping(obj, path)
    name = text(obj, "name", path, default="band")
    lp = join(path, "limits")
    items = require_list(obj.get("limits"), lp, min_len=1)
    limits = []
    for i, it in enumerate(items):
        ip = join(lp, i)
        require_mapping(it, ip)
        d = resolve_opening(it, ip)
        lo = number(it, "min_pct", ip, required=False, minimum=0.0, maximum=100.0)
        hi = number(it, "max_pct", ip, required=False, minimum=0.0, maximum=100.0)
        if lo is None and hi is None:
            raise InputError("missing_field", f"{join(ip, 'min_pct')} or {join(ip, 'max_pct')} is required.",
                             join(ip, "min_pct"))
        if lo is not None and hi is not None and lo > hi:
            raise InputError("band_inverted", f"{join(ip, 'min_pct')} = {lo:g} is above "
                             f"{join(ip, 'max_pct')} = {hi:g}.", join(ip, "min_pct"))
        limits.append(Limit(d, lo, hi, ip))
    limits.sort(key=lambda lim: -lim.opening_mm)
    for a, b in zip(limits, limits[1:]):
        if same_size(a.opening_mm, b.opening_mm):
            raise InputError("duplicate_opening", f"{join(b.path, 'opening_mm')} repeats the opening "
                             f"{b.opening_mm:g} mm of {a.path}.", join(b.path, "opening_mm"))
    fm_min = number(obj, "fm_min", path, required=False, minimum=0.0, maximum=FM_MAX)
    fm_max = number(obj, "fm_max", path, required=False, minimum=0.0, maximum=FM_MAX)
    between = number(obj, "max_between_sieves_pct", path, required=False, minimum=0.0, maximum=100.0)
    source = text(obj, "source", path, default=SRC_USER_BAND)
    return Band(name, tuple(limits), fm_min, fm_max, between, source)


def _measured(curve: Curve, opening_mm: float) -> bool:
    return any(same_size(d, opening_mm) for d, _ in curve.points)


def sieve_rows(band: Band, curve: Curve) -> list[dict]:
    """One row per band sieve: passing, limits, margins (positive inside) and status."""
    rows = []
    for lim in band.limits:
        p = passing_at(curve, lim.opening_mm)
        measured = _measured(curve, lim.opening_mm)
        row = {"opening_mm": lim.opening_mm, "label": label_for(lim.opening_mm), "passing_pct": p,
               "min_pct": lim.min_pct, "max_pct": lim.max_pct, "margin_min_pct": None, "margin_max_pct": None,
               "measured": measured}
        if p is None:
            row["status"] = NEEDS_DATA
            rows.append(row)
            continue
        ok = True
        if lim.min_pct is not None:
            row["margin_min_pct"] = p - lim.min_pct
            ok = ok and compare(p, ">=", lim.min_pct)
        if lim.max_pct is not None:
            row["margin_max_pct"] = lim.max_pct - p
            ok = ok and compare(p, "<=", lim.max_pct)
        row["status"] = FAIL if not ok else (PASS if measured else WARN)
        rows.append(row)
    return rows


def compliance_check(band: Band, curve: Curve) -> Check:
    """``band.compliance``: every band sieve within its limits."""
    rows = sieve_rows(band, curve)
    fails = [r for r in rows if r["status"] == FAIL]
    missing = [r for r in rows if r["status"] == NEEDS_DATA]
    interp = [r for r in rows if r["status"] == WARN]
    margins = [m for r in rows for m in (r["margin_min_pct"], r["margin_max_pct"]) if m is not None]
    worst = min(margins) if margins else None
    extra = {"band": band.name, "sieves": rows}
    if fails:
        status, msg = FAIL, "Outside the band at " + ", ".join(
            f"{r['label']} ({r['passing_pct']:.1f} % passing; limits {_lim(r)})" for r in fails) + "."
    elif missing:
        status, msg = NEEDS_DATA, "The sample's curve does not reach " + ", ".join(r["label"] for r in missing) \
            + ": those band sieves cannot be checked."
    elif interp:
        status, msg = WARN, "Within the band, but " + ", ".join(r["label"] for r in interp) + \
            " was not in the sample's stack (read by interpolation)."
    else:
        status, msg = PASS, f"Within the band at all {len(rows)} sieves."
    return new_check("band.compliance", status, msg, worst, 0.0, ">=", "%",
                     source_text("band.compliance", given=band.source), extra)


def _lim(r: dict) -> str:
    lo = "-" if r["min_pct"] is None else f"{r['min_pct']:g}"
    hi = "-" if r["max_pct"] is None else f"{r['max_pct']:g}"
    return f"{lo} to {hi} %"


def fineness_check(band: Band, curve: Curve) -> Check | None:
    """``band.fineness_modulus``: FM within the band's fm_min..fm_max (C33: 2.3-3.1)."""
    if band.fm_min is None and band.fm_max is None:
        return None
    fm = fineness_modulus(curve)
    lo, hi = band.fm_min, band.fm_max
    rng = f"{'-' if lo is None else f'{lo:g}'} to {'-' if hi is None else f'{hi:g}'}"
    if fm is None:
        return new_check("band.fineness_modulus", NEEDS_DATA, "The fineness modulus needs every ASTM C125 sieve "
                         "from 150 um up to the top of the sample.", None, lo if lo is not None else hi, None, "-",
                         source_text("band.fineness_modulus", given=band.source))
    ok = (lo is None or compare(fm, ">=", lo)) and (hi is None or compare(fm, "<=", hi))
    limit, rel = (lo, ">=") if (lo is not None and fm < lo) else ((hi, "<=") if hi is not None else (lo, ">="))
    return new_check("band.fineness_modulus", PASS if ok else FAIL,
                     f"Fineness modulus {fm:.2f} {'within' if ok else 'outside'} {rng}.", fm, limit, rel, "-",
                     source_text("band.fineness_modulus", given=band.source), {"fm_min": lo, "fm_max": hi})


def between_sieves_check(band: Band, curve: Curve) -> Check | None:
    """``band.between_sieves``: at most ``max_between_sieves_pct`` passing one band
    sieve and retained on the next finer band sieve (C33: 45 %); measured sieves only."""
    lim = band.max_between_sieves_pct
    if lim is None:
        return None
    sizes = [x.opening_mm for x in band.limits]
    meas = {d: p for d, p in curve.points}
    vals = []
    for a, b in zip(sizes, sizes[1:]):
        pa = next((p for d, p in meas.items() if same_size(d, a)), None)
        pb = next((p for d, p in meas.items() if same_size(d, b)), None)
        if pa is None or pb is None:
            return new_check("band.between_sieves", NEEDS_DATA, f"{label_for(a)} and {label_for(b)} must both be "
                             "sieved to check the fraction between them.", None, lim, "<=", "%",
                             source_text("band.between_sieves", given=band.source))
        vals.append((pa - pb, a, b))
    if not vals:
        return new_check("band.between_sieves", NOT_APPLICABLE, "The band has a single sieve.", None, lim, "<=", "%",
                         source_text("band.between_sieves", given=band.source))
    worst = max(vals)
    ok = compare(worst[0], "<=", lim)
    return new_check("band.between_sieves", PASS if ok else FAIL,
                     f"Largest fraction between consecutive sieves: {worst[0]:.1f} % ({label_for(worst[1])} to "
                     f"{label_for(worst[2])}), limit {lim:g} %.", worst[0], lim, "<=", "%",
                     source_text("band.between_sieves", given=band.source))


def band_checks(band: Band, curve: Curve) -> list[Check]:
    """All checks of a band against a curve: compliance, then any extra requirements."""
    out = [compliance_check(band, curve)]
    for extra in (fineness_check(band, curve), between_sieves_check(band, curve)):
        if extra is not None:
            out.append(extra)
    return out


def op_presets(request: dict):
    """API op ``band_presets``: bands defined by a published standard."""
    return {"presets": [dict(p, limits=[dict(x, label=label_for(x["opening_mm"])) for x in p["limits"]])
                        for p in PRESETS]}, []
