// Screen "Sieve test": enter or edit a test, with the verdict as you type.
import { h, fill, field, announce } from "./dom.js";
import { askTester } from "./tester.js";
import { ask, evaluateFields } from "./core.js";
import { gradationEditor, enterMovesOn, showFieldError } from "./editor/gradation_editor.js";
import { plainWords } from "./editor/fields.js";
import { metaForm, newSampleId } from "./meta_form.js";
import { renderVerdict, verdictLine, firstReason, notYet } from "./verdict.js";
import { renderChart } from "./chart.js";
import { sievePresets, RULE_SETS } from "./presets.js";
import { blankRecord, getRecord, listRecords, storeResult } from "../storage/records.js";
import { openForm, keepForm } from "./form_keeper.js";
import { clearDraft } from "../storage/drafts.js";

// No debounce: an edit asks the core at once (edits of one task share one ask), and the bridge supersedes
// an ask that a newer edit made stale before it reaches the worker, so a burst of keystrokes costs at most
// the computation in flight plus the last one, and the screen is redrawn only for the last.

function refSelect(label, records, selected, describe) {
  const sel = h("select", {},
    h("option", { value: "", text: "None" }),
    records.map((r) => h("option", { value: r.record_id, text: describe(r), selected: r.record_id === selected })));
  return field(label, sel);
}

export const bandName = (r) => r.band?.name || r.meta?.material || r.record_id.slice(0, 8);
export const baseName = (r) => [r.meta?.sample_id, r.meta?.material].filter(Boolean).join(" · ") || r.record_id.slice(0, 8);

/** Render the entry screen. `id`: a stored test to edit; `seed`: a new record to start from. */
export async function entryScreen(app, view, id = null, seed = null) {
  const [presets, bands, bases, lots] = await Promise.all([
    sievePresets(), listRecords({ kind: "band" }), listRecords({ kind: "base" }), listRecords({ kind: "lot" })]);
  const stored = id ? await getRecord(id) : null;
  // One draft per tab for the new test and one per tab and stored test being
  // edited, so neither another form nor another tab overwrites what was typed.
  const opened = await openForm({ stored, seed, blank: () => blankRecord("test", { meta: { sample_id: newSampleId(), sampled_at: nowMinute(), tested_by: app.settings.tester || undefined, rules: { criteria: app.settings.rules } } }) });
  let rec = opened.rec;
  if (!rec.meta.sample_id) rec.meta.sample_id = newSampleId();

  const form = h("form", { class: "screen entry", novalidate: true, onsubmit: (e) => e.preventDefault() });
  enterMovesOn(form);
  const title = stored ? `Edit test ${stored.meta?.sample_id || ""}` : "New sieve test";
  // The bar: the verdict and its first reason (the caution is in the verdict card, once).
  const barVerdict = h("p", { class: "bar-verdict", text: verdictLine(null) });
  const barReason = h("p", { class: "bar-reason" });
  const bar = h("div", { class: "verdict-bar", role: "status", "aria-live": "polite", "aria-label": "Current verdict" }, barVerdict, barReason);

  // Checked against: band, base soil, rule set.
  const bandF = refSelect("Specification band", bands, rec.meta.band_id, bandName);
  const baseF = refSelect("Base soil it protects", bases, rec.meta.base_id, baseName);
  const rulesSel = h("select", {}, RULE_SETS.map((r) => h("option", { value: r.id, text: r.name, selected: (rec.meta.rules?.criteria || app.settings.rules) === r.id })));
  const rulesF = field("Filter criteria", rulesSel);
  for (const s of [bandF.input, baseF.input, rulesSel]) s.addEventListener("change", () => schedule());
  bandF.input.addEventListener("change", () => offerBandStack());

  const metaBox = h("div");
  const testBox = h("div");
  const verdictBox = h("section", { class: "card verdict-card", "aria-label": "Verdict" });
  const chartBox = h("div", { class: "chart-box", "aria-label": "Gradation chart", role: "group" });
  const dvalBox = h("section", { class: "card", "aria-label": "D-values" });
  const saveStatus = h("p", { class: "hint save-status", role: "status" });
  const banner = h("p", { class: "core-error", role: "alert" });
  const tabNotice = h("p", { class: "tab-notice hint", role: "status", hidden: true });
  const conflictBox = h("section", { class: "card conflict", "aria-label": "Two versions of this test", hidden: true });

  fill(view,
    h("h1", { text: title }),
    tabNotice,
    form);
  form.append(
    h("section", { class: "card" }, h("h2", { text: "Checked against" }), h("div", { class: "grid2" }, bandF.wrap, baseF.wrap, rulesF.wrap),
      bases.length === 0 ? h("p", { class: "hint", text: "No base soil stored yet: add one under Bands & bases to get the filter checks." }) : null),
    h("details", { class: "card" },
      h("summary", { text: `Sample details: ${rec.meta.sample_id} (project, place, date…)` }), metaBox),
    h("section", { class: "card" }, h("h2", { text: "Gradation of the sample" }), testBox),
    banner,
    verdictBox, dvalBox,
    h("div", { class: "actions" },
      h("button", { type: "button", class: "btn primary", text: stored ? "Save changes" : "Save test", onclick: save }),
      h("button", { type: "button", class: "btn", text: "Start a new test", onclick: startNew })),
    saveStatus,
    conflictBox,
    bar);

  const meta = metaForm(metaBox, rec.meta, { onChange: () => schedule(), lots: lots.filter((l) => !l.deleted) });
  const editor = gradationEditor(testBox, rec.test, { path: "sample", presets, sedimentation: true, onChange: () => schedule() });
  renderVerdict(verdictBox, null, { slot: chartBox });
  const keeper = keepForm(app, {
    ...opened, read: () => current().record, noticeBox: tabNotice, conflictBox,
    reopen: (r, isNew) => app.go(isNew ? `#/record/${r.record_id}` : `#/entry/${r.record_id}`, { force: true }),
    done: afterSave,
  });

  /** A band chosen: its sieves are offered first as a stack. */
  function offerBandStack() {
    const band = bands.find((b) => b.record_id === bandF.input.value)?.band;
    const sieves = (band?.limits || []).map((l) => ({ opening_mm: l.opening_mm })).sort((a, b) => b.opening_mm - a.opening_mm);
    editor.offerStacks(sieves.length ? [{ id: "band-sieves", name: `The band's sieves (${band.name || "band"})`, sieves }] : []);
  }
  offerBandStack();

  function current() {
    const m = meta.read();
    const t = editor.read();
    const out = { ...rec, meta: { ...m.meta }, test: t.test };
    if (bandF.input.value) out.meta.band_id = bandF.input.value; else delete out.meta.band_id;
    if (baseF.input.value) out.meta.base_id = baseF.input.value; else delete out.meta.base_id;
    out.meta.rules = { ...(rec.meta.rules || {}), criteria: rulesSel.value };
    return { record: out, localErrors: m.errors + t.localErrors, coreTest: t.core };
  }

  let queued = false;
  let last = null;
  let asked = 0; // edits scheduled; view[data-busy] is set until the last one is shown
  function schedule() {
    asked += 1;
    view.dataset.busy = "1";
    if (!queued) {
      queued = true;
      queueMicrotask(() => { queued = false; run(); });
    }
    keeper.draft();
  }

  async function run() {
    const mine = asked;
    const done = () => { if (mine === asked) delete view.dataset.busy; };
    const { record, localErrors, coreTest } = current();
    if (localErrors) {
      barVerdict.textContent = "… no verdict yet: fix the highlighted entry";
      barReason.textContent = "";
      bar.dataset.verdict = "none";
      done();
      return;
    }
    const band = bands.find((b) => b.record_id === record.meta.band_id)?.band || null;
    const base = bases.find((b) => b.record_id === record.meta.base_id)?.test || null;
    const [resp, table] = await Promise.all([
      ask("evaluate", evaluateFields(coreTest, { band, base, rules: record.meta.rules }), "entry"),
      ask("gradation", { test: coreTest }, "entry-table")]);
    if (resp.superseded || mine !== asked) return;  // a newer edit is on its way: draw that one only
    if (!table.superseded) editor.showGradation(table.ok ? table.result : null, table.ok ? table.findings : []);
    last = resp;
    view.dataset.evaluated = String((Number(view.dataset.evaluated) || 0) + 1);
    const waiting = notYet(resp);
    const placed = showFieldError(form, resp.ok || waiting ? null : resp.error, editor);
    banner.textContent = !resp.ok && !placed && !waiting ? plainWords(resp.error.message, form, (f) => editor.screenField(f)) : "";
    renderVerdict(verdictBox, resp, { slot: chartBox, waiting: "Type the masses on at least two sieves to see the verdict." });
    if (waiting) fill(chartBox);
    barVerdict.textContent = resp.ok ? verdictLine(resp.result.verdict) : waiting ? "… no verdict yet: type the masses" : "… no verdict yet";
    barReason.textContent = resp.ok ? firstReason(resp.result) : "";
    bar.dataset.verdict = resp.ok ? resp.result.verdict : "none";
    if (resp.ok) {
      renderDvalues(dvalBox, resp.result.sample);
      renderChart(chartBox, { sample: resp.result.sample, base: resp.result.base, band, limits: resp.result.limits }, app.settings.axis);
    }
    done();
  }

  async function save() {
    const { record, localErrors } = current();
    if (localErrors) { saveStatus.textContent = "Not saved: fix the highlighted entries first."; return; }
    const tester = await askTester(app, saveStatus);
    if (tester && !record.meta.tested_by) record.meta.tested_by = tester;
    const res = await keeper.save(record, stored ? "edited" : "created");
    if (res.conflict) saveStatus.textContent = res.message;
  }

  async function afterSave(saved, changed) {
    rec = structuredClone(saved);
    if (last && last.ok) await storeResult(saved, last.core_version, { verdict: last.result.verdict });
    const msg = changed ? `Saved ${saved.meta.sample_id || ""} (revision ${saved.rev}).` : "Nothing changed since the last save.";
    saveStatus.textContent = msg;
    announce(msg);
    app.refreshBadge();
    if (!stored) app.go(`#/record/${saved.record_id}`);
  }

  async function startNew() {
    keeper.close();
    await clearDraft("new");
    app.go("#/entry", { force: true });
  }

  schedule();
}

/** Now, to the minute, as the record keeps times (ISO UTC): the sampling time a new test starts with. */
function nowMinute() {
  return new Date().toISOString().replace(/:\d\d\.\d{3}Z$/, ":00Z");
}

/** D-values, Cu, Cc, fractions and USCS class from the core's gradation. */
export function renderDvalues(box, g) {
  if (!g) { fill(box); return; }
  const d = g.d_mm || {};
  const fmtv = (v, unit = "") => (v === null || v === undefined ? "—" : `${Number(v.toPrecision(3))}${unit}`);
  const rows = Object.entries(d).map(([k, v]) => h("tr", { dataset: { dvalue: k } }, h("th", { scope: "row", text: k }), h("td", { text: fmtv(v, " mm") })));
  fill(box,
    h("h2", { text: "Curve figures" }),
    h("table", { class: "dvals" },
      h("caption", { text: "From the core (rounded for display)" }),
      h("tbody", {},
        rows,
        h("tr", {}, h("th", { scope: "row", text: "Cu" }), h("td", { dataset: { key: "cu" }, text: fmtv(g.cu) })),
        h("tr", {}, h("th", { scope: "row", text: "Cc" }), h("td", { dataset: { key: "cc" }, text: fmtv(g.cc) })),
        h("tr", {}, h("th", { scope: "row", text: "Gravel / sand / fines" }),
          h("td", { text: [g.gravel_pct, g.sand_pct, g.fines_pct].map((v) => (v === null || v === undefined ? "—" : `${v.toFixed(1)} %`)).join(" / ") })),
        h("tr", {}, h("th", { scope: "row", text: "USCS" }), h("td", { dataset: { key: "uscs" }, text: g.uscs ? `${g.uscs.symbol || "—"} ${g.uscs.name || ""}`.trim() : "—" })))));
}
