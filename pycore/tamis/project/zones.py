"""Zone sequences (core -> filter 1 -> filter 2 -> shell): the ``zones`` op.

``op_zones`` checks each adjacent pair of zones with the finer one as the base
and the coarser as the filter, using :func:`tamis.criteria.run_filter_checks`.
The first zone (role ``base``) is regraded on 4.75 mm when gravelly, as the
rule set says; a later zone (role ``filter`` or ``shell``) used as the base of
the next one is not regraded unless ``rules.regrade`` is given: it is a clean
filter (<= 5 % fines), category 4 on its own curve (derived by us from the
category rules applied zone by zone; FEMA 2011 Step 2 exempts some sands and
gravels from regrading, a passage read only in part).
The designed band of a filter is in :mod:`tamis.project.design_band`.

A screening aid: the project specification, local codes and the
engineer of record govern.
"""

from __future__ import annotations

from dataclasses import replace

from .. import SCREENING_NOTICE
from ..criteria import run_filter_checks
from ..criteria.rules import parse_rules
from ..criteria.tables import RULE_SETS
from ..lab.curve import passing_at, size_at
from ..errors import ZONES_MAX, InputError, join, require_list, require_mapping, text
from ..lab.reduction import reduce_test
from ..checks import FAIL, Finding, verdict

ROLES = ("base", "filter", "shell")
INTERFACE_IDS = ("filter.retention", "filter.permeability", "permeability.ratio")



def _parse_zones(req: dict):
    items = require_list(req.get("zones"), "zones", min_len=2, max_len=ZONES_MAX)
    zones = []
    for i, z in enumerate(items):
        p = join("zones", i)
        require_mapping(z, p)
        name = text(z, "name", p, required=True)
        role = text(z, "role", p, default="base" if i == 0 else "filter", choices=ROLES)
        if z.get("test") is None:
            raise InputError("missing_field", f"{join(p, 'test')} is required.", join(p, "test"))
        zones.append({"name": name, "role": role, "red": reduce_test(z["test"], join(p, "test"))})
    return zones


def _at(f: Finding, path: str) -> Finding:
    """The finding placed on a zone's input (criteria findings name "base" or nothing)."""
    return replace(f, field=path) if f.field in ("", "base") else f


def _not_regraded_note(fine: dict, coarse: dict, rules, out, path: str) -> list[Finding]:
    """A note when a gravelly filter zone was used as a base without regrading,
    with the maximum D15F that regrading on 4.75 mm would give."""
    p_on = passing_at(fine["red"].curve, 4.75)
    if p_on is None or p_on >= 100.0:
        return []
    alt = run_filter_checks(coarse["red"], fine["red"], {**(rules or {}), "regrade": True}, "rules")
    lim, alt_lim = out.limits.get("d15_max_mm"), alt.limits.get("d15_max_mm")
    if lim is None or alt_lim is None:
        return []
    d15 = size_at(coarse["red"].curve, 15.0)
    verdict_alt = "" if d15 is None else (" (" + coarse["name"] + " would " + ("pass" if d15 <= alt_lim else "fail")
                                          + " it)")
    return [Finding("note", "zone_base_not_regraded",
                    f"{fine['name']} was taken as a category-4 base on its own curve (maximum D15F "
                    f"{lim:.4g} mm). Regrading it on 4.75 mm, as the NRCS procedure does for gravelly base soils, "
                    f"would give {alt_lim:.4g} mm{verdict_alt}; set rules.regrade to true to apply that reading.",
                    path, "NEH 633-26 (1994) step 3 regrading; FEMA 2011 step 2 exception (read in part)")]


def intermediate_window(finer_limits: dict, coarser_d15_mm: float | None, rules: dict) -> dict:
    """The D15 window [mm] (and minimum D85) an intermediate zone must meet.

    Derivation [derived from the same rules]: against the finer zone the
    intermediate is a filter, so ``d15_min`` (permeability) <= D15 <=
    ``d15_max`` (retention) of this interface. Against the coarser zone the
    intermediate is the base; it is a clean filter (<= 5 % fines), so it is
    category 4: the coarser zone's D15 must be <= m4 x d85 of the intermediate
    (D85 >= D15_coarser / m4) and >= mp x d15 of the intermediate
    (D15 <= D15_coarser / mp), with m4 the category-4 multiplier and mp the
    permeability multiplier of the rule set (the Terzaghi ratio for terzaghi).
    """
    rs = RULE_SETS[rules["criteria"]]
    if rs["family"] == "terzaghi":
        m4 = mp = rules["terzaghi_ratio"]
    else:
        m4, mp = rs["retention"]["cat4_multiplier"], rs["permeability_multiplier"]
    lo, hi = finer_limits.get("d15_min_mm"), finer_limits.get("d15_max_mm")
    d85_min = None
    if coarser_d15_mm is not None:
        cap = coarser_d15_mm / mp
        hi = cap if hi is None else min(hi, cap)
        d85_min = coarser_d15_mm / m4
    feasible = None if (lo is None or hi is None) else lo <= hi
    how = (f"D15 >= {lo if lo is None else f'{lo:.4g}'} mm (permeability against the finer zone); "
           f"D15 <= the smaller of the retention limit against the finer zone and D15 of the coarser zone / "
           f"{mp:g}; D85 >= D15 of the coarser zone / {m4:g} (the intermediate taken as a category-4 base)")
    msg = "An intermediate zone is needed between these two zones."
    if feasible is False:
        msg += " No single zone meets both sides: the window is empty, so more than one intermediate zone may be needed."
    return {"needed": True, "d15_min_mm": lo, "d15_max_mm": hi, "d85_min_mm": d85_min, "feasible": feasible,
            "derivation": how, "message": msg}


def op_zones(req: dict):
    """API op ``zones``: ``{"zones": [{"name", "test", "role"?}, ...], "rules"}`` (finest first)."""
    zones = _parse_zones(req)
    rules = req.get("rules")
    used = parse_rules(rules, "rules")
    findings, all_checks, zone_out, interfaces = [], [], [], []
    for i, z in enumerate(zones):
        red = z["red"]
        checks = list(red.checks)
        findings += [f for f in red.findings]
        if z["role"] == "filter":
            out = run_filter_checks(red, None, rules, "rules")
            checks += out.checks
            findings += [_at(f, join(join("zones", i), "test")) for f in out.findings]
        all_checks += checks
        zone_out.append({"name": z["name"], "role": z["role"], "gradation": red.gradation,
                         "checks": [c.to_dict() for c in checks], "verdict": verdict(checks)})
    for i, (fine, coarse) in enumerate(zip(zones, zones[1:])):
        pair_rules = rules
        if fine["role"] != "base" and not (isinstance(rules, dict) and "regrade" in rules):
            # a filter zone used as a base is clean (<= 5 % fines): category 4 on its own curve, not
            # regraded (regrading a clean gravel on 4.75 mm would keep only its finest few percent)
            pair_rules = {**(rules or {}), "regrade": False}
        out = run_filter_checks(coarse["red"], fine["red"], pair_rules, "rules")
        if pair_rules is not rules:
            findings += _not_regraded_note(fine, coarse, rules, out, join(join("zones", i), "test"))
        checks = [c for c in out.checks if c.id in INTERFACE_IDS]
        # the filter's own findings were reported with its zone; keep those about the base
        findings += [_at(f, join(join("zones", i), "test")) for f in out.findings if f.field == "base"]
        all_checks += checks
        ret = next(c for c in checks if c.id == "filter.retention")
        inter = None
        if ret.status == FAIL:
            inter = intermediate_window(out.limits, size_at(coarse["red"].curve, 15.0), used)
        interfaces.append({"base": fine["name"], "filter": coarse["name"], **out.base_info,
                           "limits": {k: out.limits[k] for k in ("d15_max_mm", "d15_min_mm", "d85b_mm", "d15b_mm")},
                           "checks": [c.to_dict() for c in checks], "verdict": verdict(checks),
                           "intermediate": inter})
    failing = [f"{it['base']} -> {it['filter']}" for it in interfaces if it["verdict"] == "reject"]
    return {"interfaces": interfaces, "zones": zone_out, "failing_interfaces": failing,
            "verdict": verdict(all_checks), "rules": used, "notice": SCREENING_NOTICE}, findings
