"""A sieve test: masses retained (or percent passing) -> a gradation curve.

Input forms (``docs/json-contract.md``):

- **masses**: ``sieves`` with ``retained_g`` per sieve (or, with
  ``"entry": "cumulative"``, ``cumulative_retained_g``), ``pan_g``, and the
  oven-dry mass before washing, ``dry_mass_g`` (or ``moist_mass_g`` with
  ``moisture_pct``), optionally ``washed_dry_mass_g``;
- **passing**: ``passing`` with ``passing_pct`` per sieve (a lab report, for
  example with hydrometer points below 0.075 mm).

Bookkeeping (ASTM C136 with ASTM C117; the cumulative method):

- percent retained r_i = 100 R_i / M0, with M0 the original oven-dry mass;
- cumulative retained CR_i = sum of r_j down to sieve i;
- percent passing P_i = 100 - CR_i; so the wash loss (M0 - Mw) counts as
  passing every sieve, the No. 200 (0.075 mm) included;
- sieving loss L = Mw - sum R_i - pan, reported separately (it falls into the
  finest fraction in P = 100 - CR).

Percentages on the original dry mass including the washed fines: ASTM
C136/C136M-14, laboratory checklist item 11 (read). The cumulative method and
the separate sieving loss: common practice (from memory).

Lab QA checks (``tamis.checks.Check``): ``qa.mass_balance``,
``qa.sieve_overload`` and ``qa.specimen_mass``; see their functions.
"""

from __future__ import annotations

from dataclasses import dataclass
from decimal import Context, Decimal

from .curve import GRAVEL_SAND_MM, SAND_FINES_MM, Curve, make_curve, same_size
from ..errors import LABEL_MAX_CHARS, MASS_MAX_G, POINTS_MAX, InputError, boolean, join, number, opening, \
    require_list, require_mapping, text
from ..checks import FAIL, NEEDS_DATA, NOT_APPLICABLE, PASS, WARN, Check, Finding, compare, new_check
from ..registry import source_text
from .sieves import label_for, resolve_opening
from .tables import DEFAULT_FRAME, FRAMES, MASS_BALANCE_LIMIT_PCT, NMS_RETAINED_PCT, OVERLOAD_COARSE_FACTOR, \
    OVERLOAD_FINE_KG_PER_M2, SPECIMEN_MIN_G

#: Largest moisture content accepted [%] (peats and some clays exceed 100 %; common practice, no source).
MOISTURE_MAX_PCT = 1000.0

#: Relative size of float rounding noise in summed masses [-]: a cumulative mass
#: above the dry mass by less than this is the same mass, not an excess.
FLOAT_NOISE = 1e-12

SRC_MASS_BALANCE = source_text("qa.mass_balance")
SRC_OVERLOAD = source_text("qa.sieve_overload")
SRC_SPECIMEN = source_text("qa.specimen_mass")
_ROUND_FRAMES_MM = {203.0: "203", 203.2: "203", 254.0: "254", 305.0: "305", 304.8: "305"}


@dataclass(frozen=True)
class Row:
    """One sieve of a test, coarsest first. Percentages on the original dry mass [%];
    the masses are ``None`` in the passing form."""

    opening_mm: float
    label: str
    retained_g: float | None
    retained_pct: float | None
    cum_retained_pct: float | None
    passing_pct: float
    entry_index: int

    def to_dict(self) -> dict:
        return {"opening_mm": self.opening_mm, "label": self.label, "retained_g": self.retained_g,
                "retained_pct": self.retained_pct, "cum_retained_pct": self.cum_retained_pct,
                "passing_pct": self.passing_pct}


@dataclass(frozen=True)
class Masses:
    """Mass summary of a test [g] (sieving loss also in % of the dry mass)."""

    dry_mass_g: float
    washed: bool
    washed_dry_mass_g: float | None
    wash_loss_g: float
    pan_g: float
    retained_sum_g: float
    on_sieves_g: float
    sieving_loss_g: float
    sieving_loss_pct: float
    moisture: dict | None

    def to_dict(self) -> dict:
        return {"dry_mass_g": self.dry_mass_g, "washed": self.washed,
                "washed_dry_mass_g": self.washed_dry_mass_g, "wash_loss_g": self.wash_loss_g,
                "pan_g": self.pan_g, "retained_sum_g": self.retained_sum_g,
                "on_sieves_g": self.on_sieves_g, "sieving_loss_g": self.sieving_loss_g,
                "sieving_loss_pct": self.sieving_loss_pct, "moisture": self.moisture}


@dataclass(frozen=True)
class SieveTest:
    """A parsed and reduced test."""

    form: str  # "masses" | "passing"
    rows: tuple[Row, ...]
    curve: Curve
    masses: Masses | None
    checks: tuple[Check, ...]
    findings: tuple[Finding, ...]


def _mass(obj: dict, key: str, path: str, *, required: bool = True, default: float | None = None) -> float | None:
    """A mass [g]: a finite number >= 0 (``negative_mass`` otherwise)."""
    v = number(obj, key, path, required=required, default=default)
    if v is not None and v < 0:
        p = join(path, key)
        raise InputError("negative_mass", f"{p} must not be negative, got {v:g} g.", p)
    if v is not None and v > MASS_MAX_G:
        p = join(path, key)
        raise InputError("out_of_range", f"{p} must be at most {MASS_MAX_G:g} g (100 t), got {v:g} g.", p)
    return v


def _dry_mass(test: dict, path: str, findings: list) -> tuple[float, dict | None]:
    """Oven-dry mass before washing [g], directly or from moist mass and moisture content."""
    has_moist = test.get("moist_mass_g") is not None or test.get("moisture_pct") is not None
    if has_moist:
        if test.get("dry_mass_g") is not None:
            p = join(path, "dry_mass_g")
            raise InputError("conflicting_fields", f"give either {p} or {join(path, 'moist_mass_g')} with "
                             f"{join(path, 'moisture_pct')}, not both.", p)
        moist = _mass(test, "moist_mass_g", path)
        w = number(test, "moisture_pct", path, minimum=0.0, maximum=MOISTURE_MAX_PCT)
        dry = moist / (1.0 + w / 100.0)
        if not dry > 0:
            p = join(path, "moist_mass_g")
            raise InputError("zero_dry_mass", f"{p} must be greater than 0 g.", p)
        findings.append(Finding("note", "moisture_conversion",
                                f"Dry mass {dry:.1f} g = moist mass {moist:g} g / (1 + {w:g} / 100).",
                                join(path, "moist_mass_g"), "oven-dry mass from moisture content (ASTM D2216 "
                                "definition of water content, from memory)"))
        return dry, {"moist_mass_g": moist, "moisture_pct": w, "dry_mass_g": dry}
    dry = _mass(test, "dry_mass_g", path)
    if dry == 0:
        p = join(path, "dry_mass_g")
        raise InputError("zero_dry_mass", f"{p} must be greater than 0 g.", p)
    return dry, None


def frame_of(test: dict, path: str) -> str:
    """The sieve frame id (``FRAMES``) from ``frame`` or ``frame_diameter_mm``."""
    if test.get("frame") is not None:
        return text(test, "frame", path, choices=tuple(FRAMES))
    d = number(test, "frame_diameter_mm", path, required=False)
    if d is None:
        return DEFAULT_FRAME
    for k, fid in _ROUND_FRAMES_MM.items():
        if abs(d - k) < 1e-9:
            return fid
    p = join(path, "frame_diameter_mm")
    raise InputError("unknown_choice", f"{p} must be 203, 254 or 305 (mm), or give frame "
                     f"as one of {', '.join(FRAMES)}; got {d:g}.", p)


def _entries(test: dict, path: str) -> list:
    sp = join(path, "sieves")
    sieves = require_list(test.get("sieves"), sp)
    if len(sieves) < 2:
        raise InputError("too_few_points", f"{sp} needs at least two sieves to make a curve.", sp)
    out = []
    for i, s in enumerate(sieves):
        ip = join(sp, i)
        require_mapping(s, ip)
        out.append((resolve_opening(s, ip), s, ip, i))
    out.sort(key=lambda t: -t[0])
    for (d1, _, p1, _), (d2, _, p2, _) in zip(out, out[1:]):
        if same_size(d1, d2):
            raise InputError("duplicate_opening", f"{join(p2, 'opening_mm')} repeats the opening {d2:g} mm of {p1}.",
                             join(p2, "opening_mm"))
    return out


def _dec(x: float) -> Decimal:
    """The decimal number a float was typed as (its shortest repr), exactly."""
    return Decimal(repr(float(x)))


#: Decimal context for the bookkeeping: 40 digits hold any sum or ratio of masses
#: typed with up to 17 significant digits, so the sums are exact and each ratio
#: is rounded once, when it becomes a float. Never modified.
_CTX = Context(prec=40)
_HUNDRED = Decimal(100)


def _pct(part: Decimal, whole: Decimal) -> float:
    """100 * part / whole as the float nearest the exact decimal ratio [%]."""
    return float(_CTX.divide(_CTX.multiply(part, _HUNDRED), whole))


def _retained_masses(entries: list, cumulative: bool) -> tuple[list[float], list[Decimal]]:
    """Mass retained on each sieve [g] and cumulative mass retained down to it
    (exact decimals of the masses as typed), coarsest first, from either entry form."""
    if not cumulative:
        retained = [_mass(s, "retained_g", ip) for _, s, ip, _ in entries]
        cums, acc = [], Decimal(0)
        for r in retained:
            acc = _CTX.add(acc, _dec(r))
            cums.append(acc)
        return retained, cums
    retained, cums, prev, prev_path = [], [], Decimal(0), None
    for _, s, ip, _ in entries:
        c = _mass(s, "cumulative_retained_g", ip)
        dc = _dec(c)
        if dc < prev:
            p = join(ip, "cumulative_retained_g")
            raise InputError("cumulative_decreases", f"{p} = {c:g} g is less than {float(prev):g} g on the coarser "
                             f"sieve {prev_path}; cumulative mass retained cannot fall as sizes fall.", p)
        retained.append(float(_CTX.subtract(dc, prev)))
        cums.append(dc)
        prev, prev_path = dc, ip
    return retained, cums


def parse_masses(test: dict, path: str) -> SieveTest:
    """Reduce the masses form of a test; see the module docstring."""
    findings: list[Finding] = []
    entry = text(test, "entry", path, default="retained", choices=("retained", "cumulative"))
    entries = _entries(test, path)
    retained, cums = _retained_masses(entries, entry == "cumulative")
    dry, moisture = _dry_mass(test, path, findings)
    washed_mass = _mass(test, "washed_dry_mass_g", path, required=False)
    if washed_mass is not None and washed_mass > dry:
        p = join(path, "washed_dry_mass_g")
        raise InputError("washed_exceeds_dry", f"{p} = {washed_mass:g} g is more than the dry mass before "
                         f"washing, {dry:g} g.", p)
    if test.get("pan_g") is None:
        findings.append(Finding("note", "pan_missing", "No pan mass given; taken as 0 g.", join(path, "pan_g")))
    pan = _mass(test, "pan_g", path, required=False, default=0.0)
    on_sieves = dry if washed_mass is None else washed_mass
    ddry = _dec(dry)
    rows = []
    for (d, s, ip, i), r, cum in zip(entries, retained, cums):
        if cum > ddry:
            key = "cumulative_retained_g" if entry == "cumulative" else "retained_g"
            if float(cum) > dry * (1.0 + FLOAT_NOISE):
                raise InputError("retained_exceeds_mass", f"{join(ip, key)}: the mass retained down to this "
                                 f"sieve, {float(cum):g} g, is more than the dry mass {dry:g} g; check the masses.",
                                 join(ip, key))
            cum = ddry  # only float noise of a dry mass computed elsewhere (at most FLOAT_NOISE relative)
        rows.append(Row(d, label_for(d), r, _pct(_dec(r), ddry), _pct(cum, ddry), _pct(ddry - cum, ddry), i))
    curve = Curve(tuple((row.opening_mm, row.passing_pct) for row in rows))
    total = cums[-1]
    loss = _CTX.subtract(_CTX.subtract(_dec(on_sieves), total), _dec(pan))
    masses = Masses(dry, washed_mass is not None, washed_mass, float(_CTX.subtract(ddry, _dec(on_sieves))), pan,
                    float(total), on_sieves, float(loss), _pct(loss, ddry), moisture)
    diff = abs(_CTX.add(total, _dec(pan)) - _dec(on_sieves))
    frame = frame_of(test, path)
    portions = boolean(test, "sieved_in_portions", path, default=False)
    checks = (mass_balance_check(masses, _pct(diff, ddry), diff * 1000 <= ddry * 3),
              sieve_overload_check(rows, frame, portions),
              specimen_mass_check(rows, dry))
    if washed_mass is None and any(same_size(row.opening_mm, SAND_FINES_MM) for row in rows):
        findings.append(Finding("warning", "not_washed",
                                "The test was not washed: material finer than 0.075 mm is not determined "
                                "accurately by dry sieving alone; wash it per ASTM C117.",
                                join(path, "washed_dry_mass_g"), "ASTM C136 (scope note on C117)"))
    return SieveTest("masses", tuple(rows), curve, masses, checks, tuple(findings))


def _d_value_points(test: dict, path: str) -> list[tuple[float, float, str]]:
    """Points (size_mm, passing_pct, field path) from ``d_mm``: ``{"D15": 0.21, "D85": 1.4}``.

    A D-value is a point of the curve (the size at that percent passing), so a
    supplier's D-values are taken as measured points, nothing more: between
    them the curve is read log-linearly like any other, outside them nothing is
    known.
    """
    dp = join(path, "d_mm")
    d = require_mapping(test.get("d_mm"), dp)
    if len(d) > POINTS_MAX:
        raise InputError("too_many_items", f"{dp} has {len(d):,} D-values; at most {POINTS_MAX:,} are accepted.", dp)
    pts = []
    for key in d:
        if isinstance(key, str) and len(key) > LABEL_MAX_CHARS:
            raise InputError("bad_d_value_name", f"{dp}: a D-value is named D followed by its percent passing "
                             f"(D15, D85, D60...); a name of {len(key):,} characters is not one.", dp)
        kp = join(dp, key)
        pct_text = key[1:] if isinstance(key, str) and key[:1] in "Dd" else ""
        try:
            pct = float(pct_text)
        except ValueError:
            pct = -1.0
        if not 0.0 <= pct <= 100.0:
            raise InputError("bad_d_value_name", f"{kp}: a D-value is named D followed by its percent passing "
                             "(D15, D85, D60...).", kp)
        size = opening(d, key, dp)
        pts.append((size, pct, kp))
    return pts


def parse_passing(test: dict, path: str) -> SieveTest:
    """Reduce the percent-passing form of a test (no mass checks apply).

    The points come from ``passing`` (sieve openings with percent passing)
    and/or ``d_mm`` (D-values, e.g. from a supplier's sheet), merged into one
    curve.
    """
    pts: list[tuple[float, float, str]] = []
    if test.get("passing") is not None:
        pp = join(path, "passing")
        for i, it in enumerate(require_list(test.get("passing"), pp)):
            ip = join(pp, i)
            require_mapping(it, ip)
            pts.append((resolve_opening(it, ip), number(it, "passing_pct", ip), ip))
    if test.get("d_mm") is not None:
        pts.extend(_d_value_points(test, path))
    dp = join(path, "d_mm")

    def field_of(i: int, name: str) -> str:
        f = pts[i][2]  # a D-value is one field; a sieve point has opening_mm and passing_pct
        return f if (f.startswith(dp) or not name) else join(f, name)

    curve = make_curve([(d, p) for d, p, _ in pts], join(path, "passing"), field_of)
    order = sorted(range(len(pts)), key=lambda i: -pts[i][0])
    rows = tuple(Row(d, label_for(d), None, None, None, p, i)
                 for i, (d, p) in zip(order, curve.points))
    why = "The test was entered as percent passing: no masses to check."
    checks = tuple(new_check(cid, NOT_APPLICABLE, why, source=src) for cid, src in
                   (("qa.mass_balance", SRC_MASS_BALANCE), ("qa.sieve_overload", SRC_OVERLOAD),
                    ("qa.specimen_mass", SRC_SPECIMEN)))
    findings: tuple[Finding, ...] = ()
    if test.get("d_mm") is not None:
        findings = (Finding("note", "curve_from_d_values",
                            "Part of this curve was given as D-values: the curve is known only at the points given "
                            "and read log-linearly between them; checks that need other sizes report missing data.",
                            join(path, "d_mm")),)
    return SieveTest("passing", rows, curve, None, checks, findings)


def parse_test(test, path: str = "test") -> SieveTest:
    """Parse and reduce one test (either form). Raises :class:`InputError` with field paths."""
    require_mapping(test, path)
    has_sieves = test.get("sieves") is not None
    has_passing = test.get("passing") is not None or test.get("d_mm") is not None
    if has_sieves and has_passing:
        which = "passing" if test.get("passing") is not None else "d_mm"
        raise InputError("conflicting_fields", f"{path} has both sieves (masses) and {which}; give one form.",
                         join(path, which))
    if has_passing:
        return parse_passing(test, path)
    if not has_sieves:
        raise InputError("missing_field", f"{join(path, 'sieves')} (masses), {join(path, 'passing')} "
                         f"(percent passing) or {join(path, 'd_mm')} (D-values) is required.",
                         join(path, "sieves"))
    return parse_masses(test, path)


def mass_balance_check(m: Masses, diff_pct: float | None = None, within: bool | None = None) -> Check:
    """``qa.mass_balance``: |sum retained + pan - mass put on the sieves| <= 0.3 %
    of the original dry mass (ASTM C136), compared unrounded.

    :func:`parse_masses` passes ``diff_pct`` and ``within`` computed in exact
    decimals of the masses as typed, so that exactly 0.3 % passes (C136 fails
    "more than 0.3 %") whatever the binary rounding; without them the float
    values of ``m`` decide."""
    if diff_pct is None:
        diff_pct = abs(m.retained_sum_g + m.pan_g - m.on_sieves_g) / m.dry_mass_g * 100.0
    ok = compare(diff_pct, "<=", MASS_BALANCE_LIMIT_PCT) if within is None else within
    what = "dry mass after washing" if m.washed else "dry mass"
    msg = (f"Sieves and pan hold {m.retained_sum_g + m.pan_g:.1f} g against {m.on_sieves_g:.1f} g {what}: "
           f"a difference of {diff_pct:.2f} % of the original dry mass "
           + ("(within 0.3 %)." if ok else "(over 0.3 %: do not use this result for acceptance)."))
    return new_check("qa.mass_balance", PASS if ok else FAIL, msg, diff_pct, MASS_BALANCE_LIMIT_PCT, "<=", "%",
                     SRC_MASS_BALANCE)


def overload_limit_g(opening_mm: float, frame: str = DEFAULT_FRAME) -> float:
    """Largest mass [g] a sieve may retain at the end of sieving (ASTM C136 §8.3)."""
    area = FRAMES[frame][1]
    if opening_mm < GRAVEL_SAND_MM and not same_size(opening_mm, GRAVEL_SAND_MM):
        return OVERLOAD_FINE_KG_PER_M2 * area * 1000.0
    return OVERLOAD_COARSE_FACTOR * opening_mm * area * 1000.0


def sieve_overload_check(rows, frame: str = DEFAULT_FRAME, portions: bool = False) -> Check:
    """``qa.sieve_overload``: the mass on each sieve against its C136 §8.3 limit.

    ``value`` is the largest ratio retained / limit [-] (limit 1). With
    ``portions`` (the sample was sieved in portions and the masses are their
    sums, C136 §8.3.1) the check does not apply: each portion is checked at
    the bench.
    """
    per = [{"opening_mm": r.opening_mm, "label": r.label, "retained_g": r.retained_g,
            "limit_g": overload_limit_g(r.opening_mm, frame)} for r in rows]
    over = [p for p in per if p["retained_g"] > p["limit_g"]]
    extra = {"frame": frame, "sieves": per, "overloaded": over}
    if portions:
        return new_check("qa.sieve_overload", NOT_APPLICABLE, "Sieved in portions: the masses are sums over the "
                         "portions, so each portion's load is checked at the bench.", unit="-",
                         source=SRC_OVERLOAD, extra=extra)
    worst = max(p["retained_g"] / p["limit_g"] for p in per)
    if over:
        names = ", ".join(f"{p['label']} ({p['retained_g']:g} g > {p['limit_g']:.1f} g)" for p in over)
        msg = (f"Overloaded on the {FRAMES[frame][0]} frame: {names}. Insert an intermediate sieve, sieve in "
               "portions, or use larger frames.")
        return new_check("qa.sieve_overload", FAIL, msg, worst, 1.0, "<=", "-", SRC_OVERLOAD, extra)
    return new_check("qa.sieve_overload", PASS, f"No sieve over its load limit on the {FRAMES[frame][0]} frame.",
                     worst, 1.0, "<=", "-", SRC_OVERLOAD, extra)


def specimen_min_g(largest_mm: float) -> float | None:
    """Minimum dry mass [g] for a largest particle [mm]: the row for the smallest
    tabulated size at or above it (so a size between rows takes the larger mass),
    ``None`` above 125 mm (outside the table)."""
    for size, m in SPECIMEN_MIN_G:
        if largest_mm < size or same_size(largest_mm, size):
            return m
    return None


def nominal_max_size_mm(rows) -> tuple[float | None, str]:
    """Nominal maximum size [mm] of a masses-form test: one sieve (of the stack)
    larger than the first sieve to retain more than 10 % (WAQTC FOP for AASHTO
    T 2, read). ``None`` when that first sieve is the top one; the finest
    sieve when none retains more than 10 %."""
    first = next((k for k, r in enumerate(rows) if r.retained_pct > NMS_RETAINED_PCT), None)
    if first is None:
        return rows[-1].opening_mm, f"no sieve retains more than {NMS_RETAINED_PCT:g} %"
    if first == 0:
        return None, f"the top sieve {rows[0].label} retains more than {NMS_RETAINED_PCT:g} %"
    return rows[first - 1].opening_mm, f"one sieve above {rows[first].label}, the first to retain more than " \
        f"{NMS_RETAINED_PCT:g} %"


def specimen_mass_check(rows, dry_mass_g: float) -> Check:
    """``qa.specimen_mass``: warn when the dry mass is below the ASTM C136
    minimum for the test's nominal maximum size (:func:`nominal_max_size_mm`)."""
    nms, why = nominal_max_size_mm(rows)
    if nms is None:
        return new_check("qa.specimen_mass", NEEDS_DATA, f"The nominal maximum size is not known: {why}; add a "
                         "coarser sieve.", dry_mass_g, None, ">=", "g", SRC_SPECIMEN)
    need = specimen_min_g(nms)
    if need is None:
        return new_check("qa.specimen_mass", NEEDS_DATA, f"Nominal maximum size {nms:g} mm is beyond the table "
                         "(125 mm).", dry_mass_g, None, ">=", "g", SRC_SPECIMEN)
    ok = compare(dry_mass_g, ">=", need)
    msg = (f"Dry mass {dry_mass_g:.1f} g for a nominal maximum size of {nms:g} mm ({why}) "
           + (f"meets the minimum {need:g} g." if ok else f"is below the minimum {need:g} g: the sample may not "
              "represent the material."))
    return new_check("qa.specimen_mass", PASS if ok else WARN, msg, dry_mass_g, need, ">=", "g", SRC_SPECIMEN,
                     {"nominal_max_size_mm": nms})
