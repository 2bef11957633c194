"""Standard test sieves: openings [mm], designations, and common stacks.

The opening in millimetres is the key of every sieve. Designations such as
``"No. 40"`` or ``"3/8 in"`` are display labels, and the lookup works both
ways (:func:`opening_from_label`, :func:`label_for`).

References
----------
- ASTM E11 (wire-cloth test sieves), standard openings with their alternative
  inch and "No." designations from 75 mm (3 in) to 0.038 mm (No. 400). The
  pairs are from memory; they agree with the ISO aperture list and with the
  No. 4 = 4.75 mm, No. 10 = 2.00 mm, No. 40 = 0.425 mm, No. 200 = 0.075 mm
  pairs that were read in published tables.
- ISO 3310-1 principal series R20/3 and the EN 933-2 basic set, set 1 and
  set 2 (from memory).

The presets are common laboratory stacks (common practice, no source): they
are conveniences, not requirements of any standard.
"""

from __future__ import annotations

import re
from bisect import bisect_right
from functools import lru_cache

from .curve import same_size
from ..errors import LABEL_MAX_CHARS, OPENING_MAX_MM, OPENING_MIN_MM, InputError, check_text_length, join, \
    opening

#: ASTM E11: (opening_mm, alternative designation). Coarsest first.
ASTM_E11: tuple[tuple[float, str], ...] = (
    (125.0, "5 in"), (106.0, "4.24 in"), (100.0, "4 in"), (90.0, "3 1/2 in"),
    (75.0, "3 in"), (63.0, "2 1/2 in"), (53.0, "2.12 in"), (50.0, "2 in"),
    (45.0, "1 3/4 in"), (37.5, "1 1/2 in"), (31.5, "1 1/4 in"), (26.5, "1.06 in"),
    (25.0, "1 in"), (22.4, "7/8 in"), (19.0, "3/4 in"), (16.0, "5/8 in"),
    (13.2, "0.530 in"), (12.5, "1/2 in"), (11.2, "7/16 in"), (9.5, "3/8 in"),
    (8.0, "5/16 in"), (6.7, "0.265 in"), (6.3, "1/4 in"), (5.6, "No. 3 1/2"),
    (4.75, "No. 4"), (4.0, "No. 5"), (3.35, "No. 6"), (2.8, "No. 7"),
    (2.36, "No. 8"), (2.0, "No. 10"), (1.7, "No. 12"), (1.4, "No. 14"),
    (1.18, "No. 16"), (1.0, "No. 18"), (0.85, "No. 20"), (0.71, "No. 25"),
    (0.6, "No. 30"), (0.5, "No. 35"), (0.425, "No. 40"), (0.355, "No. 45"),
    (0.3, "No. 50"), (0.25, "No. 60"), (0.212, "No. 70"), (0.18, "No. 80"),
    (0.15, "No. 100"), (0.125, "No. 120"), (0.106, "No. 140"), (0.09, "No. 170"),
    (0.075, "No. 200"), (0.063, "No. 230"), (0.053, "No. 270"), (0.045, "No. 325"),
    (0.038, "No. 400"),
)

#: ISO 3310-1 principal series R20/3 [mm] (from memory).
ISO_R20_3_MM: tuple[float, ...] = (
    125.0, 90.0, 63.0, 45.0, 31.5, 22.4, 16.0, 11.2, 8.0, 5.6, 4.0, 2.8, 2.0, 1.4,
    1.0, 0.71, 0.5, 0.355, 0.25, 0.18, 0.125, 0.09, 0.063, 0.045,
)

#: EN 933-2 basic set and sets 1 and 2 [mm] (from memory).
EN_BASIC_MM: tuple[float, ...] = (125.0, 63.0, 31.5, 16.0, 8.0, 4.0, 2.0, 1.0, 0.5, 0.25, 0.125, 0.063)
EN_SET1_MM: tuple[float, ...] = (45.0, 22.4, 11.2, 5.6)
EN_SET2_MM: tuple[float, ...] = (40.0, 20.0, 14.0, 12.5, 10.0, 6.3)

#: Common stacks (common practice, no source): id -> (name, openings_mm).
PRESETS: dict[str, tuple[str, tuple[float, ...]]] = {
    "soil": ("Soil (ASTM sieves, 75 mm to No. 200)",
             (75.0, 50.0, 37.5, 25.0, 19.0, 9.5, 4.75, 2.0, 0.85, 0.425, 0.25, 0.15, 0.106, 0.075)),
    "fine_aggregate": ("Fine aggregate (ASTM C33 fine-aggregate sieves and No. 200)",
                       (9.5, 4.75, 2.36, 1.18, 0.6, 0.3, 0.15, 0.075)),
    "coarse_aggregate": ("Coarse aggregate (ASTM sieves, 50 mm to No. 16)",
                         (50.0, 37.5, 25.0, 19.0, 12.5, 9.5, 4.75, 2.36, 1.18, 0.075)),
    "filter_sand": ("Filter sand (ASTM sieves, 3/8 in to No. 200)",
                    (9.5, 4.75, 2.36, 2.0, 1.18, 0.6, 0.425, 0.3, 0.15, 0.075)),
    "drain_gravel": ("Drain gravel (ASTM sieves, 3 in to No. 200)",
                     (75.0, 50.0, 37.5, 25.0, 19.0, 12.5, 9.5, 4.75, 2.36, 1.18, 0.075)),
    "metric": ("Metric (EN 933-2 basic set, 63 mm to 0.063 mm)",
               (63.0, 31.5, 16.0, 8.0, 4.0, 2.0, 1.0, 0.5, 0.25, 0.125, 0.063)),
}


def _mm_label(opening_mm: float) -> str:
    if opening_mm < 1.0:
        return f"{opening_mm * 1000:g} um"
    return f"{opening_mm:g} mm"


_E11_EXACT: dict[float, str] = dict(ASTM_E11)
_E11_NEG_MM: tuple[float, ...] = tuple(-d for d, _ in ASTM_E11)   # increasing, for bisect


def _e11_index(opening_mm: float) -> int | None:
    """Index in :data:`ASTM_E11` of the first sieve that is the same as
    ``opening_mm`` (:func:`tamis.lab.curve.same_size`), or ``None``.

    The table's openings are distinct sieves, coarsest first, so only the two
    entries either side of ``opening_mm`` can match (a farther one would also
    match every entry between): the same answer as scanning the whole table.
    """
    j = bisect_right(_E11_NEG_MM, -opening_mm)     # first entry finer than opening_mm
    for i in (j - 1, j):
        if 0 <= i < len(ASTM_E11) and same_size(ASTM_E11[i][0], opening_mm):
            return i
    return None


def label_for(opening_mm: float) -> str:
    """Display label of a sieve: the ASTM E11 designation where one exists
    (``0.425`` -> ``"No. 40"``), else the opening itself (``"4 mm"``, ``"63 um"``)."""
    exact = _E11_EXACT.get(opening_mm)
    if exact is not None:
        return exact
    i = _e11_index(opening_mm)
    return _mm_label(opening_mm) if i is None else ASTM_E11[i][1]


def series_of(opening_mm: float) -> str:
    """``"ASTM E11"``, ``"ISO 3310-1"``, ``"EN 933-2"``, both joined with ``" / "``,
    or ``"other"``."""
    names = []
    if _e11_index(opening_mm) is not None:
        names.append("ASTM E11")
    if any(same_size(d, opening_mm) for d in ISO_R20_3_MM):
        names.append("ISO 3310-1")
    if any(same_size(d, opening_mm) for d in EN_BASIC_MM + EN_SET1_MM + EN_SET2_MM):
        names.append("EN 933-2")
    return " / ".join(names) or "other"


_FRACTION = re.compile(r"^(?:(\d+)[\s-]+)?(\d+)/(\d+)$")
_UNICODE_FRACTIONS = {"\u00bd": " 1/2", "\u00bc": " 1/4", "\u00be": " 3/4", "\u215b": " 1/8",
                      "\u215c": " 3/8", "\u215d": " 5/8", "\u215e": " 7/8"}


def _inches(text: str) -> float | None:
    """``"1 1/2"`` / ``"1-1/2"`` / ``"3/8"`` / ``"0.375"`` -> inches, or None."""
    text = text.strip()
    m = _FRACTION.match(text)
    if m:
        whole = int(m.group(1)) if m.group(1) else 0
        den = int(m.group(3))
        return None if den == 0 else whole + int(m.group(2)) / den
    try:
        return float(text)
    except ValueError:
        return None


def _normalise(label: str) -> str:
    s = label.strip().lower()
    for ch, rep in _UNICODE_FRACTIONS.items():
        s = s.replace(ch, rep)
    s = s.replace("\u00b5", "u").replace("\u03bc", "u").replace("\u201d", '"').replace("''", '"')
    return re.sub(r"\s+", " ", s).strip()


def _match_inch_designation(inches: float) -> float | None:
    """Opening [mm] of the E11 sieve whose inch designation is ``inches``."""
    for d, name in ASTM_E11:
        if name.endswith(" in"):
            v = _inches(name[:-3])
            if v is not None and abs(v - inches) <= 1e-6 * max(1.0, inches):
                return d
    return None


def opening_from_label(label: str) -> float | None:
    """Opening [mm] for a designation, or ``None`` when it is not recognised.

    Accepted forms (case and spacing do not matter): ``"No. 40"``, ``"no40"``,
    ``"#40"``, ``"No. 3 1/2"``; ``"3/8 in"``, ``'3/8"'``, ``"1-1/2 in"``,
    ``"1 1/2in"``, ``"1½ in"``; ``"4.75 mm"``, ``"425 um"``, ``"425 µm"``.
    A bare number is refused (it could be mm or a sieve number).
    """
    if not isinstance(label, str):
        return None
    return _opening_of_text(label)


@lru_cache(maxsize=512)
def _opening_of_text(label: str) -> float | None:
    """:func:`opening_from_label` of a string (a pure function of it, so its answers are kept: a test names
    the same few sieves over and over)."""
    s = _normalise(label)
    m = re.match(r"^(?:no\.?|#|n[o°]\s*\.)\s*(\d+(?:\s+1/2)?)$", s)
    if m:
        want = "No. " + re.sub(r"\s+", " ", m.group(1))
        for d, name in ASTM_E11:
            if name == want:
                return d
        return None
    m = re.match(r'^(.+?)\s*(?:in\.?|inch|inches|")$', s)
    if m:
        inches = _inches(m.group(1))
        return None if inches is None else _match_inch_designation(inches)
    m = re.match(r"^(\d+(?:\.\d*)?|\.\d+)\s*(mm|um)$", s)
    if m:
        v = float(m.group(1))
        v = v / 1000.0 if m.group(2) == "um" else v
        return v if v > 0 else None
    return None


def resolve_opening(obj: dict, path: str) -> float:
    """The opening [mm] of one sieve entry that has ``opening_mm`` or ``sieve``.

    Raises :class:`InputError` naming ``path.opening_mm`` or ``path.sieve``
    when neither is given, the label is unknown, or the two disagree.
    """
    has_mm = obj.get("opening_mm") is not None
    has_label = obj.get("sieve") is not None
    if not has_mm and not has_label:
        raise InputError("missing_field", f"{join(path, 'opening_mm')} (or {join(path, 'sieve')}) is required.",
                         join(path, "opening_mm"))
    mm = opening(obj, "opening_mm", path) if has_mm else None
    if has_label:
        label = obj["sieve"]
        p = join(path, "sieve")
        if not isinstance(label, str):
            raise InputError("not_a_string", f"{p} must be a sieve designation such as \"No. 40\".", p)
        check_text_length(label, p, LABEL_MAX_CHARS)
        from_label = opening_from_label(label)
        if from_label is None:
            raise InputError("unknown_sieve", f"{p}: {label!r} is not a sieve designation tamis knows "
                             "(try \"No. 40\", \"3/8 in\" or \"4.75 mm\", or give opening_mm).", p)
        if not OPENING_MIN_MM < from_label <= OPENING_MAX_MM:
            raise InputError("out_of_range", f"{p}: {label!r} is {from_label:g} mm; an opening must be larger than "
                             f"{OPENING_MIN_MM:g} mm and at most {OPENING_MAX_MM:g} mm.", p)
        if mm is not None and not same_size(mm, from_label):
            raise InputError("sieve_mismatch", f"{p} {label!r} is {from_label:g} mm but "
                             f"{join(path, 'opening_mm')} is {mm:g} mm.", p)
        return from_label
    return mm


def op_presets(request: dict):
    """API op ``sieve_presets``: the preset stacks and every known sieve."""
    presets = [{"id": pid, "name": name, "openings_mm": list(openings),
                "labels": [label_for(d) for d in openings], "source": "common practice, no source"}
               for pid, (name, openings) in PRESETS.items()]
    known = sorted({d for d, _ in ASTM_E11} | set(ISO_R20_3_MM) | set(EN_BASIC_MM + EN_SET1_MM + EN_SET2_MM),
                   reverse=True)
    sieves = [{"opening_mm": d, "label": label_for(d), "series": series_of(d)} for d in known]
    return {"presets": presets, "sieves": sieves}, []
