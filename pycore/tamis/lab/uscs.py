"""USCS group symbol and group name (ASTM D2487).

Rules, with where they come from:

- Classification on the fraction finer than 75 mm (3 in): ASTM D2487-17 §1.2
  (read). Coarse-grained when less than 50 % passes the No. 200 (0.075 mm).
- Gravel when more than half of the coarse fraction is retained on the No. 4
  (4.75 mm), else sand (read in published reproductions of D2487).
- Clean (fines < 5 %): GW when Cu >= 4 and 1 <= Cc <= 3, else GP; SW when
  Cu >= 6 and 1 <= Cc <= 3, else SP (read in reproductions of the D2487
  criteria; ">=" from memory).
- Fines 5 to 12 %: dual symbols GW-GM, GW-GC, GP-GM, GP-GC, SW-SM, SW-SC,
  SP-SM, SP-SC (read); -GC/-SC when the fines are CL, CH or CL-ML, -GM/-SM
  when ML or MH (from memory).
- Fines over 12 %: GM/SM (fines ML or MH), GC/SC (CL or CH), GC-GM/SC-SM
  (CL-ML) (read).
- Plasticity chart: A-line PI = 0.73 (LL - 20) (read); LL = 50 divides L
  from H; CL: PI > 7 on or above the A-line; ML: PI < 4 or below it; CL-ML:
  4 <= PI <= 7 on or above it (from memory). U-line PI = 0.9 (LL - 8),
  vertical at LL = 16 (from memory): a point above it is a warning.
- Group names: "with sand" / "with gravel" at 15 % or more of the other
  coarse fraction; fine-grained names "with sand/gravel" for 15-29 %
  plus-No. 200 and "sandy/gravelly" from 30 % (from memory).

Organic soils (OL, OH, PT) need the oven-dried liquid limit and are not
classified here. When data are missing the symbol is ``None`` and ``needs``
says what would decide it; nothing is guessed.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from decimal import ROUND_HALF_EVEN, Context, Decimal

from .curve import COBBLE_MM, GRAVEL_SAND_MM, SAND_FINES_MM, Curve, Fractions, coefficient_of_curvature, \
    coefficient_of_uniformity, fractions, passing_at, regrade, size_at

SOURCE = "ASTM D2487 (USCS); see docs/methods.md for which rules were read and which are from memory"
NEEDS_LIMITS = "needs Atterberg limits (liquid limit and plasticity index) or a nonplastic result"
DECIDE_DIGITS = 12   # significant digits of a percentage compared with a classification edge


def decided_pct(num_pct: float, minus_pct: float = 0.0, of_pct: float = 100.0) -> float:
    """(num_pct - minus_pct) x 100 / of_pct [%] as an edge sees it: in decimal on the percentages' shortest
    decimal form, rounded to 12 significant digits.

    Used where a percentage is compared with a published edge (USCS 5, 12, 50 %, gravel against sand;
    base categories 15, 40, 85 %): float subtraction and scaling leave a value that is exactly on an
    edge one unit in the last place to either side (55.3 - 10.6 is 44.699999999999996, 4.545 x 100 / 90.9
    is 4.999999999999999), and that noise must not decide a class. Twelve digits are far below any
    measured precision and far above the noise (about 1e-16).
    """
    c = _CTX_EXACT
    v = c.divide(c.multiply(c.subtract(Decimal(repr(num_pct)), Decimal(repr(minus_pct))), _HUNDRED),
                 Decimal(repr(of_pct)))
    return float(_CTX_DECIDE.plus(v))


#: The decimal contexts of :func:`decided_pct` (40 digits for the arithmetic, :data:`DECIDE_DIGITS` for the
#: comparison; rounding half even, as the default context). Never modified.
_CTX_EXACT = Context(prec=40, rounding=ROUND_HALF_EVEN)
_CTX_DECIDE = Context(prec=DECIDE_DIGITS, rounding=ROUND_HALF_EVEN)
_HUNDRED = Decimal(100)


def decision_fractions(curve: Curve, cobbles: bool) -> Fractions:
    """Gravel, sand and fines [%] of ``curve`` (of its minus-75 mm fraction when ``cobbles``), computed
    with :func:`decided_pct` from the percentages passing 75, 4.75 and 0.075 mm."""
    p75, p4, p200 = (passing_at(curve, d) for d in (COBBLE_MM, GRAVEL_SAND_MM, SAND_FINES_MM))
    of = p75 if (cobbles and p75) else 100.0
    gravel = None if (p75 is None or p4 is None) else decided_pct(p75, p4, of)
    sand = None if (p4 is None or p200 is None) else decided_pct(p4, p200, of)
    fines = None if p200 is None else decided_pct(p200, 0.0, of)
    return Fractions(0.0 if cobbles else (None if p75 is None else decided_pct(100.0, p75)), gravel, sand, fines)


@dataclass(frozen=True)
class Plasticity:
    """Atterberg limits [%] of the fines (or the soil), or nonplastic."""

    nonplastic: bool | None = None
    liquid_limit: float | None = None
    plasticity_index: float | None = None

    @property
    def known(self) -> bool:
        return bool(self.nonplastic) or (self.liquid_limit is not None and self.plasticity_index is not None)


def a_line_pi(ll: float) -> float:
    """Plasticity index on the A-line [%] at liquid limit ``ll`` [%]: 0.73 (LL - 20)."""
    return 0.73 * (ll - 20.0)


def above_u_line(ll: float, pi: float) -> bool:
    """True when (LL, PI) lies above the U-line, PI = 0.9 (LL - 8), vertical at LL = 16."""
    if ll < 16.0:
        return pi > 0.0
    return pi > 0.9 * (ll - 8.0)


def fines_class(p: Plasticity) -> tuple[str | None, list[str]]:
    """``("CL"|"ML"|"CL-ML"|"CH"|"MH", basis)`` from the plasticity chart, or ``(None, [])``."""
    if p.nonplastic:
        return "ML", ["nonplastic fines: ML"]
    if p.liquid_limit is None or p.plasticity_index is None:
        return None, []
    ll, pi = p.liquid_limit, p.plasticity_index
    a = a_line_pi(ll)
    on_or_above = pi >= a
    where = f"PI {pi:g} {'on or above' if on_or_above else 'below'} the A-line ({a:.2f} at LL {ll:g})"
    if ll >= 50.0:
        return ("CH" if on_or_above else "MH"), [f"LL {ll:g} >= 50", where]
    if on_or_above and pi > 7.0:
        return "CL", [f"LL {ll:g} < 50", where, "PI > 7"]
    if on_or_above and pi >= 4.0:
        return "CL-ML", [f"LL {ll:g} < 50", where, "4 <= PI <= 7"]
    return "ML", [f"LL {ll:g} < 50", where if not on_or_above else f"PI {pi:g} < 4"]


_FINE_NAMES = {"CL": "lean clay", "ML": "silt", "CL-ML": "silty clay", "CH": "fat clay", "MH": "elastic silt"}


@dataclass(frozen=True)
class Uscs:
    symbol: str | None
    name: str | None
    basis: list = field(default_factory=list)
    needs: list = field(default_factory=list)
    warnings: list = field(default_factory=list)
    candidates: list = field(default_factory=list)

    def to_dict(self) -> dict:
        d = {"symbol": self.symbol, "name": self.name, "basis": list(self.basis), "needs": list(self.needs)}
        if self.candidates:
            d["candidates"] = list(self.candidates)
        return d


def _coarse_name(major: str, graded: str | None, fines: str | None, band: str, other_pct: float) -> str:
    """Group name of a coarse-grained soil (``major`` "G" or "S")."""
    noun = "gravel" if major == "G" else "sand"
    other = "sand" if major == "G" else "gravel"
    with_other = other_pct >= 15.0
    if band == "clean":
        base = ("well-graded " if graded == "W" else "poorly graded ") + noun
        return base + (f" with {other}" if with_other else "")
    if band == "dual":
        kind = {"M": "silt", "C": "clay"}[fines]
        base = ("well-graded " if graded == "W" else "poorly graded ") + noun
        return base + f" with {kind}" + (f" and {other}" if with_other else "")
    adj = {"M": "silty", "C": "clayey", "CM": "silty, clayey"}
    return adj[fines] + " " + noun + (f" with {other}" if with_other else "")


def _graded(major: str, cu: float, cc: float) -> tuple[str, str]:
    need_cu = 4.0 if major == "G" else 6.0
    w = cu >= need_cu and 1.0 <= cc <= 3.0
    return ("W" if w else "P"), (f"Cu {cu:.2f} {'>=' if cu >= need_cu else '<'} {need_cu:g} and Cc {cc:.2f} "
                                 f"{'within' if 1.0 <= cc <= 3.0 else 'outside'} 1..3")


def classify_coarse(gravel: float, sand: float, fines: float, cu: float | None, cc: float | None,
                    p: Plasticity) -> Uscs:
    """Coarse-grained soil (fines < 50 %) from fractions of the minus-75 mm part [%]."""
    major = "G" if gravel > sand else "S"
    basis = [f"fines {fines:.2f} % < 50 %: coarse-grained",
             f"gravel {gravel:.2f} % {'>' if major == 'G' else '<='} sand {sand:.2f} %: "
             + ("gravel" if major == "G" else "sand")]
    other_pct = sand if major == "G" else gravel
    needs, graded = [], None
    if fines <= 12.0:
        if cu is None or cc is None:
            needs.append("needs D10 (a hydrometer analysis, ASTM D7928, when more than 10 % passes the finest "
                         "sieve) for Cu and Cc")
        else:
            graded, why = _graded(major, cu, cc)
            basis.append(why)
    if fines < 5.0:
        basis.append(f"fines {fines:.2f} % < 5 %: clean")
        if graded is None:
            return Uscs(None, None, basis, needs, candidates=[major + "W", major + "P"])
        return Uscs(major + graded, _coarse_name(major, graded, None, "clean", other_pct), basis)
    fc, fbasis = fines_class(p)
    basis += fbasis
    if fc is None:
        needs.append(NEEDS_LIMITS)
    band = "dual" if fines <= 12.0 else "fines"
    basis.append(f"fines {fines:.2f} % {'within 5..12 %: dual symbol' if band == 'dual' else '> 12 %'}")
    if band == "dual":
        kind = None if fc is None else ("M" if fc in ("ML", "MH") else "C")
        if graded is None or kind is None:
            gs = [graded] if graded else ["W", "P"]
            ks = [kind] if kind else ["M", "C"]
            return Uscs(None, None, basis, needs,
                        candidates=[f"{major}{g}-{major}{k}" for g in gs for k in ks])
        return Uscs(f"{major}{graded}-{major}{kind}", _coarse_name(major, graded, kind, band, other_pct), basis)
    if fc is None:
        return Uscs(None, None, basis, needs, candidates=[major + "M", major + "C", f"{major}C-{major}M"])
    kind = "CM" if fc == "CL-ML" else ("M" if fc in ("ML", "MH") else "C")
    symbol = f"{major}C-{major}M" if kind == "CM" else major + kind
    return Uscs(symbol, _coarse_name(major, None, kind, band, other_pct), basis)


def classify_fine(gravel: float, sand: float, fines: float, p: Plasticity) -> Uscs:
    """Fine-grained soil (fines >= 50 %), inorganic."""
    basis = [f"fines {fines:.2f} % >= 50 %: fine-grained (inorganic assumed; OL/OH not assessed)"]
    fc, fbasis = fines_class(p)
    if fc is None:
        return Uscs(None, None, basis, [NEEDS_LIMITS], candidates=["CL", "ML", "CL-ML", "CH", "MH"])
    basis += fbasis
    name = _FINE_NAMES[fc]
    coarse = 100.0 - fines
    sandy = sand >= gravel
    if coarse >= 30.0:
        other = gravel if sandy else sand
        name = ("sandy " if sandy else "gravelly ") + name
        if other >= 15.0:
            name += " with gravel" if sandy else " with sand"
    elif coarse >= 15.0:
        name += " with sand" if sandy else " with gravel"
    return Uscs(fc, name, basis)


def classify(curve: Curve, plasticity: Plasticity | None = None) -> Uscs:
    """USCS class of a gradation ``curve`` with optional plasticity of its fines."""
    p = plasticity or Plasticity()
    warnings, basis = [], []
    if p.liquid_limit is not None and p.plasticity_index is not None and \
            above_u_line(p.liquid_limit, p.plasticity_index):
        warnings.append(f"LL {p.liquid_limit:g}, PI {p.plasticity_index:g} lies above the U-line "
                        "(PI = 0.9 (LL - 8)): recheck the Atterberg limits")
    fr = fractions(curve)
    c = curve
    cobbles = fr.cobbles_pct is not None and fr.cobbles_pct > 0
    if cobbles:
        rg = regrade(curve, COBBLE_MM)
        if rg is None:
            return Uscs(None, None, ["nothing passes 75 mm"], ["needs the fraction finer than 75 mm"],
                        warnings)
        c = rg.curve
        basis.append(f"{100.0 - rg.passing_on_pct:.2f} % cobbles and boulders (> 75 mm) set aside; "
                     "classified on the minus-75 mm fraction (name: add 'with cobbles')")
    fr = decision_fractions(curve, cobbles)
    if fr.fines_pct is not None and fr.fines_pct >= 50.0 and fr.gravel_pct is None:
        # The top sieve retains material of unknown size, but the minus-75 mm fraction has at least as
        # large a share of fines as the whole sample (fines / P(75) >= fines), so the soil is fine-grained
        # (D2487: 50 % or more passes No. 200) and its symbol follows from the plasticity alone. The group
        # name needs the coarse fractions, which are not known.
        u = classify_fine(0.0, 0.0, fr.fines_pct, p)
        need = list(u.needs) + ["needs a top sieve that passes 100 % (the gravel fraction is not known) "
                                "for the group name"]
        return Uscs(u.symbol, None, basis + list(u.basis), need, warnings, list(u.candidates))
    if fr.fines_pct is None or fr.sand_pct is None or fr.gravel_pct is None:
        need = []
        if fr.fines_pct is None:
            need.append("needs the percent passing the No. 200 (0.075 mm) sieve")
        if fr.gravel_pct is None:
            need.append("needs a top sieve that passes 100 % (the gravel fraction is not known)")
        if fr.sand_pct is None and fr.fines_pct is not None and fr.gravel_pct is not None:
            need.append("needs the percent passing the No. 4 (4.75 mm) sieve")
        return Uscs(None, None, basis, need, warnings)
    d10, d30, d60 = size_at(c, 10.0), size_at(c, 30.0), size_at(c, 60.0)
    cu = coefficient_of_uniformity(d60, d10)
    cc = coefficient_of_curvature(d30, d10, d60)
    if fr.fines_pct >= 50.0:
        u = classify_fine(fr.gravel_pct, fr.sand_pct, fr.fines_pct, p)
    else:
        u = classify_coarse(fr.gravel_pct, fr.sand_pct, fr.fines_pct, cu, cc, p)
    name = u.name
    if name and basis:
        name += " with cobbles"
    return Uscs(u.symbol, name, basis + list(u.basis), list(u.needs), warnings, list(u.candidates))
