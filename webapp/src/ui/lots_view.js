// Screens "Lots" (list with status and due tests), a lot's page (its tests,
// quantity, testing frequency, warnings, trend chart, percent within limits)
// and the lot editor. Every figure comes from the core's lot_summary op; the
// numbers are rounded here for display only, as `python -m tamis lots` prints
// them: fines and percent passing to 0.1 %, D-values to 3 significant digits,
// Cu to 2 decimals, PWL to 0.1 %.
import { h, fill, field, announce, newId } from "./dom.js";
import { ask, errorText } from "./core.js";
import { renderTrend, trendMeasures } from "./trend_chart.js";
import { bandName, baseName } from "./entry.js";
import { blankRecord, getRecord, listRecords, saveRecord } from "../storage/records.js";
import { askTester } from "./tester.js";
import { parseDecimal, showDecimal } from "./decimal.js";

/** Today's date in UTC, YYYY-MM-DD (the day lot_summary counts to, as the CLI does). */
export const todayUtc = () => new Date().toISOString().slice(0, 10);

export const pct = (v) => (v === null || v === undefined ? "—" : v.toFixed(1));
export const mm = (v) => (v === null || v === undefined ? "—" : String(Number(v.toPrecision(3))));
export const num2 = (v) => (v === null || v === undefined ? "—" : v.toFixed(2));
export const qty = (v) => (v === null || v === undefined ? "—" : Number.isInteger(v) ? v.toFixed(0) : v.toFixed(1));

export const STATUS_WORDS = {
  ok: { word: "Testing up to date", mark: "✓" },
  due: { word: "Test due", mark: "!" },
  overdue: { word: "Testing overdue", mark: "!!" },
  no_rule: { word: "No testing rule set", mark: "?" },
};
const STAGE_WORDS = { stockpile: "stockpile", delivery: "delivery", loose_in_lift: "loose in lift", compacted: "compacted" };

export const lotName = (r) => [r.meta?.lot ? `Lot ${r.meta.lot}` : null, r.meta?.material].filter(Boolean).join(" · ") || r.record_id.slice(0, 8);

const inLot = (r) => r.kind === "lot" || (r.kind === "test" && Boolean(r.meta?.lot_id || r.meta?.lot));

/**
 * lot_summary over the device's lots, their tests and the bands and base soils
 * (only what the op reads is sent, so a device with thousands of tests in no
 * lot is not slowed). The tests in no lot are counted here, as the op would.
 */
export async function summarise(fields = {}, { trends = true, all = null } = {}) {
  // `all`: the device's records with the deleted ones, when the caller has already read them
  all = all || await listRecords({ includeDeleted: true });
  // retests are sent too: a retest replaces its original in the counts even when it names no lot
  const records = all.filter((r) => inLot(r) || (r.kind === "test" && r.meta?.retest_of) || (trends && (r.kind === "band" || r.kind === "base")));
  const resp = await ask("lot_summary", { records, as_of: todayUtc(), ...(trends ? {} : { trends: false }), ...fields });
  if (resp.ok) resp.result.unassigned_tests = all.filter((r) => r.kind === "test" && !r.deleted && !inLot(r)).length;
  return { records, resp };
}

const count = (n, word) => `${n} ${word}${n === 1 ? "" : "s"}`;

/** One material's lots in a line, in the words `python -m tamis lots` prints. */
export function materialLine(m) {
  const counts = [["ok", "up to date"], ["due", "due"], ["overdue", "overdue"], ["no_rule", "without a rule"]]
    .filter(([k]) => m[k]).map(([k, w]) => `${m[k]} ${w}`);
  return `${m.material || "material not named"}: ${count(m.lots, "lot")} (${m.open} open), ${count(m.tests, "test")}; ${counts.join(", ")}; ${count(m.warnings, "warning")}`;
}

function statusPill(status) {
  const s = STATUS_WORDS[status] || { word: status, mark: "" };
  return h("span", { class: "pill lot-status", dataset: { status }, text: `${s.mark} ${s.word}`.trim() });
}

function ruleText(rule) {
  if (!rule) return "no testing rule";
  const parts = [];
  if (rule.per_quantity != null) parts.push(`1 per ${qty(rule.per_quantity)} ${rule.quantity_unit}`);
  if (rule.per_day) parts.push("1 per day of placement");
  if (rule.per_source) parts.push("1 per source");
  const text = parts.join(", ") || "no testing rule";
  return rule.from && rule.from !== "lot" ? `${text}; the rule of its ${rule.from}` : text;
}

/**
 * The Records screen's warning: lots where testing is due or overdue (lot_summary
 * without trends: only counting). Fills `box` and resolves with the due list.
 */
/** The "Testing due" card; `all`: the records (deleted ones too) the Records screen has already read, so
 * they are not read and deserialised a second time beside the list being drawn. */
export async function dueWarning(box, all = null) {
  all = all || await listRecords({ includeDeleted: true });
  if (!all.some(inLot)) { box.hidden = true; return []; } // no lot on the device: nothing is asked of the core
  const { resp } = await summarise({}, { trends: false, all });
  if (!resp.ok) { fill(box, h("p", { class: "core-error", text: `Lots could not be counted: ${errorText(resp)}` })); box.hidden = false; return []; }
  const due = resp.result.due;
  if (!due.length) { box.hidden = true; return []; }
  fill(box, h("h2", { text: "Testing due" }),
    h("ul", { class: "warnings" }, due.map((d) => h("li", { dataset: { lot: d.lot, status: d.status } },
      h("strong", { text: `Lot ${d.lot}: ` }), statusPill(d.status),
      h("span", { text: ` ${d.messages.join("; ")}.` }),
      h("div", { class: "actions" }, h("a", { class: "btn", href: `#/lot/${encodeURIComponent(d.lot_id || d.lot)}`, text: `Open lot ${d.lot}` }))))));
  box.hidden = false;
  return due;
}

export async function lotsScreen(app, view) {
  const status = h("p", { class: "hint", role: "status", text: "Counting the lots…" });
  const list = h("ul", { class: "record-list lot-list", "aria-label": "Lots" });
  const byMaterial = h("section", { class: "card lot-materials", "aria-label": "By material", hidden: true });
  fill(view, h("div", { class: "screen" },
    h("h1", { text: "Lots" }),
    h("p", { class: "hint", text: `Counted to ${todayUtc()} (UTC). Testing rules and margins are the project's; testing status is a reminder, not an acceptance.` }),
    h("div", { class: "actions" }, h("a", { class: "btn primary", href: "#/lotedit", text: "New lot" }), h("a", { class: "btn", href: "#/records", text: "Records" })),
    status, byMaterial, list));
  const { resp } = await summarise();
  if (!resp.ok) { status.textContent = errorText(resp); return; }
  const lots = resp.result.lots;
  status.textContent = lots.length ? `${lots.length} lot${lots.length === 1 ? "" : "s"}; ${resp.result.unassigned_tests} test${resp.result.unassigned_tests === 1 ? "" : "s"} in no lot.` : "No lot yet. A lot groups the tests of one material placed in one zone from one source.";
  fill(list, lots.map((l) => h("li", { class: "record-item", dataset: { lot: l.lot, status: l.frequency.status } },
    h("a", { class: "record-link", href: `#/lot/${encodeURIComponent(l.lot_id || l.lot)}` },
      h("span", { class: "record-title", text: `Lot ${l.lot}` }),
      h("span", { class: "record-sub", text: [l.material, l.zone && `zone ${l.zone}`, l.status, `${l.n_tests} test${l.n_tests === 1 ? "" : "s"}`, l.placed_quantity != null ? `${qty(l.placed_quantity)} ${l.quantity_unit || ""} placed` : null].filter(Boolean).join(" · ") }),
      statusPill(l.frequency.status),
      l.frequency.status === "due" || l.frequency.status === "overdue"
        ? h("span", { class: "record-sub lot-due", text: l.frequency.items.filter((i) => i.status !== "ok").map((i) => i.message).join("; ") }) : null,
      l.warnings.length ? h("span", { class: "record-sub lot-warn", text: `⚠ ${l.warnings.map((w) => w.code.replace("_", " ")).join(", ")}` }) : null))));
  if (resp.result.materials.length) {
    fill(byMaterial, h("h2", { text: "By material" }), h("ul", { class: "warnings" }, resp.result.materials.map((m) =>
      h("li", { dataset: { material: m.material || "" } }, h("span", { class: "material-line", text: materialLine(m) }),
        m.drift.map((w) => h("p", { class: "lot-warn", dataset: { code: w.code }, text: `⚠ ${w.message}` }))))));
    byMaterial.hidden = false;
  }
  view.dataset.lots = String(lots.length);
}

export async function lotPage(app, view, arg) {
  const status = h("p", { class: "hint", role: "status", text: "Working out the lot…" });
  fill(view, h("div", { class: "screen" }, h("h1", { text: "Lot" }), status));
  const { resp } = await summarise({ lot_id: arg });
  if (!resp.ok) {
    fill(view, h("div", { class: "screen" }, h("h1", { text: "Lot not found" }), h("p", { class: "core-error", text: errorText(resp) }), h("a", { href: "#/lots", text: "Back to the lots" })));
    return;
  }
  const lot = resp.result.lots[0];
  const f = lot.frequency;
  const unit = lot.quantity_unit || "";
  const trendBox = h("div", { class: "chart-box", role: "group", "aria-label": "Trend chart" });
  const measures = trendMeasures(lot);
  const pick = h("select", { onchange: () => renderTrend(trendBox, lot, measures[pick.selectedIndex]) },
    measures.map((m) => h("option", { value: m.id, text: m.label })));
  const pickF = field("Show", pick);
  const screen = h("div", { class: "screen lot-page", dataset: { lot: lot.lot, status: f.status } },
    h("h1", { text: `Lot ${lot.lot}` }),
    h("p", { class: "hint", text: [lot.material, lot.zone && `zone ${lot.zone}`, lot.source && `from ${lot.source}`, lot.status].filter(Boolean).join(" · ") }),
    h("div", { class: "actions" },
      lot.has_record ? h("a", { class: "btn", href: `#/lotedit/${lot.lot_id}`, text: "Edit the lot" })
        : h("a", { class: "btn primary", href: `#/lotedit/new:${encodeURIComponent(lot.lot)}`, text: `Make a lot record for ${lot.lot}` }),
      h("a", { class: "btn", href: "#/lots", text: "All lots" })),
    h("section", { class: "card lot-frequency", "aria-label": "Testing frequency" },
      h("h2", {}, "Testing ", statusPill(f.status)),
      h("p", { class: "lot-quantity", text: `Placed ${qty(lot.placed_quantity)} ${unit} of ${qty(lot.planned_quantity)} ${unit} planned${f.quantity_from === "tests" ? " (from the tests' quantities: no placements logged)" : ""}; tests counted ${f.tests_counted}${f.tests_required != null ? `, ${f.tests_required} needed` : ""}.` }),
      h("p", { class: "hint", text: `Rule: ${ruleText(lot.rule)}${lot.rule?.example ? " (an example rule, not a standard)" : ""}. Counted to ${resp.result.as_of}. Stockpile tests and tests replaced by a retest are not counted.` }),
      f.items.length ? h("ul", { class: "warnings" }, f.items.map((i) => h("li", { dataset: { status: i.status, rule: i.rule } }, h("strong", { text: `${STATUS_WORDS[i.status]?.mark || ""} ${i.status === "ok" ? "" : i.status.toUpperCase() + ": "}` }), i.message))) : null),
    lot.warnings.length ? h("section", { class: "card lot-warnings", role: "alert", "aria-label": "Warnings" },
      h("h2", { text: "⚠ Warnings" }),
      h("ul", { class: "warnings" }, lot.warnings.map((w) => h("li", { dataset: { code: w.code, measure: w.measure }, text: w.message })))) : null,
    h("section", { class: "card" }, h("h2", { text: "Trend" }), pickF.wrap, trendBox),
    h("section", { class: "card" }, h("h2", { text: "Tests" }), testsTable(lot)),
    lot.stages.length ? h("section", { class: "card" }, h("h2", { text: "Stockpile → delivery → compacted" }), stagesTable(lot)) : null,
    h("section", { class: "card lot-pwl" }, h("h2", { text: "Percent within limits" }),
      h("p", { class: "hint", text: "Estimated percent of the lot within each limit, from the counted tests' mean and standard deviation (beta-distribution estimator, FHWA T 5080.12). A statistical summary, not an acceptance rule unless the project's specification makes it one." }),
      pwlTable(lot)),
    h("p", { class: "hint", text: resp.result.notice }));
  fill(view, screen);
  renderTrend(trendBox, lot, measures[0]);
  view.dataset.lot = lot.lot;
}

function testsTable(lot) {
  return h("div", { class: "table-scroll", tabindex: "0", role: "region", "aria-label": "Tests of the lot (scrolls sideways)" }, h("table", { class: "lot-tests" },
    h("caption", { text: `${lot.n_tests} tests, ${lot.n_counted} counted; failed tests marked ✗` }),
    h("thead", {}, h("tr", {}, ["#", "Sample", "Date", "Stage", "Fines (%)", "D15 (mm)", "D85 (mm)", "Cu", "Verdict"].map((t) => h("th", { scope: "col", text: t })))),
    h("tbody", {}, lot.tests.map((t, i) => h("tr", { dataset: { sample: t.sample_id, failed: t.failed ? "1" : "0" }, class: t.failed ? "failed" : "" },
      h("td", { text: String(i + 1) }),
      h("th", { scope: "row" }, h("a", { href: `#/record/${t.record_id}`, text: t.sample_id || t.record_id.slice(0, 8) }), t.counted ? null : h("span", { class: "hint", text: " (not counted)" })),
      h("td", { text: (t.sampled_at || "").slice(0, 10) }),
      h("td", { text: STAGE_WORDS[t.stage] || "—" }),
      h("td", { class: t.beyond_limits.includes("fines_pct") ? "beyond" : "", text: pct(t.fines_pct) }),
      h("td", { class: t.beyond_limits.includes("d15_mm") ? "beyond" : "", text: mm(t.d15_mm) }),
      h("td", { text: mm(t.d85_mm) }),
      h("td", { text: num2(t.cu) }),
      h("td", { dataset: { verdict: t.verdict || "none" }, text: t.failed ? `✗ ${t.verdict}` : t.verdict || "—" }))))));
}

function stagesTable(lot) {
  return h("div", { class: "table-scroll", tabindex: "0", role: "region", "aria-label": "Stage means (scrolls sideways)" }, h("table", { class: "lot-stages" },
    h("caption", { text: "Mean of each sampling stage" }),
    h("thead", {}, h("tr", {}, ["Stage", "Tests", "Fines (%)", "D15 (mm)", "D85 (mm)"].map((t) => h("th", { scope: "col", text: t })))),
    h("tbody", {}, lot.stages.map((s) => h("tr", { dataset: { stage: s.stage } },
      h("th", { scope: "row", text: STAGE_WORDS[s.stage] }), h("td", { text: String(s.n) }), h("td", { text: pct(s.fines_pct) }), h("td", { text: mm(s.d15_mm) }), h("td", { text: mm(s.d85_mm) }))))));
}

function pwlTable(lot) {
  const lim = (p) => `${p.lower != null ? pct(p.lower) : ""}–${p.upper != null ? pct(p.upper) : ""}`;
  return h("div", { class: "table-scroll", tabindex: "0", role: "region", "aria-label": "Percent within limits (scrolls sideways)" }, h("table", { class: "lot-pwl-table" },
    h("caption", { text: "PWL by measure, with the number of tests n" }),
    h("thead", {}, h("tr", {}, ["Measure", "n", "Mean", "s", "Limits (%)", "PWL (%)"].map((t) => h("th", { scope: "col", text: t })))),
    h("tbody", {}, lot.pwl.map((p) => h("tr", { dataset: { measure: p.measure, opening: p.opening_mm ?? "" } },
      h("th", { scope: "row", text: p.label }), h("td", { text: String(p.n) }),
      p.pwl_pct === null
        ? h("td", { colspan: 4, class: "hint", text: p.note })
        : [h("td", { text: num2(p.mean) }), h("td", { text: num2(p.sd) }), h("td", { text: lim(p) }), h("td", { class: "pwl-value", text: pct(p.pwl_pct) })])))));
}

// ---- the lot editor ---------------------------------------------------------

export async function lotEditor(app, view, arg) {
  const [bands, bases, presetsResp] = await Promise.all([listRecords({ kind: "band" }), listRecords({ kind: "base" }), ask("frequency_presets")]);
  const stored = arg && !arg.startsWith("new:") ? await getRecord(arg) : null;
  const rec = stored ? structuredClone(stored) : blankRecord("lot", { meta: { lot: arg?.startsWith("new:") ? decodeURIComponent(arg.slice(4)) : "", status: "open", quantity_unit: "m3" } });
  const m = rec.meta;
  const text = (label, key, attrs = {}) => field(label, h("input", { type: "text", autocomplete: "off", value: m[key] ?? "", ...attrs }));
  const code = text("Lot code", "lot", { required: true });
  const material = text("Material", "material");
  const zone = text("Zone", "zone");
  const source = text("Source or pit", "source");
  const sel = (label, opts, value) => field(label, h("select", {}, opts.map(([v, t]) => h("option", { value: v, text: t, selected: v === (value ?? "") }))));
  const band = sel("Specification band", [["", "None"], ...bands.map((b) => [b.record_id, bandName(b)])], m.band_id);
  const base = sel("Base soil it protects", [["", "None"], ...bases.map((b) => [b.record_id, baseName(b)])], m.base_id);
  const planned = field("Planned quantity", h("input", { type: "text", inputmode: "decimal", autocomplete: "off", value: showDecimal(m.planned_quantity) }));
  const unit = sel("Unit", [["m3", "m³"], ["t", "t"]], m.quantity_unit || "m3");
  const status = sel("Status", [["open", "Open"], ["closed", "Closed"]], m.status || "open");
  const rule = m.test_frequency || {};
  const presets = presetsResp.ok ? presetsResp.result.presets : [];
  const preset = sel("Start from an example rule", [["", "Choose an example (not a standard)"], ...presets.map((p) => [p.id, p.label])], "");
  const perQ = field("One test per (quantity)", h("input", { type: "text", inputmode: "decimal", autocomplete: "off", value: showDecimal(rule.per_quantity) }), { hint: "In the lot's unit. Leave empty for no quantity rule." });
  const perDay = h("input", { type: "checkbox", id: newId("pd"), checked: Boolean(rule.per_day) });
  const perSource = h("input", { type: "checkbox", id: newId("ps"), checked: Boolean(rule.per_source) });
  preset.input.addEventListener("change", () => {
    const p = presets.find((x) => x.id === preset.input.value);
    if (!p) return;
    perQ.input.value = showDecimal(p.per_quantity);
    unit.input.value = p.quantity_unit;
    perDay.checked = p.per_day; perSource.checked = p.per_source;
  });
  const rows = h("tbody");
  const addRow = (p = {}) => {
    const date = h("input", { type: "date", value: p.date || todayUtc(), "aria-label": "Day placed" });
    const q = h("input", { type: "text", inputmode: "decimal", autocomplete: "off", value: showDecimal(p.quantity), "aria-label": "Quantity placed" });
    const s = h("input", { type: "text", autocomplete: "off", value: p.source || "", "aria-label": "Source (if not the lot's)" });
    const tr = h("tr", {}, h("td", {}, date), h("td", {}, q), h("td", {}, s),
      h("td", {}, h("button", { type: "button", class: "btn", text: "Remove", "aria-label": "Remove this day", onclick: () => tr.remove() })));
    rows.append(tr);
    return q;
  };
  for (const p of m.placements || []) addRow(p);
  const err = h("p", { class: "core-error", role: "alert" });
  const notes = h("textarea", { rows: 2 }); notes.value = m.notes ?? "";
  const form = h("form", { class: "screen lot-editor", novalidate: true, onsubmit: (e) => { e.preventDefault(); save(); } },
    h("h1", { text: stored ? `Edit lot ${m.lot}` : "New lot" }),
    h("section", { class: "card" }, h("div", { class: "grid2" }, code.wrap, material.wrap, zone.wrap, source.wrap, band.wrap, base.wrap, planned.wrap, unit.wrap, status.wrap)),
    h("section", { class: "card" }, h("h2", { text: "Testing rule (the project's)" }), preset.wrap, perQ.wrap,
      h("div", { class: "check-row" }, perDay, h("label", { for: perDay.id, text: "At least one test per day of placement" })),
      h("div", { class: "check-row" }, perSource, h("label", { for: perSource.id, text: "One test per change of source" }))),
    h("section", { class: "card" }, h("h2", { text: "Placed, day by day" }),
      h("div", { class: "table-scroll", tabindex: "0", role: "region", "aria-label": "Placed, day by day (scrolls sideways)" }, h("table", {}, h("thead", {}, h("tr", {}, ["Day", "Quantity", "Source"].map((t) => h("th", { scope: "col", text: t })), h("th", { scope: "col" }, h("span", { class: "sr-only", text: "Remove" })))), rows)),
      h("button", { type: "button", class: "btn", text: "Add a day's placement", onclick: () => addRow().focus() })),
    h("section", { class: "card" }, field("Notes", notes).wrap),
    err,
    h("div", { class: "actions" }, h("button", { type: "submit", class: "btn primary", text: stored ? "Save the lot" : "Save the new lot" }),
      h("a", { class: "btn", href: stored ? `#/lot/${stored.record_id}` : "#/lots", text: "Cancel" })));
  fill(view, form);

  async function save() {
    err.textContent = "";
    const num = (f, label) => {
      const p = parseDecimal(f.input.value);
      if (!p.ok) throw new Error(`${label}: ${p.message}`);
      return p.value;
    };
    const out = { ...rec, meta: { ...m } };
    try {
      const c = code.input.value.trim();
      if (!c) throw new Error("Give the lot a code (for instance L13).");
      out.meta.lot = c;
      out.meta.sample_id = c;
      for (const [f, k] of [[material, "material"], [zone, "zone"], [source, "source"]]) {
        const v = f.input.value.trim(); if (v) out.meta[k] = v; else delete out.meta[k];
      }
      if (band.input.value) out.meta.band_id = band.input.value; else delete out.meta.band_id;
      if (base.input.value) out.meta.base_id = base.input.value; else delete out.meta.base_id;
      const pq = num(planned, "Planned quantity");
      if (pq === null) delete out.meta.planned_quantity; else out.meta.planned_quantity = pq;
      out.meta.quantity_unit = unit.input.value;
      out.meta.status = status.input.value;
      const per = num(perQ, "One test per");
      const tf = { per_day: perDay.checked, per_source: perSource.checked };
      if (per !== null) { tf.per_quantity = per; tf.quantity_unit = unit.input.value; }
      if (per !== null || tf.per_day || tf.per_source) out.meta.test_frequency = tf; else delete out.meta.test_frequency;
      const placements = [];
      for (const tr of rows.children) {
        const [d, q, s] = tr.querySelectorAll("input");
        const p = parseDecimal(q.value);
        if (!p.ok) throw new Error(`Placement on ${d.value}: ${p.message}`);
        if (p.value === null) continue;
        if (!d.value) throw new Error("A placement needs its day.");
        placements.push({ date: d.value, quantity: p.value, ...(s.value.trim() ? { source: s.value.trim() } : {}) });
      }
      placements.sort((a, b) => (a.date < b.date ? -1 : a.date > b.date ? 1 : 0));
      if (placements.length) out.meta.placements = placements; else delete out.meta.placements;
      if (notes.value.trim()) out.meta.notes = notes.value; else delete out.meta.notes;
    } catch (e) { err.textContent = e.message; return; }
    // The core checks the lot before it is stored.
    const check = await ask("lot_summary", { records: [{ ...out, rev: Math.max(out.rev, 1), updated_at: out.updated_at || "2000-01-01T00:00:00Z" }], trends: false });
    if (!check.ok) { err.textContent = errorText(check); return; }
    const by = app.settings.tester || (await askTester(app, err));
    const res = await saveRecord(out, { by: by || "", basisRev: stored ? stored.rev : 0 });
    if (res.conflict) { err.textContent = "This lot was changed in another tab or on import; reopen it and make the change again."; return; }
    announce(`Lot ${out.meta.lot} saved.`);
    app.refreshBadge();
    app.go(`#/lot/${out.record_id}`);
  }
}
