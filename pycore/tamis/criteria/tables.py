"""Thresholds of every rule set, as plain data.

Each rule set is one frozen table. The code in :mod:`tamis.criteria.nrcs`,
:mod:`tamis.criteria.terzaghi` and :mod:`tamis.criteria.material` reads its
numbers from here and nowhere else, and ``docs/criteria.md`` is generated from
the same tables (``scripts/gen_criteria_docs.py``).

Provenance: the primary manuals (NRCS NEH 633 Ch. 26, USBR DS-13 Ch. 5, FEMA
2011) were not read for these tables; the values are recalled (``from
memory``) or read in a secondary summary, as tagged in ``PROVENANCE`` and in
the registry. Confirm them against the manuals before relying on them.
"""

from __future__ import annotations

from types import MappingProxyType

# Size limits shared by every rule set [mm].
NO_200_MM = 0.075   # fines limit sieve (No. 200)
NO_4_MM = 4.75      # regrading sieve (No. 4)


def _freeze(d: dict) -> MappingProxyType:
    return MappingProxyType({k: (_freeze(v) if isinstance(v, dict) else v) for k, v in d.items()})


#: NRCS base-soil categories from A, the percent passing 0.075 mm after
#: regrading (Sherard & Dunnigan 1989 groups). Edge handling [derived]:
#: cat 1 if A > 85; cat 2 if 40 <= A <= 85; cat 3 if 15 <= A < 40; cat 4 if A < 15.
CATEGORY_EDGES_PCT = _freeze({
    "cat1_above": 85.0,       # A > 85
    "cat2_from": 40.0,        # 40 <= A <= 85
    "cat3_from": 15.0,        # 15 <= A < 40
    "discontinuity_warn_band": 2.0,  # warn when |A - 85| <= 2 [derived]
})

#: Segregation: maximum D90 of the filter for its D10 (NEH 633-26 1994, FEMA
#: 2011, USBR 2011 share the values; from memory). Rows are
#: (upper edge of D10 [mm] or None for the open last row, max D90 [mm]).
#: A D10 exactly on a row edge takes the lower (stricter) row [derived choice].
SEGREGATION_ROWS = (
    (0.5, 20.0),
    (1.0, 25.0),
    (2.0, 30.0),
    (5.0, 40.0),
    (10.0, 50.0),
    (None, 60.0),
)

#: Filter-material limits shared by the NRCS, USBR and FEMA sets (from memory).
MATERIAL = _freeze({
    "fines_max_pct": 5.0,        # passing 0.075 mm
    "d100_max_mm": 75.0,         # maximum particle size (3 in)
})

_NRCS_RETENTION = {
    "cat1_multiplier": 9.0, "cat1_floor_mm": 0.2,
    "cat1_dispersive_multiplier": 6.5, "cat1_dispersive_floor_mm": 0.2,
    "cat2_limit_mm": 0.7, "cat2_dispersive_limit_mm": 0.5,
    "cat3_floor_mm": 0.7, "cat3_multiplier": 4.0,
    "cat3_dispersive_known": False,
    "cat4_multiplier": 4.0,
}

#: USBR 2011 and FEMA 2011 share every number (from memory).
_FAMILY_2011 = {
    "family": "nrcs",
    "regrade": True,
    "retention": _NRCS_RETENTION,
    "permeability_multiplier": 5.0,
    "permeability_floor_mm": 0.1,
    "band_width_ratio": 5.0,
    "band_width_up_to_pct": 60.0,
}

#: One table per rule set. ``permeability_multiplier`` x d15B (before
#: regrading), not less than ``permeability_floor_mm``.
RULE_SETS = _freeze({
    "nrcs-1994": {
        "title": "USDA NRCS, National Engineering Handbook Part 633 Ch. 26, "
                 "Gradation Design of Sand and Gravel Filters (210-vi-NEH, October 1994; its criteria were "
                 "first issued in Soil Mechanics Note 1, revised January 1986). A later edition exists "
                 "(210-633-H, 1st Ed., Amend. 61, August 2017); its numbers are not checked here",
        "family": "nrcs",
        "regrade": True,
        "retention": _NRCS_RETENTION,
        "permeability_multiplier": 4.0,
        "permeability_floor_mm": 0.1,
        "band_width_ratio": 5.0,
        "band_width_up_to_pct": 60.0,
    },
    "usbr-2011": {
        "title": "US Bureau of Reclamation, Design Standards No. 13 Ch. 5, "
                 "Protective Filters, DS-13(5)-9 (November 2011)",
        **_FAMILY_2011,
    },
    "fema-2011": {
        "title": "FEMA, Filters for Embankment Dams: Best Practices for Design "
                 "and Construction (October 2011), Chapter 5, Filter Design Procedure",
        **_FAMILY_2011,
    },
    "terzaghi": {
        "title": "Terzaghi filter ratios, as given in Terzaghi & Peck, Soil "
                 "Mechanics in Engineering Practice (1948 and later editions)",
        "family": "terzaghi",
        "regrade": False,
        # the ratio itself comes from rules.terzaghi_ratio (4 to 5, default 4)
        "ratio_min": 4.0,
        "ratio_max": 5.0,
        "ratio_default": 4.0,
        "band_width_ratio": 5.0,
        "band_width_up_to_pct": 60.0,
    },
})

DEFAULT_RULE_SET = "nrcs-1994"

#: Provenance of each number group, carried into the registry and the docs.
PROVENANCE = _freeze({
    "categories": "from memory (NEH 633-26 1994 category table; Sherard & Dunnigan 1989 groups)",
    "retention_nondispersive": "from memory (NEH 633-26 1994 maximum-D15F table); cat 1 and cat 4 multipliers "
                               "also read in a secondary summary",
    "retention_dispersive": "read in a secondary summary (cat 1, 6.5 x d85B, 0.2 mm); from memory "
                            "(cat 2, 0.5 mm); edition of first appearance not verified",
    "permeability_nrcs_1994": "from memory (NEH 633-26 1994, 4 x d15B, 0.1 mm)",
    "permeability_2011": "from memory (USBR DS-13(5) 2011 and FEMA 2011, 5 x d15B, 0.1 mm)",
    "material": "from memory (NEH 633-26 1994; FEMA 2011)",
    "segregation": "from memory (NEH 633-26 1994 segregation table; FEMA 2011; USBR 2011)",
    "terzaghi": "from memory (Terzaghi & Peck)",
})


def rule_set(name: str) -> MappingProxyType:
    """The threshold table of rule set ``name`` (a key of :data:`RULE_SETS`)."""
    return RULE_SETS[name]


def segregation_d90_max_mm(d10_mm: float) -> float:
    """Maximum D90 [mm] allowed for a filter with ``d10_mm`` [mm] (segregation
    table; a D10 on a row edge takes the stricter row)."""
    for upper, d90_max in SEGREGATION_ROWS:
        if upper is None or d10_mm <= upper:
            return d90_max
    raise AssertionError("unreachable: the last row is open")  # pragma: no cover
