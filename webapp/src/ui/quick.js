// Screen "Spot check": a stored base soil and percent passing at a few sizes
// of the delivered material give the retention and permeability verdicts,
// without filling a whole record; the result can be saved as a test record.
import { h, fill, field, announce } from "./dom.js";
import { ask, evaluateFields } from "./core.js";
import { testEditor, enterMovesOn, showFieldError } from "./test_editor.js";
import { renderVerdict } from "./verdict.js";
import { renderChart } from "./chart.js";
import { renderDvalues, baseName } from "./entry.js";
import { RULE_SETS } from "./presets.js";
import { newSampleId } from "./meta_form.js";
import { blankRecord, listRecords } from "../storage/records.js";

export const QUICK_CHECKS = ["filter.retention", "filter.permeability", "filter.fines", "filter.max_size"];

export async function quickScreen(app, view) {
  const bases = await listRecords({ kind: "base" });
  const form = h("form", { class: "screen", novalidate: true, onsubmit: (e) => e.preventDefault() });
  enterMovesOn(form);
  const baseSel = h("select", {},
    h("option", { value: "", text: bases.length ? "Choose a base soil…" : "No base soil stored" }),
    bases.map((b) => h("option", { value: b.record_id, text: baseName(b) })));
  const rulesSel = h("select", {}, RULE_SETS.map((r) => h("option", { value: r.id, text: r.name, selected: app.settings.rules === r.id })));
  const editorBox = h("div");
  const verdictBox = h("section", { class: "card verdict-card", "aria-label": "Spot check verdict" });
  const dBox = h("section", { class: "card" });
  const chartBox = h("section", { class: "card" });
  const status = h("p", { class: "hint", role: "status" });
  fill(view, form);
  form.append(
    h("h1", { text: "Spot check" }),
    h("p", { class: "hint", text: "Retention and permeability against a stored base soil, from percent passing at a few sizes (a delivery ticket, a supplier's sheet). Typing only the base soil's D15 and D85 is not offered: the core needs the base soil's curve." }),
    h("section", { class: "card" }, h("div", { class: "grid2" }, field("Base soil", baseSel).wrap, field("Filter criteria", rulesSel).wrap),
      bases.length === 0 ? h("p", {}, h("a", { href: "#/base", text: "Add a base soil" }), " first.") : null),
    h("section", { class: "card" }, h("h2", { text: "Delivered material, percent passing" }), editorBox),
    verdictBox, dBox, chartBox,
    h("div", { class: "actions" }, h("button", { type: "button", class: "btn primary", text: "Save as a test record", onclick: saveAs })),
    status);
  const editor = testEditor(editorBox, { passing: [{}, {}, {}] }, { path: "sample", allowMasses: false, onChange: () => schedule() });
  for (const s of [baseSel, rulesSel]) s.addEventListener("change", () => schedule());
  renderVerdict(verdictBox, null, { title: "Spot check verdict" });

  let timer = null;
  let asked = 0; // edits scheduled; view[data-busy] is set until the last one is shown
  function schedule() { asked += 1; view.dataset.busy = "1"; clearTimeout(timer); timer = setTimeout(run, 120); }
  async function run() {
    const mine = asked;
    const done = () => { if (mine === asked) delete view.dataset.busy; };
    const { test, localErrors } = editor.read();
    if (localErrors) { done(); return; }
    const base = bases.find((b) => b.record_id === baseSel.value)?.test || null;
    const resp = await ask("evaluate", evaluateFields(test, { base, rules: { criteria: rulesSel.value } }), "quick");
    if (resp.superseded) return;
    view.dataset.evaluated = String((Number(view.dataset.evaluated) || 0) + 1);
    const placed = showFieldError(form, resp.ok ? null : resp.error);
    status.textContent = !resp.ok && !placed ? resp.error.message : "";
    renderVerdict(verdictBox, resp, { title: "Spot check verdict", only: base ? null : QUICK_CHECKS });
    if (resp.ok) {
      renderDvalues(dBox, resp.result.sample);
      renderChart(chartBox, { sample: resp.result.sample, base: resp.result.base, limits: resp.result.limits }, app.settings.axis);
    }
    done();
  }
  function saveAs() {
    const { test, localErrors } = editor.read();
    if (localErrors) { status.textContent = "Fix the highlighted entries first."; return; }
    const meta = { sample_id: newSampleId(), rules: { criteria: rulesSel.value }, notes: "From a spot check." };
    if (app.settings.tester) meta.tested_by = app.settings.tester;
    if (baseSel.value) meta.base_id = baseSel.value;
    announce("Complete the record and save it.");
    app.go("#/entry", { seed: blankRecord("test", { meta, test }) });
  }
}
