"""NRCS / USBR / FEMA filter criteria: base-soil category, maximum and minimum D15F.

The same family of rules appears in USDA NRCS NEH Part 633 Ch. 26 (October
1994), USBR DS-13 Ch. 5 (November 2011) and FEMA "Filters for Embankment
Dams" (October 2011); the numbers differ per set and live in
:data:`tamis.criteria.tables.RULE_SETS`. All values are from memory or read in
a secondary summary (see the registry); confirm against the manuals.

Notation: A [%] is the percent passing 0.075 mm of the base regraded on
4.75 mm; d85B, d15B [mm] are base sizes; D15F [mm] is the filter's.
"""

from __future__ import annotations

from .tables import CATEGORY_EDGES_PCT


def base_category(a_pct: float) -> int:
    """Base-soil category 1-4 from A [%] (NEH 633-26 1994 category table, from memory).

    Category 1 if A > 85; 2 if 40 <= A <= 85; 3 if 15 <= A < 40; 4 if A < 15.
    The edges at 40 and 15 are continuous in the D15F limit; only 85 is not.

    >>> [base_category(a) for a in (86, 85, 40, 39.9, 15, 14.9)]
    [1, 2, 2, 3, 3, 4]
    """
    e = CATEGORY_EDGES_PCT
    if a_pct > e["cat1_above"]:
        return 1
    if a_pct >= e["cat2_from"]:
        return 2
    if a_pct >= e["cat3_from"]:
        return 3
    return 4


def d15f_max_cat1_mm(d85b_mm: float, multiplier: float, floor_mm: float) -> float:
    """Category 1: D15F max = multiplier x d85B, not less than floor_mm [mm]
    (9 x d85B and 0.2 mm; dispersive 6.5 x d85B and 0.2 mm)."""
    return max(multiplier * d85b_mm, floor_mm)


def d15f_max_cat3_mm(a_pct: float, d85b_mm: float, multiplier: float, floor_mm: float,
                     cat2_from_pct: float = 40.0, cat3_from_pct: float = 15.0) -> float:
    """Category 3: D15F max = ((40 - A)/(40 - 15)) x (4 x d85B - 0.7) + 0.7 [mm];
    when 4 x d85B < 0.7 mm the limit is 0.7 mm (NEH 633-26 1994 maximum-D15F table, from memory).

    >>> round(d15f_max_cat3_mm(25.0, 1.0, 4.0, 0.7), 6)
    2.68
    """
    top = multiplier * d85b_mm
    if top < floor_mm:
        return floor_mm
    return (cat2_from_pct - a_pct) / (cat2_from_pct - cat3_from_pct) * (top - floor_mm) + floor_mm


def d15f_max_cat4_mm(d85b_mm: float, multiplier: float) -> float:
    """Category 4: D15F max = 4 x d85B [mm] on the regraded base."""
    return multiplier * d85b_mm


def d15f_max_mm(category: int, a_pct: float, d85b_mm: float, dispersive: bool, table) -> tuple[float, str]:
    """Maximum D15F [mm] for a base of ``category`` and the rule ``text`` used.

    ``table`` is the ``retention`` table of a rule set. For a dispersive
    category-3 base no variant is known (``table["cat3_dispersive_known"]``
    is false): the non-dispersive limit is returned and the caller warns.
    """
    e = CATEGORY_EDGES_PCT
    if category == 1:
        if dispersive:
            m, f = table["cat1_dispersive_multiplier"], table["cat1_dispersive_floor_mm"]
        else:
            m, f = table["cat1_multiplier"], table["cat1_floor_mm"]
        return d15f_max_cat1_mm(d85b_mm, m, f), f"{m:g} x d85B, not less than {f:g} mm"
    if category == 2:
        lim = table["cat2_dispersive_limit_mm"] if dispersive else table["cat2_limit_mm"]
        return lim, f"{lim:g} mm"
    if category == 3:
        lim = d15f_max_cat3_mm(a_pct, d85b_mm, table["cat3_multiplier"], table["cat3_floor_mm"],
                               e["cat2_from"], e["cat3_from"])
        return lim, (f"((40 - A)/25) x ({table['cat3_multiplier']:g} x d85B - {table['cat3_floor_mm']:g}) "
                     f"+ {table['cat3_floor_mm']:g} mm, not less than {table['cat3_floor_mm']:g} mm")
    if category == 4:
        m = table["cat4_multiplier"]
        return d15f_max_cat4_mm(d85b_mm, m), f"{m:g} x d85B"
    raise ValueError(f"category must be 1-4, got {category!r}")


def d15f_min_mm(d15b_mm: float, multiplier: float, floor_mm: float) -> float:
    """Minimum D15F [mm] = multiplier x d15B (before regrading), not less than
    floor_mm (4 x and 0.1 mm in NEH 1994; 5 x and 0.1 mm in USBR/FEMA 2011; from memory).

    >>> d15f_min_mm(0.01, 5.0, 0.1)
    0.1
    """
    return max(multiplier * d15b_mm, floor_mm)
