"""Filter against base: the retention (maximum D15F) and permeability (minimum
D15F) checks, for every rule set.

Sources per rule set are in the registry (``filter.retention`` and
``filter.permeability`` variants); thresholds in :mod:`tamis.criteria.tables`.
"""

from __future__ import annotations

from ..checks import FAIL, NEEDS_DATA, PASS, WARN, Check, compare
from .base import BaseAnalysis
from ..registry import make_check
from .nrcs import d15f_max_mm, d15f_min_mm
from .terzaghi import terzaghi_d15f_max_mm, terzaghi_d15f_min_mm


def retention_limit(b: BaseAnalysis, rs: dict, rules: dict) -> dict:
    """Maximum D15F [mm] for base ``b`` under rule set ``rs``.

    Returns ``{"limit_mm", "rule", "alternatives": [(label, limit_mm)], "caveats": [str]}``;
    ``limit_mm`` is None when the base lacks the data. ``alternatives`` are
    limits that a conservative reading also asks the filter to meet for a
    pass (the other side of the 85 % edge; the dispersive limit when
    dispersion is unknown); failing only those gives ``warn``.
    """
    out = {"limit_mm": None, "rule": "", "alternatives": [], "caveats": []}
    if rs["family"] == "terzaghi":
        if b.d85b_mm is None:
            return out
        out["limit_mm"] = terzaghi_d15f_max_mm(b.d85b_mm, rules["terzaghi_ratio"])
        out["rule"] = f"{rules['terzaghi_ratio']:g} x D85B"
        return out
    if b.category is None or b.d85b_mm is None:
        return out
    table = rs["retention"]
    disp = bool(b.dispersive)
    out["limit_mm"], out["rule"] = d15f_max_mm(b.category, b.a_pct, b.d85b_mm, disp, table)
    if b.near_85:
        other = 2 if b.category == 1 else 1
        lim, _ = d15f_max_mm(other, b.a_pct, b.d85b_mm, disp, table)
        out["alternatives"].append((f"category {other} (A within 2 points of 85 %)", lim))
    if b.dispersive is None and b.category in (1, 2):
        lim, _ = d15f_max_mm(b.category, b.a_pct, b.d85b_mm, True, table)
        out["alternatives"].append(("dispersive base (dispersion not reported)", lim))
    if b.category == 3 and disp and not table["cat3_dispersive_known"]:
        out["caveats"].append("No dispersive variant of the category-3 limit is known here; the non-dispersive "
                              "limit was used and the engineer must decide.")
    return out


def retention_check(d15f_mm: float | None, b: BaseAnalysis, rs: dict, rules: dict) -> tuple[Check, dict]:
    """``filter.retention``: D15F <= maximum D15F. Returns the check and the limit details."""
    crit = rules["criteria"]
    lim = retention_limit(b, rs, rules)
    extra = {"base_category": b.category, "a_pct": b.a_pct, "d85b_mm": b.d85b_mm, "rule": lim["rule"],
             "alternative_limits_mm": [{"case": c, "limit_mm": v} for c, v in lim["alternatives"]]}
    if d15f_mm is None or lim["limit_mm"] is None:
        why = "the filter's D15 is outside its measured curve" if d15f_mm is None else \
            "the base's category or d85B could not be found from its curve"
        return make_check("filter.retention", NEEDS_DATA, f"Retention cannot be checked: {why}.", variant=crit,
                          value=d15f_mm, limit=lim["limit_mm"], relation="<=", unit="mm", extra=extra), lim
    limit = lim["limit_mm"]
    ok = compare(d15f_mm, "<=", limit)
    failed_alt = [(c, v) for c, v in lim["alternatives"] if not compare(d15f_mm, "<=", v)]
    if not ok:
        status, msg = FAIL, (f"D15 of the filter {d15f_mm:.4g} mm exceeds the maximum {limit:.4g} mm "
                             f"({lim['rule']}): the filter may not hold back the base.")
    elif failed_alt:
        status = WARN
        msg = (f"D15 of the filter {d15f_mm:.4g} mm meets the maximum {limit:.4g} mm ({lim['rule']}) but not "
               + "; ".join(f"{v:.4g} mm for {c}" for c, v in failed_alt) + ".")
    else:
        status = PASS
        msg = f"D15 of the filter {d15f_mm:.4g} mm is within the maximum {limit:.4g} mm ({lim['rule']})."
    if lim["caveats"]:
        msg += " " + " ".join(lim["caveats"])
        if status == PASS:
            status = WARN
    return make_check("filter.retention", status, msg, variant=crit, value=d15f_mm, limit=limit, relation="<=",
                      unit="mm", extra=extra), lim


def permeability_limit(b: BaseAnalysis, rs: dict, rules: dict) -> tuple[float | None, str]:
    """Minimum D15F [mm] for base ``b`` and the rule text; None without d15B."""
    if b.d15b_mm is None:
        return None, ""
    if rs["family"] == "terzaghi":
        r = rules["terzaghi_ratio"]
        return terzaghi_d15f_min_mm(b.d15b_mm, r), f"{r:g} x D15B"
    m, f = rs["permeability_multiplier"], rs["permeability_floor_mm"]
    return d15f_min_mm(b.d15b_mm, m, f), f"{m:g} x d15B (before regrading), not less than {f:g} mm"


def permeability_check(d15f_mm: float | None, b: BaseAnalysis, rs: dict, rules: dict) -> Check:
    """``filter.permeability``: D15F >= minimum D15F."""
    crit = rules["criteria"]
    limit, rule = permeability_limit(b, rs, rules)
    extra = {"d15b_mm": b.d15b_mm, "rule": rule}
    if d15f_mm is None or limit is None:
        why = "the filter's D15 is outside its measured curve" if d15f_mm is None else \
            "the base's d15 lies below its finest sieve (add hydrometer points)"
        return make_check("filter.permeability", NEEDS_DATA, f"Permeability cannot be checked: {why}.",
                          variant=crit, value=d15f_mm, limit=limit, relation=">=", unit="mm", extra=extra)
    ok = compare(d15f_mm, ">=", limit)
    msg = (f"D15 of the filter {d15f_mm:.4g} mm {'is at least' if ok else 'is below'} the minimum "
           f"{limit:.4g} mm ({rule})" + ("." if ok else ": the filter may not drain freely enough."))
    return make_check("filter.permeability", PASS if ok else FAIL, msg, variant=crit, value=d15f_mm, limit=limit,
                      relation=">=", unit="mm", extra=extra)


