// The verdict block: overall verdict, each check with value against limit
// and its source, lab QA warnings in plain words, and the screening caution,
// always shown with the verdict. Status is given by a word and a symbol, so
// it never depends on colour alone.
import { h, fill, fmt, fmtPct, table } from "./dom.js";

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

/**
 * band.compliance: its value is the smallest margin, in percentage points, of
 * the sample's passing to a band limit over all band sieves (negative:
 * outside), and its limit 0. Said in those words, with the sieve it occurs at.
 */
export function bandMarginText(check) {
  const v = check.value;
  if (v === null || v === undefined) return "";
  const at = (check.sieves || []).find((r) => r.margin_min_pct === v || r.margin_max_pct === v);
  const lower = at ? at.margin_min_pct === v : null;
  const pts = `${fmt(Math.abs(v), 3)} percentage points`;
  if (!at) return v < 0 ? `Worst sieve: ${pts} outside a band limit.` : `Nearest a band limit: ${pts} inside.`;
  // Wording follows the core's status of that sieve (its comparison, on unrounded values).
  if (at.status === "fail") return `Worst sieve: ${at.label}, ${pts} ${lower ? "below its lower" : "above its upper"} limit.`;
  if (v <= 0) return `Nearest a band limit: ${at.label}, exactly on a limit (passing ${fmtPct(at.passing_pct)} %, band ${limitsText(at)} %).`;
  return `Nearest a band limit: ${at.label}, ${pts} ${lower ? "above its lower" : "below its upper"} limit (inside the band).`;
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

export function checkItem(check) {
  const st = STATUS_WORDS[check.status] || { word: check.status, symbol: "?" };
  const band = check.id === "band.compliance";
  const values = band ? bandMarginText(check) : valueVsLimit(check);
  return h("li", { class: `check status-${check.status}`, dataset: { check: check.id, status: check.status } },
    h("span", { class: "status-mark", "aria-hidden": "true", text: st.symbol }),
    h("div", { class: "check-body" },
      h("p", { class: "check-title" },
        check.subject === "base" ? "Base soil: " : null,
        h("strong", { text: checkName(check.id) }), " ",
        h("span", { class: "status-word", text: st.word }),
        check.advisory ? h("span", { class: "advisory", text: " (advisory: reported, not counted in the verdict)" }) : null),
      values ? h("p", { class: "check-values", text: values }) : null,
      check.message ? h("p", { class: "check-message", text: check.message }) : null,
      band ? bandTable(check) : null,
      check.source ? h("p", { class: "check-source", text: `Source: ${check.source}` }) : null));
}

/** The notice line, present whether or not a verdict has been computed. */
export function noticeNode(text = FALLBACK_NOTICE) {
  return h("p", { class: "notice", role: "note", text });
}

/**
 * Render an `evaluate` response (or a core error) into `box`.
 * `only` limits the listed checks to some ids (quick check).
 */
export function renderVerdict(box, resp, { only = null, title = "Verdict" } = {}) {
  if (!resp) {
    fill(box, h("h2", { text: title }), h("p", { class: "muted", text: "Type the masses to see the verdict." }), noticeNode());
    return;
  }
  if (!resp.ok) {
    fill(box, h("h2", { text: title }),
      h("p", { class: "verdict verdict-none", dataset: { verdict: "none" } },
        h("span", { class: "status-mark", "aria-hidden": "true", text: "…" }),
        " No verdict yet"),
      h("p", { class: "core-error", text: resp.error?.message || "The core could not answer." }),
      noticeNode());
    return;
  }
  const r = resp.result;
  const vw = VERDICT_WORDS[r.verdict] || { word: r.verdict, symbol: "?" };
  const checks = (r.checks || []).filter((c) => !only || only.includes(c.id));
  // Checks that do not apply stay one tap away, so the phone screen shows
  // what decides the verdict first; the core's order is kept within each list.
  const applicable = checks.filter((c) => c.status !== "not_applicable");
  const idle = checks.filter((c) => c.status === "not_applicable");
  const qa = checks.filter((c) => c.id.startsWith("qa.") && c.status !== "pass" && c.status !== "not_applicable");
  const warnings = (resp.findings || []).filter((f) => f.level === "warning");
  const notes = (resp.findings || []).filter((f) => f.level !== "warning");
  fill(box,
    h("h2", { text: title }),
    h("p", { class: `verdict verdict-${r.verdict}`, dataset: { verdict: r.verdict } },
      h("span", { class: "status-mark", "aria-hidden": "true", text: vw.symbol }),
      " ", h("strong", { text: vw.word }), ` (${r.verdict})`),
    noticeNode(r.notice || FALLBACK_NOTICE),
    qa.length ? h("div", { class: "qa-box", role: "alert" },
      h("h3", { text: "Lab checks to look at" }),
      h("ul", {}, qa.map((c) => h("li", { text: `${checkName(c.id)}: ${c.message}` })))) : null,
    h("h3", { text: "Checks" }),
    applicable.length
      ? h("ul", { class: "checks" }, applicable.map(checkItem))
      : h("p", { class: "muted", text: "No check applies to this input." }),
    idle.length ? h("details", { class: "idle-checks" },
      h("summary", { text: `Checks that do not apply here (${idle.length})` }),
      h("ul", { class: "checks" }, idle.map(checkItem))) : null,
    warnings.length ? h("div", {},
      h("h3", { text: "Warnings" }),
      h("ul", { class: "findings" }, warnings.map((f) =>
        h("li", { text: f.source ? `${f.message} (${f.source})` : f.message })))) : null,
    notes.length ? h("details", {},
      h("summary", { text: `Notes (${notes.length})` }),
      h("ul", { class: "findings" }, notes.map((f) => h("li", { text: f.message })))) : null);
}

/** A one-line verdict for the sticky bar and for lists. */
export function verdictLine(verdict) {
  const vw = VERDICT_WORDS[verdict];
  return vw ? `${vw.symbol} ${vw.word}` : "… no verdict";
}
