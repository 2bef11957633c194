// The verdict block, in the order an inspector reads it: the verdict as a
// solid block (a shape and a word as well as a colour), what fails or is
// undecided one line each with its figures, the screening caution once, the
// chart, then the passes; the checks that do not apply, the advisory
// indicators, each check's wording and source one tap away. Status is given
// by a word and a symbol, so it never depends on colour alone.
import { h, fill, fmt, fmtPct, table } from "./dom.js";
import { plainWords } from "./editor/fields.js";

export const FALLBACK_NOTICE =
  "Screening check only. The project specification, local codes and the " +
  "engineer of record govern acceptance of filter and drain materials.";

export const VERDICT_WORDS = {
  accept: { word: "Meets the checks", symbol: "✓" },
  reject: { word: "Fails a check", symbol: "✗" },
  review: { word: "Needs review", symbol: "?" },
};

export const STATUS_WORDS = {
  pass: { word: "passes", symbol: "✓" },
  fail: { word: "fails", symbol: "✗" },
  warn: { word: "warning", symbol: "!" },
  not_applicable: { word: "does not apply", symbol: "–" },
  needs_data: { word: "needs data", symbol: "?" },
};

// Short names for the check ids the core emits; unknown ids show as they are.
const CHECK_NAMES = {
  "qa.mass_balance": "Mass balance of the sieving",
  "qa.sieve_overload": "Sieve overload",
  "qa.specimen_mass": "Sample mass for its largest particle",
  "band.compliance": "Within the specification band",
  "filter.retention": "Retains the base soil",
  "filter.permeability": "Drains freely relative to the base",
  "filter.fines": "Fines content of the filter",
  "filter.plasticity": "Plasticity of the fines",
  "filter.max_size": "Largest particle size",
  "filter.segregation": "Resistance to segregation",
  "stability.kezdi": "Internal stability (Kezdi)",
  "stability.kenney_lau": "Internal stability (Kenney-Lau)",
  "stability.li_fannin": "Internal stability (Li-Fannin)",
  "stability.burenkova": "Internal stability (Burenkova)",
  "stability.istomina": "Internal stability (Istomina)",
  "stability.wan_fell": "Internal stability (Wan-Fell)",
  "band.between_sieves": "Fraction between two band sieves",
  "band.fineness_modulus": "Fineness modulus within the band",
  "permeability.hazen": "Permeability estimate (Hazen)",
  "permeability.kozeny_carman": "Permeability estimate (Kozeny-Carman)",
  "permeability.ratio": "Permeability ratio, filter to base (estimate)",
};

export function checkName(id) {
  return CHECK_NAMES[id] || id;
}

/** "0.52 mm (must be ≤ 0.7 mm)" from a check's unrounded numbers (rounded for display only). */
export function valueVsLimit(check) {
  if (check.value === null && check.limit === null) return "";
  const unit = check.unit && check.unit !== "-" ? ` ${check.unit}` : ""; // "-": a ratio, no unit
  // Value and limit that round to the same figure but differ are shown in
  // full, so a failing value never reads as equal to its limit.
  const same = typeof check.value === "number" && typeof check.limit === "number"
    && check.value !== check.limit && fmt(check.value, 3) === fmt(check.limit, 3);
  const show = (x) => (same ? String(x) : fmt(x, 3));
  const v = `${show(check.value)}${unit}`;
  if (check.limit === null || check.limit === undefined) return `value ${v}`;
  const rel = { "<=": "≤", ">=": "≥", "<": "<", ">": ">" }[check.relation] || check.relation || "vs";
  // The relation is the requirement, not a claim about the value: "0.742 mm (must be ≤ 0.7 mm)".
  return `${v} (must be ${rel} ${show(check.limit)}${unit})`;
}

/** A band row whose limits are one figure (100 to 100 %): a margin of 0 there tells nothing. */
const degenerate = (r) => typeof r.min_pct === "number" && r.min_pct === r.max_pct;

/**
 * band.compliance: its value is the smallest margin, in percentage points, of
 * the sample's passing to a band limit over all band sieves (negative:
 * outside), and its limit 0. Said in those words, with the sieve it occurs at.
 * Inside the band, the nearest limit is named only when it tells something:
 * rows of one figure (100 to 100 %) are passed over, and with no other row
 * nothing is said.
 */
export function bandMarginText(check) {
  const v = check.value;
  if (v === null || v === undefined) return "";
  const rows = check.sieves || [];
  const at = rows.find((r) => r.margin_min_pct === v || r.margin_max_pct === v);
  const pts = (x) => `${fmt(Math.abs(x), 3)} percentage points`;
  if (!at) return v < 0 ? `Worst sieve: ${pts(v)} outside a band limit.` : "";
  // Wording follows the core's status of that sieve (its comparison, on unrounded values).
  if (at.status === "fail") {
    const lower = at.margin_min_pct === v;
    return `Worst sieve: ${at.label}, ${pts(v)} ${lower ? "below its lower" : "above its upper"} limit.`;
  }
  // The nearest limit among the rows that have a range (the core's margins, unrounded).
  let best = null;
  for (const r of rows) {
    if (degenerate(r)) continue;
    for (const [m, lower] of [[r.margin_min_pct, true], [r.margin_max_pct, false]]) {
      if (typeof m === "number" && (best === null || m < best.m)) best = { r, m, lower };
    }
  }
  if (!best) return "";
  if (best.m <= 0) return `Nearest a band limit: ${best.r.label}, exactly on a limit (passing ${fmtPct(best.r.passing_pct)} %, band ${limitsText(best.r)} %).`;
  return `Nearest a band limit: ${best.r.label}, ${pts(best.m)} ${best.lower ? "above its lower" : "below its upper"} limit (inside the band).`;
}

// Band limits are the user's own figures: shown as typed, not rounded.
const limitsText = (r) => `${r.min_pct === null ? "no min" : r.min_pct}–${r.max_pct === null ? "no max" : r.max_pct}`;

/** The band check's per-sieve rows (the core's), failing sieves marked in words. */
function bandTable(check) {
  const rows = check.sieves || [];
  if (!rows.length) return null;
  return table({ class: "band-rows" }, `Band ${check.band ? `"${check.band}" ` : ""}sieve by sieve`,
    ["Sieve", "Passing (%)", "Band (%)", "Result"],
    h("tbody", {}, rows.map((r) => {
      const st = STATUS_WORDS[r.status] || { word: r.status, symbol: "?" };
      const word = { warn: "inside (interpolated)", pass: "inside", fail: "OUTSIDE" }[r.status] || st.word;
      return h("tr", { class: `status-${r.status}`, dataset: { opening: r.opening_mm, status: r.status } },
        h("th", { scope: "row", text: r.label || `${fmt(r.opening_mm, 4)} mm` }),
        h("td", { text: r.passing_pct === null ? "—" : fmtPct(r.passing_pct) }),
        h("td", { text: limitsText(r) }),
        h("td", {}, h("span", { "aria-hidden": "true", text: `${st.symbol} ` }), word));
    })));
}

// What the figure of a check is, in a word or two, for the one-line reasons;
// and what it is for when the figure alone is ambiguous (two D15 checks).
const FIGURE_NAMES = {
  "filter.retention": ["D15", "retention"],
  "filter.permeability": ["D15", "drainage"],
  "filter.fines": ["Fines", ""],
  "filter.plasticity": ["PI of the fines", ""],
  "filter.max_size": ["D100", ""],
  "filter.segregation": ["D90", "segregation"],
};
// The relation a failing value stands in to its limit (the requirement reversed).
const BROKEN = { "<=": ">", "<": "≥", ">=": "<", ">": "≤" };
const KEPT = { "<=": "≤", "<": "<", ">=": "≥", ">": ">" };

/** Value and limit at the fewest digits (3 or more) that keep them apart when they differ. */
function apart(value, limit) {
  for (let d = 3; d <= 12; d += 1) {
    const a = fmt(value, d); const b = fmt(limit, d);
    if (a !== b || value === limit) return [a, b];
  }
  return [String(value), String(limit)];
}

/**
 * The one-line reason of a check, with its figures: "Fines 8.9 % > 5 %",
 * "D15 0.742 mm > 0.7 mm (retention)", "Band: No. 16 passing 12.3 % < 15 %",
 * "Plasticity of the fines: needs data". Rounded for display only; the
 * status is the core's, compared on unrounded values.
 */
export function reasonLine(check) {
  const name = checkName(check.id);
  const base = check.subject === "base" ? "Base soil: " : "";
  if (check.status === "needs_data") return `${base}${name}: needs data`;
  if (check.status === "not_applicable") return `${base}${name}: does not apply`;
  if (check.id === "band.compliance") {
    const rows = check.sieves || [];
    const failing = rows.filter((r) => r.status === "fail");
    const worst = failing[0];
    if (!worst) return "Band: inside at every sieve";
    const low = typeof worst.min_pct === "number" && worst.passing_pct < worst.min_pct;
    const lim = low ? worst.min_pct : worst.max_pct;
    const more = failing.length - 1;
    return `Band: ${worst.label} passing ${fmtPct(worst.passing_pct)} % ${low ? "<" : ">"} ${lim} %${more > 0 ? ` (and ${more} more sieve${more > 1 ? "s" : ""})` : ""}`;
  }
  const [fig, what] = FIGURE_NAMES[check.id] || [name, ""];
  const unit = check.unit && check.unit !== "-" ? ` ${check.unit}` : "";
  if (typeof check.value !== "number") return `${base}${name}: ${STATUS_WORDS[check.status]?.word || check.status}`;
  if (typeof check.limit !== "number") return `${base}${fig} ${fmt(check.value, 3)}${unit}${what ? ` (${what})` : ""}`;
  const rel = (check.status === "fail" ? BROKEN : KEPT)[check.relation] || check.relation || "vs";
  const [v, l] = apart(check.value, check.limit);
  return `${base}${fig} ${v}${unit} ${rel} ${l}${unit}${what ? ` (${what})` : ""}`;
}

/** One check: its mark and one-line reason, and one tap away its wording, figures, message and source. */
export function checkItem(check) {
  const st = STATUS_WORDS[check.status] || { word: check.status, symbol: "?" };
  const band = check.id === "band.compliance";
  const values = band ? bandMarginText(check) : valueVsLimit(check);
  // The line is the disclosure: one tap opens the wording, figures, message and source.
  return h("li", { class: `check status-${check.status}`, dataset: { check: check.id, status: check.status } },
    h("details", { class: "check-more" },
      h("summary", {},
        h("span", { class: "status-mark", "aria-hidden": "true", text: st.symbol }),
        h("span", { class: "reason-line" }, h("span", { class: "sr-only", text: `${st.word}: ` }), reasonLine(check)),
        h("span", { class: "more-mark", "aria-hidden": "true", text: "›" })),
      h("div", { class: "check-body" },
        h("p", { class: "check-title" },
          check.subject === "base" ? "Base soil: " : null,
          h("strong", { text: checkName(check.id) }), " ",
          h("span", { class: "status-word", text: st.word }),
          check.advisory ? h("span", { class: "advisory", text: " (advisory: reported, not counted in the verdict)" }) : null),
        values ? h("p", { class: "check-values", text: values }) : null,
        check.message ? h("p", { class: "check-message", text: check.message }) : null,
        band ? bandTable(check) : null,
        check.source ? h("p", { class: "check-source", text: `Source: ${check.source}` }) : null)));
}

/** The notice line, present whether or not a verdict has been computed. */
export function noticeNode(text = FALLBACK_NOTICE) {
  return h("p", { class: "notice", role: "note", text });
}

/** The verdict as a solid block: a shape, a symbol and a word as well as a colour. */
export function verdictBlock(verdict) {
  const vw = VERDICT_WORDS[verdict] || { word: "No verdict yet", symbol: "…" };
  const key = VERDICT_WORDS[verdict] ? verdict : "none";
  return h("p", { class: `verdict verdict-${key}`, dataset: { verdict: key } },
    h("span", { class: "verdict-shape", "aria-hidden": "true", text: vw.symbol }),
    h("strong", { class: "verdict-word", text: vw.word }));
}

// Warnings about the advisory indicators go with them, one tap away.
const ADVISORY_WARNING = /^(stability_|wan_fell|hazen|kozeny|permeability_)/;
const DECIDING = { fail: 0, needs_data: 1, warn: 2 };

/**
 * The checks of an `evaluate` result in the order an inspector reads them:
 * `reasons` (what fails or is undecided, failures first, the core's order
 * within), `passes`, `idle` (does not apply), `advisory` (not counted).
 */
export function sortChecks(checks) {
  const counted = checks.filter((c) => !c.advisory);
  return {
    reasons: counted.filter((c) => c.status in DECIDING)
      .map((c, i) => [c, i]).sort(([a, i], [b, j]) => DECIDING[a.status] - DECIDING[b.status] || i - j).map(([c]) => c),
    passes: counted.filter((c) => c.status === "pass"),
    idle: counted.filter((c) => c.status === "not_applicable"),
    advisory: checks.filter((c) => c.advisory),
  };
}

/** The first reason of a result (for the bar), or "" when nothing fails or is undecided. */
export function firstReason(result) {
  const [first] = sortChecks(result?.checks || []).reasons;
  return first ? reasonLine(first) : "";
}

/**
 * True when the core says the sample has too few points for a curve yet
 * (nothing typed, or one mass): the screen waits, it shows no error.
 */
export function notYet(resp, prefix = "sample") {
  const e = resp && !resp.ok ? resp.error || {} : {};
  return e.code === "too_few_points" && String(e.field || "").startsWith(prefix);
}

/**
 * Render an `evaluate` response (or a core error) into `box`: the verdict
 * block, the reasons under it, then `slot` (the chart), the passes, and one
 * tap away the checks that do not apply, the advisory indicators and notes.
 * `only` limits the listed checks to some ids; `notice: false` leaves the
 * screening caution to another block of the same screen; `waiting` is said
 * while there is no curve yet.
 */
export function renderVerdict(box, resp, { only = null, title = "Verdict", slot = null, notice = true, waiting = "Type the masses to see the verdict." } = {}) {
  const caution = (text) => (notice ? noticeNode(text) : null);
  if (!resp || notYet(resp)) {
    fill(box, h("h2", { text: title }), h("p", { class: "muted waiting", text: waiting }), caution(), slot);
    return;
  }
  if (!resp.ok) {
    fill(box, h("h2", { text: title }), verdictBlock(null),
      h("p", { class: "core-error", text: resp.error?.message ? plainWords(resp.error.message, box.closest("form, .screen") || box) : "The core could not answer." }), caution(), slot);
    return;
  }
  const r = resp.result;
  const checks = (r.checks || []).filter((c) => !only || only.includes(c.id));
  const { reasons, passes, idle, advisory } = sortChecks(checks);
  const warnings = (resp.findings || []).filter((f) => f.level === "warning");
  const mainWarnings = warnings.filter((f) => !ADVISORY_WARNING.test(f.code || ""));
  const advWarnings = warnings.filter((f) => ADVISORY_WARNING.test(f.code || ""));
  const notes = (resp.findings || []).filter((f) => f.level !== "warning");
  const flagged = advisory.filter((c) => c.status === "fail" || c.status === "warn").length;
  const findingItem = (f) => h("li", { text: f.source ? `${f.message} (${f.source})` : f.message });
  fill(box,
    h("h2", { class: "sr-only", text: title }),
    verdictBlock(r.verdict),
    reasons.length ? h("ul", { class: "checks reasons", "aria-label": "What decides the verdict" }, reasons.map(checkItem)) : null,
    mainWarnings.length ? h("ul", { class: "findings warnings", "aria-label": "Warnings" }, mainWarnings.map((f) =>
      h("li", {}, h("span", { class: "status-mark", "aria-hidden": "true", text: "!" }), f.message,
        f.source ? h("details", { class: "check-more" }, h("summary", { text: "Source" }), h("p", { class: "check-source", text: f.source })) : null))) : null,
    caution(r.notice || FALLBACK_NOTICE),
    slot,
    passes.length ? h("section", { class: "passes", "aria-label": "Checks that pass" },
      h("h3", { text: `Passes (${passes.length})` }),
      h("ul", { class: "checks" }, passes.map(checkItem))) : null,
    !reasons.length && !passes.length ? h("p", { class: "muted", text: "No check applies to this input." }) : null,
    idle.length ? h("details", { class: "idle-checks" },
      h("summary", { text: `Checks that do not apply here (${idle.length})` }),
      h("ul", { class: "checks" }, idle.map(checkItem))) : null,
    advisory.length || advWarnings.length ? h("details", { class: "idle-checks advisory-group" },
      h("summary", { text: `Advisory indicators, not counted (${advisory.length}${flagged ? `, ${flagged} flagged` : ""})` }),
      h("ul", { class: "checks" }, advisory.map(checkItem)),
      advWarnings.length ? h("ul", { class: "findings" }, advWarnings.map(findingItem)) : null) : null,
    notes.length ? h("details", { class: "idle-checks" },
      h("summary", { text: `Notes (${notes.length})` }),
      h("ul", { class: "findings" }, notes.map((f) => h("li", { text: f.message })))) : null);
}

/** A one-line verdict for the sticky bar and for lists. */
export function verdictLine(verdict) {
  const vw = VERDICT_WORDS[verdict];
  return vw ? `${vw.symbol} ${vw.word}` : "… no verdict";
}
