"""The one registry of every check id the core can emit.

Each entry states the rule in our own words, when it applies, the source
(document, edition, table or equation) and the provenance of its numbers:

- ``read``: read in the source document;
- ``read in a secondary source``: read in a summary that quotes the document;
- ``from memory``: recalled, not verified against the document;
- ``derived``: computed or chosen by us from the stated rules;
- ``common practice, no source``: a rule of thumb.

``docs/criteria.md`` is generated from this table by
``scripts/gen_criteria_docs.py`` and a test fails when the two drift.
Every check of the core, in every layer (the lab QA checks, the band checks,
the filter criteria), takes its ``source`` text from here: it is built with
:func:`make_check` / :func:`limit_check`, or carries :func:`source_text`; a
test compares each emitted ``source`` with this registry.
"""

from __future__ import annotations

from dataclasses import dataclass

from .checks import FAIL, NEEDS_DATA, PASS, Check, compare, new_check

PROVENANCE_TAGS = ("read", "read in a secondary source", "from memory", "derived",
                   "common practice, no source")

NEH_1994 = "USDA NRCS National Engineering Handbook Part 633 Ch. 26, Gradation Design of Sand and Gravel Filters"
#: The edition the ``nrcs-1994`` set follows: October 1994, whose preface says its criteria were first issued in
#: Soil Mechanics Note 1, revised January 1986 (edition line and preface read). A later edition,
#: 210-633-H, 1st Ed., Amend. 61, August 2017, exists; its numbers are not checked here.
NEH_1994_EDITION = "210-vi-NEH, October 1994 (criteria from Soil Mechanics Note 1, rev. January 1986)"
USBR_2011 = "USBR Design Standards No. 13 Ch. 5, Protective Filters, DS-13(5)-9"
FEMA_2011 = "FEMA, Filters for Embankment Dams: Best Practices for Design and Construction"
TERZAGHI = "Terzaghi & Peck, Soil Mechanics in Engineering Practice"


@dataclass(frozen=True)
class Entry:
    id: str
    variant: str          # "" for every rule set, else the rule-set name
    title: str
    rule: str
    applies: str
    source: str
    edition: str
    locator: str          # table, equation or step
    provenance: str
    #: The ``source`` text the check carries: "" for the composed text (document,
    #: edition, locator, [provenance]); :data:`GIVEN` when the check carries the
    #: source its input names (a band's own); else this text as it is.
    carries: str = ""

    def __post_init__(self) -> None:
        if not any(self.provenance.startswith(t) for t in PROVENANCE_TAGS):
            raise ValueError(f"{self.id}: provenance must start with one of {PROVENANCE_TAGS}")


#: ``Entry.carries`` of a check whose source is the one its input gives (a band's ``source``).
GIVEN = "<the source given with the input>"

_E = Entry

#: Appended to the rule of every check decided on bounds (docs/decisions.md D8).
BOUNDS = (" A D-value outside the measured curve is bounded, never extrapolated (below the finest point it is at "
          "most that size, above the coarsest at least that size); the check is decided when every value within "
          "the bounds gives the same outcome, and the message names the bound; otherwise it needs data.")

ENTRIES: tuple[Entry, ...] = (
    # ---- lab QA and band checks (computed in tamis.lab.sieve_analysis / tamis.lab.bands) ----
    _E("qa.mass_balance", "", "Sieving mass balance",
       "The sum of the masses retained and in the pan agrees with the mass put on the sieves within 0.3 % "
       "of the original dry mass; otherwise the result is not used for acceptance.",
       "Every sieve test entered as masses (computed in tamis.lab.sieve_analysis).",
       "ASTM C136/C136M, Sieve Analysis of Fine and Coarse Aggregates", "C136/C136M-14",
       "Section 8.7 (laboratory checklist item 9)", "read (C136/C136M-14 checklist item 9)",
       "ASTM C136/C136M-14, mass check after sieving: within 0.3 % of the original dry mass (checklist item 9)"),
    _E("qa.sieve_overload", "", "Sieve overload",
       "The mass retained on a sieve finer than 4.75 mm does not exceed 7 kg/m2 of sieving surface; at and "
       "above 4.75 mm, 2.5 x opening [mm] x sieving area [m2] kg.",
       "Every sieve test entered as masses (computed in tamis.lab.sieve_analysis).",
       "ASTM C136/C136M, Sieve Analysis of Fine and Coarse Aggregates", "C136/C136M-19",
       "Section 8.3", "read (Section 8.3 excerpt); from memory (effective sieving areas of the frames)",
       "ASTM C136/C136M-19 §8.3: 7 kg/m2 below 4.75 mm, 2.5 x opening(mm) x area(m2) kg at and above "
       "4.75 mm; effective frame areas from memory"),
    _E("qa.specimen_mass", "", "Minimum test specimen mass",
       "The dry mass of the specimen is at least the minimum for its nominal maximum size (fine aggregate "
       "300 g; coarse aggregate by nominal maximum size).",
       "Every sieve test entered as masses (computed in tamis.lab.sieve_analysis).",
       "ASTM C136/C136M, Sieve Analysis of Fine and Coarse Aggregates; nominal maximum size per WAQTC FOP for "
       "AASHTO T 2", "C136/C136M-19; WAQTC FOP October 2014", "minimum mass table; nominal maximum size "
       "definition", "from memory (mass table); read (nominal maximum size definition)",
       "ASTM C136, minimum test-sample mass (fine aggregate 300 g; coarse aggregate by nominal maximum "
       "size), from memory; nominal maximum size per WAQTC FOP for AASHTO T 2"),
    _E("band.compliance", "", "Specification band",
       "At every sieve of the band the percent passing lies between the band's minimum and maximum.",
       "When a band is given (computed in tamis.lab.bands).",
       "The project specification (the band entered by the user), or a preset's own source", "as entered",
       "the band limits", "common practice, no source", GIVEN),
    _E("band.fineness_modulus", "", "Fineness modulus within the band's range",
       "The fineness modulus (ASTM C125 sieves) lies between the band's fm_min and fm_max (C33 fine "
       "aggregate: 2.3 to 3.1).", "When the band gives fm_min or fm_max (computed in tamis.lab.bands).",
       "ASTM C33/C33M Table 1 notes; ASTM C125 definition", "edition of the reproduction not stated",
       "fineness modulus limits", "read in a secondary source (published reproduction of C33)", GIVEN),
    _E("band.between_sieves", "", "Most passing one sieve and retained on the next",
       "At most max_between_sieves_pct (C33 fine aggregate: 45 %) of the sample between two consecutive band "
       "sieves.", "When the band gives max_between_sieves_pct (computed in tamis.lab.bands).",
       "ASTM C33/C33M Table 1 notes", "edition of the reproduction not stated",
       "the 45 % rule", "read in a secondary source (published reproduction of C33)", GIVEN),
    # ---- retention (maximum D15F) ----
    _E("filter.retention", "nrcs-1994", "Retention: maximum D15 of the filter",
       "Category 1 (A > 85 %): D15F <= 9 x d85B, not less than 0.2 mm (dispersive base: 6.5 x d85B, not less "
       "than 0.2 mm). Category 2 (40 <= A <= 85 %): D15F <= 0.7 mm (dispersive: 0.5 mm). Category 3 "
       "(15 <= A < 40 %): D15F <= ((40 - A)/(40 - 15)) x (4 x d85B - 0.7 mm) + 0.7 mm, with 0.7 mm when "
       "4 x d85B < 0.7 mm (no dispersive variant known: the non-dispersive limit is used and the check "
       "warns). Category 4 (A < 15 %): D15F <= 4 x d85B. A and d85B are read on the base regraded on "
       "4.75 mm; the category edges are decided on A = P(0.075) x 100 / P(4.75) in decimal, to 12 significant "
       "digits, so that binary rounding cannot move a base across an edge. Within 2 points of A = 85 % both "
       "neighbouring limits are computed and the check warns "
       "unless both pass. For a category 1 or 2 base whose dispersion is not reported (neither the base's "
       "dispersive flag nor rules.dispersive), the check also warns when the filter meets only the "
       "non-dispersive limit. Every limit is non-decreasing in d85B, so a d85B below the base's finest point "
       "bounds it (category 1: 9 x d85B at most 0.2 mm means the floor governs)." + BOUNDS,
       "A filter placed against a base soil; base curve reaching 0.075 mm.",
       NEH_1994, NEH_1994_EDITION, "base-soil category table, maximum D15F table (table numbers not verified), design steps 3-5",
       "from memory (categories, non-dispersive limits); read in a secondary source (cat 1 and 4 multipliers, "
       "6.5 x d85B dispersive)"),
    _E("filter.retention", "usbr-2011", "Retention: maximum D15 of the filter",
       "As nrcs-1994: the same category limits, dispersive variants, regrading on 4.75 mm and bounds.",
       "A filter placed against a base soil.", USBR_2011, "Phase 4 (Final), November 2011",
       "Chapter 5, filter design steps (base-soil categories and D15F max)", "from memory"),
    _E("filter.retention", "fema-2011", "Retention: maximum D15 of the filter",
       "As nrcs-1994: the same category limits, dispersive variants, regrading on 4.75 mm and bounds.",
       "A filter placed against a base soil.", FEMA_2011, "October 2011",
       "Chapter 5 (Filter Design Procedure), design steps 4 and 5", "from memory"),
    _E("filter.retention", "terzaghi", "Retention: D15F / D85B",
       "D15F <= ratio x D85B on the curves as given (no regrading), ratio from rules.terzaghi_ratio (4 to 5, "
       "default 4)." + BOUNDS, "A filter placed against a base soil.", TERZAGHI, "1948 and later editions",
       "filter criteria (retention ratio)", "from memory"),
    # ---- permeability (minimum D15F) ----
    _E("filter.permeability", "nrcs-1994", "Permeability: minimum D15 of the filter",
       "D15F >= 4 x d15B of the base before regrading, and not less than 0.1 mm. When d15B lies below the "
       "base's finest point and 4 x that point's size is at most 0.1 mm, the floor governs." + BOUNDS,
       "A filter placed against a base soil.", NEH_1994, NEH_1994_EDITION,
       "minimum D15F criterion, design step 6", "from memory"),
    _E("filter.permeability", "usbr-2011", "Permeability: minimum D15 of the filter",
       "D15F >= 5 x d15B of the base before regrading, and not less than 0.1 mm. When d15B lies below the "
       "base's finest point and 5 x that point's size is at most 0.1 mm, the floor governs." + BOUNDS,
       "A filter placed against a base soil.", USBR_2011, "Phase 4 (Final), November 2011",
       "Chapter 5, permeability criterion", "from memory"),
    _E("filter.permeability", "fema-2011", "Permeability: minimum D15 of the filter",
       "D15F >= 5 x d15B of the base before regrading, and not less than 0.1 mm. When d15B lies below the "
       "base's finest point and 5 x that point's size is at most 0.1 mm, the floor governs." + BOUNDS,
       "A filter placed against a base soil.", FEMA_2011, "October 2011",
       "Chapter 5 (Filter Design Procedure), design step 6",
       "from memory"),
    _E("filter.permeability", "terzaghi", "Permeability: D15F / D15B",
       "D15F >= ratio x D15B, ratio from rules.terzaghi_ratio (4 to 5, default 4)." + BOUNDS,
       "A filter placed against a base soil.", TERZAGHI, "1948 and later editions",
       "filter criteria (permeability ratio)", "from memory"),
    # ---- filter material ----
    _E("filter.fines", "", "Fines content of the filter",
       "At most 5 % passing 0.075 mm (No. 200), on the material as tested (placed and compacted material "
       "is the stricter case). A curve stopping above 0.075 mm passes when its finest percentage is within "
       "5 % (no more can pass 0.075 mm).", "Every filter sample.", NEH_1994, NEH_1994_EDITION,
       "design step 8 (D5 min 0.075 mm); same in FEMA 2011 and USBR 2011", "from memory"),
    _E("filter.plasticity", "", "Fines of the filter are nonplastic",
       "The fines must be nonplastic (NP, or plasticity index 0); a positive PI fails; unknown plasticity "
       "needs data.", "Every filter sample with fines.", NEH_1994, NEH_1994_EDITION,
       "design step 8; FEMA 2011 (sand-castle test)", "from memory"),
    _E("filter.max_size", "", "Maximum particle size of the filter",
       "D100 <= 75 mm (3 in). D100 is the finest sieve that passes 100 %; material retained on a coarsest "
       "sieve of 75 mm or more fails (D100 is larger than that sieve).", "Every filter sample.",
       NEH_1994, NEH_1994_EDITION, "design step 8 (D100 max)", "from memory"),
    _E("filter.segregation", "", "Segregation: maximum D90 for the filter's D10",
       "D90 at most 20 / 25 / 30 / 40 / 50 / 60 mm for D10 up to 0.5 / 1 / 2 / 5 / 10 / above 10 mm. A D10 on "
       "a row edge takes the stricter row (our choice). When D10 lies below the finest sieve and that sieve "
       "is at most 0.5 mm, the first row applies without D10." + BOUNDS, "Every filter sample.", NEH_1994,
       NEH_1994_EDITION, "segregation table (D10 to maximum D90); same values in FEMA 2011 and USBR 2011",
       "from memory"),
    # ---- internal stability ----
    _E("stability.kezdi", "", "Internal stability: Kezdi split test",
       "Split the curve at every size; renormalise the coarse and the fine part to 100 %; stable when "
       "D'15 (coarse) / d'85 (fine) <= 4 at every split.",
       "Domain (from memory): cohesionless granular soils, every split of the measured curve. For a filter "
       "within the 5 % fines rule, splits whose fine part is more than half fines are not evaluated (derived, "
       "docs/decisions.md D9). Needs data when splits near the fine or coarse end cannot be read.",
       "Kezdi, A., Soil Physics: Selected Topics", "Elsevier, 1979", "the split-curve criterion",
       "from memory"),
    _E("stability.kenney_lau", "", "Internal stability: Kenney & Lau H/F",
       "F = P(d), H = P(4d) - P(d); stable when (H/F)min >= the boundary, scanned over F <= 20 % for "
       "widely graded (Cu > 3) and F <= 30 % for narrowly graded (Cu <= 3) soils. Boundary 1.0 (1986 "
       "reply, default) or 1.3 (1985 paper), set by rules.kenney_lau_boundary.",
       "Domain (from memory): cohesionless granular soils (the tests were on sand and gravel filter "
       "materials), F over the range above. For a filter within the 5 % fines rule the scan starts at 0.075 mm "
       "(docs/decisions.md D9). Needs data when the curve stops above F = 0 without a failure found.",
       "Kenney, T.C. & Lau, D., Internal stability of granular filters, Canadian Geotechnical Journal",
       "22(2), 1985; reply 23, 1986", "H/F boundary and F ranges", "from memory"),
    _E("stability.li_fannin", "", "Internal stability: Li & Fannin",
       "Unstable when H < F for F < 15 %, or H < 15 % for F >= 15 %, over the Kenney & Lau F range.",
       "Domain (from memory): cohesionless widely graded granular soils, over the Kenney & Lau F range; the "
       "fines of a filter within the 5 % rule as for Kenney & Lau. Needs data as for Kenney & Lau.",
       "Li, M. & Fannin, R.J., Comparison of two criteria for internal stability of granular soil, "
       "Canadian Geotechnical Journal", "45, 2008, pp. 1303-1309", "combined Kezdi / Kenney-Lau boundary",
       "from memory"),
    _E("stability.burenkova", "", "Internal stability: Burenkova",
       "h' = d90/d60, h'' = d90/d15; non-suffusive when 0.76 log10(h'') + 1 < h' < 1.86 log10(h'') + 1.",
       "Domain (from memory): non-cohesive graded soils (sands and sandy gravels); read on D15, D60 and D90 "
       "of the measured curve.",
       "Burenkova, V.V., Assessment of suffusion in non-cohesive and graded soils, Filters in Geotechnical "
       "and Hydraulic Engineering", "Balkema, 1993", "the h'-h'' bounds", "from memory"),
    _E("stability.wan_fell", "", "Internal stability: Wan & Fell probability",
       "P(unstable) = e^Z / (1 + e^Z), Z = 2.378 log10(h'') - 3.648 h' + 3.701. The check warns when "
       "P >= 0.5 (the cut-off is ours, no source). Outside its calibration (at most 5 % fines) it is not "
       "applicable, except that P >= 0.5 still warns with the caveat.",
       "Domain (from memory): broadly graded silt-sand-gravel and clay-silt-sand-gravel soils, not gap-graded.",
       "Wan, C.F. & Fell, R., Assessing the potential of internal instability and suffusion in embankment "
       "dams and their foundations, Journal of Geotechnical and Geoenvironmental Engineering",
       "134(3), 2008, pp. 401-407", "logistic regression on h' and h''",
       "from memory (coefficients); derived (the 0.5 cut-off)"),
    _E("stability.istomina", "", "Internal stability: Istomina Cu screen",
       "Cu = D60/D10 <= 10 stable; 10 < Cu <= 20 transitional (warns); Cu > 20 unstable.",
       "Domain (from memory): cohesionless soils, a screen on Cu alone (needs D60 and D10, or a lower bound "
       "of Cu above 20).",
       "Istomina, V.S., Filtration stability of soils", "Gostroizdat, Moscow, 1957", "Cu limits",
       "from memory"),
    # ---- permeability estimates (never enter the verdict) ----
    _E("permeability.hazen", "", "Estimate: Hazen",
       "k [cm/s] = C_H x D10[cm]^2 with C_H = rules.hazen_c (default 100). An estimate, not a rule: status "
       "not_applicable. Validity kept as data: D10 0.1 to 3 mm, Cu < 5; outside gives a warning finding.",
       "Loose clean sands.",
       "Carrier, W.D., Goodbye, Hazen; Hello, Kozeny-Carman, Journal of Geotechnical and Geoenvironmental "
       "Engineering", "129(11), 2003, p. 1054", "Eq. 1 (Hazen); validity range",
       "read (equation form and loose clean sands); from memory (C_H = 100, D10 0.1-3 mm, Cu < 5)"),
    _E("permeability.kozeny_carman", "", "Estimate: Kozeny-Carman",
       "k [cm/s, 20 C] = 1.99e4 x D_eff[cm]^2 x (1/SF^2) x e^3/(1+e), with 1/D_eff = sum f_i / "
       "(D_li^0.404 x D_si^0.595) over the fractions between sieves; the fraction below the finest sieve "
       "is spread down to rules.kc_pan_lower_mm (default half the finest sieve). An estimate: status "
       "not_applicable. Needs rules.void_ratio; shape factor rules.shape_factor (default 7.0).",
       "Nonplastic soils; not for plastic fines.",
       "Carrier, W.D., Goodbye, Hazen; Hello, Kozeny-Carman, Journal of Geotechnical and Geoenvironmental "
       "Engineering", "129(11), 2003", "Kozeny-Carman with effective diameter; Fair & Hatch shape factors",
       "from memory"),
    _E("permeability.ratio", "", "Estimate: filter / base permeability ratio",
       "kF/kB is estimated as (D15F/D15B)^2 (k varies with D15 squared). An estimate: status not_applicable.",
       "A filter placed against a base soil.", "Terzaghi & Peck, Soil Mechanics in Engineering Practice",
       "1948 and later editions", "rationale of the D15 permeability ratio", "from memory"),
)

_BY_KEY = {(e.id, e.variant): e for e in ENTRIES}


def check_ids() -> list[str]:
    """Every check id the core can emit, sorted."""
    return sorted({e.id for e in ENTRIES})


def entry(check_id: str, variant: str = "") -> Entry:
    """The registry entry for ``check_id`` (and the rule set ``variant`` when it has one)."""
    if (check_id, variant) in _BY_KEY:
        return _BY_KEY[(check_id, variant)]
    if (check_id, "") in _BY_KEY:
        return _BY_KEY[(check_id, "")]
    raise KeyError(f"check id {check_id!r} (variant {variant!r}) is not registered")


def source_text(check_id: str, variant: str = "", given: str = "") -> str:
    """The ``source`` string a check carries: document, edition, locator, provenance
    (or the entry's own :attr:`Entry.carries`); for an entry that carries the source
    its input gives (:data:`GIVEN`), ``given``, which must then be named."""
    text = _SOURCE_TEXT.get((check_id, variant))
    if text is not None and not given:
        return text
    e = entry(check_id, variant)
    if e.carries == GIVEN:
        if not given:
            raise ValueError(f"{check_id} carries the source given with its input; none was given")
        return given
    if given:
        raise ValueError(f"{check_id} carries the registry's source, not one given with its input")
    return e.carries or f"{e.source}, {e.edition}, {e.locator} [{e.provenance}]"


#: (id, variant) -> the source text of each entry that carries the registry's own, composed once at import
#: (:func:`source_text` looks any other pair up as before).
_SOURCE_TEXT = {(e.id, e.variant): e.carries or f"{e.source}, {e.edition}, {e.locator} [{e.provenance}]"
                for e in ENTRIES if e.carries != GIVEN}


def make_check(check_id: str, status: str, message: str, *, variant: str = "", value=None, limit=None,
               relation=None, unit: str = "", extra: dict | None = None, advisory: bool = False,
               given: str = "") -> Check:
    """A :class:`~tamis.checks.Check` whose ``source`` comes from the registry
    (:func:`source_text` of ``check_id``, ``variant`` and ``given``)."""
    return new_check(check_id, status, message, value, limit, relation, unit, source_text(check_id, variant, given),
                     dict(extra or {}), advisory)


def limit_check(check_id: str, value, relation: str, limit, unit: str, what: str, *, variant: str = "",
                extra: dict | None = None, missing: str = "") -> Check:
    """Compare ``value relation limit`` on unrounded numbers; ``needs_data`` when either is None."""
    if value is None or limit is None:
        return make_check(check_id, NEEDS_DATA, missing or f"{what}: not enough data to decide.",
                          variant=variant, value=value, limit=limit, relation=relation, unit=unit, extra=extra)
    ok = compare(value, relation, limit)
    msg = f"{what}: {value:.4g} {unit} {'meets' if ok else 'breaks'} the limit {relation} {limit:.4g} {unit}."
    return make_check(check_id, PASS if ok else FAIL, msg, variant=variant, value=value, limit=limit,
                      relation=relation, unit=unit, extra=extra)
