"""Parsing of the ``rules`` object of ``evaluate``, ``zones`` and ``design_band``.

Defaults (documented in ``docs/criteria.md``):

=====================  ===========  =============================================================
key                    default      meaning
=====================  ===========  =============================================================
criteria               nrcs-1994    rule set: nrcs-1994, usbr-2011, fema-2011, terzaghi
terzaghi_ratio         4.0          ratio of the terzaghi set, 4 to 5 (error outside)
dispersive             null         true/false overrides the base's own ``dispersive`` flag
regrade                true         regrade a gravelly base on regrade_on_mm (NRCS/USBR/FEMA sets);
                                    the zones op sets false for a filter zone used as a base
regrade_on_mm          4.75         regrading sieve of the base (NRCS/USBR/FEMA sets)
kenney_lau_boundary    1.0          1.0 (Kenney & Lau 1986) or 1.3 (1985)
stability              true         run the internal-stability methods on the filter
stability_in_verdict   false        let the internal-stability methods decide the verdict; by
                                    default they are advisory indicators (docs/decisions.md)
hazen_c                100.0        Hazen coefficient C_H [cm^-1 s^-1], > 0
void_ratio             null         void ratio e for Kozeny-Carman (no estimate without it)
shape_factor           7.0          Kozeny-Carman shape factor SF (Fair & Hatch: 6.0 to 7.7)
kc_pan_lower_mm        null         smallest size of the fraction below the finest sieve [mm];
                                    null means half the finest sieve
=====================  ===========  =============================================================

Unknown keys are refused (a misspelt rule must not pass silently); keys
starting with ``_`` are ignored.
"""

from __future__ import annotations

from ..errors import InputError, boolean, join, number, opening, require_mapping, text
from .tables import DEFAULT_RULE_SET, KENNEY_LAU_BOUNDARIES, NO_4_MM, RULE_SETS

#: Accepted ranges of the numeric rules (docs/json-contract.md "Limits"; common practice, no source: wide
#: around the published ranges, so that no estimate overflows). Hazen C_H [cm^-1 s^-1]: 0 < C <= 10,000.
HAZEN_C_MAX = 1e4
#: Void ratio e [-]: 0 < e <= 20 (peats reach about 15).
VOID_RATIO_RANGE = (0.0, 20.0)
#: Kozeny-Carman shape factor SF [-]: 1 to 100 (Fair & Hatch give 6.0 to 7.7).
SHAPE_FACTOR_RANGE = (1.0, 100.0)

KEYS = ("criteria", "terzaghi_ratio", "dispersive", "regrade", "regrade_on_mm", "kenney_lau_boundary",
        "stability", "stability_in_verdict", "hazen_c", "void_ratio", "shape_factor", "kc_pan_lower_mm")



def parse_rules(rules: dict | None, path: str = "rules") -> dict:
    """Return the rules after defaults, or raise :class:`InputError` naming the field."""
    if rules is None:
        rules = {}
    require_mapping(rules, path)
    for key in rules:
        if not isinstance(key, str) or key.startswith("_"):
            continue
        if key not in KEYS:
            raise InputError("unknown_rule", f"{join(path, key)} is not a known rule; known: {', '.join(KEYS)}.",
                             join(path, key))
    crit = text(rules, "criteria", path, default=DEFAULT_RULE_SET, choices=tuple(RULE_SETS))
    t = RULE_SETS["terzaghi"]
    ratio = number(rules, "terzaghi_ratio", path, required=False, default=t["ratio_default"],
                   minimum=t["ratio_min"], maximum=t["ratio_max"])
    kl = number(rules, "kenney_lau_boundary", path, required=False, default=1.0)
    if kl not in KENNEY_LAU_BOUNDARIES:
        p = join(path, "kenney_lau_boundary")
        raise InputError("unknown_choice", f"{p} must be 1.0 (Kenney & Lau 1986) or 1.3 (1985); got {kl:g}.", p)
    stability = boolean(rules, "stability", path, default=True)
    return {
        "criteria": crit,
        "terzaghi_ratio": ratio,
        "dispersive": boolean(rules, "dispersive", path, default=None),
        "regrade": boolean(rules, "regrade", path, default=True),
        "regrade_on_mm": opening(rules, "regrade_on_mm", path, required=False, default=NO_4_MM),
        "kenney_lau_boundary": kl,
        "stability": stability,
        "stability_in_verdict": boolean(rules, "stability_in_verdict", path, default=False),
        "hazen_c": number(rules, "hazen_c", path, required=False, default=100.0, exclusive_minimum=0.0,
                          maximum=HAZEN_C_MAX),
        "void_ratio": number(rules, "void_ratio", path, required=False, default=None,
                             exclusive_minimum=VOID_RATIO_RANGE[0], maximum=VOID_RATIO_RANGE[1]),
        "shape_factor": number(rules, "shape_factor", path, required=False, default=7.0,
                               minimum=SHAPE_FACTOR_RANGE[0], maximum=SHAPE_FACTOR_RANGE[1]),
        "kc_pan_lower_mm": opening(rules, "kc_pan_lower_mm", path, required=False, default=None),
    }
