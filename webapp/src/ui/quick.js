// Screen "Spot check": the base soil (a stored one, or its D15 and D85 and
// percent passing 4.75 mm and 0.075 mm typed from its lab sheet) and the
// delivered material (percent passing at a few sieves, or the D-values of a
// supplier's sheet) give the retention and permeability verdicts without
// filling a whole record; the result can be saved as a test record.
import { h, fill, field, newId, announce } from "./dom.js";
import { ask, evaluateFields } from "./core.js";
import { gradationEditor, enterMovesOn, showFieldError } from "./editor/gradation_editor.js";
import { renderVerdict, checkItem, noticeNode, verdictBlock, notYet } from "./verdict.js";
import { plainWords } from "./editor/fields.js";
import { renderChart } from "./chart.js";
import { renderDvalues, baseName } from "./entry.js";
import { RULE_SETS } from "./presets.js";
import { newSampleId } from "./meta_form.js";
import { blankRecord, listRecords, saveRecord } from "../storage/records.js";

/** The two checks a spot check is for, shown first and large. */
export const HEADLINE_CHECKS = ["filter.retention", "filter.permeability"];

/** A base soil typed here starts with the two sizes its category needs, in view, with no percent. */
const TYPED_BASE = { d_mm: {}, passing: [{ opening_mm: 4.75 }, { opening_mm: 0.075 }] };

function radioGroup(legend, options, selected, onChange) {
  const name = newId("choice");
  return h("fieldset", { class: "toggle" }, h("legend", { text: legend }),
    options.map(([value, label]) => {
      const id = `${name}-${value}`;
      return h("span", { class: "radio" },
        h("input", { type: "radio", name, id, value, checked: value === selected, onchange: () => onChange(value) }),
        h("label", { for: id, text: label }));
    }));
}

/** Nothing typed at all in a typed base soil: no base soil (not an error). */
const isEmptyTest = (t) => Object.keys(t.d_mm || {}).length === 0 && (t.passing || []).length === 0;

export async function quickScreen(app, view) {
  const bases = await listRecords({ kind: "base" });
  const form = h("form", { class: "screen", novalidate: true, onsubmit: (e) => e.preventDefault() });
  enterMovesOn(form);
  let baseFrom = bases.length ? "stored" : "typed";
  const baseSel = h("select", {},
    h("option", { value: "", text: bases.length ? "Choose a base soil…" : "No base soil stored" }),
    bases.map((b) => h("option", { value: b.record_id, text: baseName(b) })));
  const storedBox = h("div", {}, field("Stored base soil", baseSel).wrap,
    bases.length === 0 ? h("p", { class: "hint" }, "None on this device yet: type its figures, or ", h("a", { href: "#/base", text: "add a base soil" }), ".") : null);
  const typedBox = h("div", { class: "typed-base" },
    h("p", { class: "hint", text: "From the base soil's lab sheet. Terzaghi ratios need its D15 and D85. The NRCS, USBR and FEMA sets also need its percent passing 4.75 mm and 0.075 mm, which give its category; without them those checks say \"needs data\"." }));
  const rulesSel = h("select", {}, RULE_SETS.map((r) => h("option", { value: r.id, text: r.name, selected: app.settings.rules === r.id })));
  const editorBox = h("div");
  const headBox = h("section", { class: "card headline", "aria-label": "Retention and permeability" });
  const verdictBox = h("section", { class: "card verdict-card", "aria-label": "Spot check verdict" });
  const dBox = h("section", { class: "card" });
  const chartBox = h("section", { class: "card" });
  const status = h("p", { class: "hint", role: "status" });
  const showBase = () => { storedBox.hidden = baseFrom !== "stored"; typedBox.hidden = baseFrom !== "typed"; };
  fill(view, form);
  form.append(
    h("h1", { text: "Spot check" }),
    h("p", { class: "hint", text: "Does a delivered filter retain the base soil it protects and drain freely? From a delivery ticket or a supplier's sheet, in seconds. Save it as a test record to keep it." }),
    h("section", { class: "card" }, h("h2", { text: "Base soil it protects" }),
      radioGroup("Base soil from", [["stored", "One stored on this device"], ["typed", "Its figures, typed here"]], baseFrom,
        (v) => { baseFrom = v; showBase(); schedule(); }),
      storedBox, typedBox, field("Filter criteria", rulesSel).wrap),
    h("section", { class: "card" }, h("h2", { text: "Delivered material" }), editorBox),
    headBox, verdictBox, dBox, chartBox,
    h("div", { class: "actions" }, h("button", { type: "button", class: "btn primary", text: "Save as a test record", onclick: saveAs })),
    status);
  showBase();
  const baseEditor = gradationEditor(typedBox, TYPED_BASE, { path: "base", forms: ["dvalues"], dNames: ["D15", "D85"], dispersive: true, onChange: () => schedule() });
  const editor = gradationEditor(editorBox, { passing: [{}, {}, {}] }, { path: "sample", forms: ["passing", "dvalues"], onChange: () => schedule() });
  for (const s of [baseSel, rulesSel]) s.addEventListener("change", () => schedule());
  renderVerdict(verdictBox, null, { title: "All checks", notice: false });
  renderHeadline(headBox, null);

  /** {base, record, bad}: the base soil test sent (or null) and the stored record it came from. */
  function readBase() {
    if (baseFrom === "stored") {
      const record = bases.find((b) => b.record_id === baseSel.value) || null;
      return { base: record?.test || null, record, bad: 0 };
    }
    const { test, localErrors } = baseEditor.read();
    return { base: isEmptyTest(test) ? null : test, record: null, bad: localErrors };
  }

  let timer = null;
  let asked = 0; // edits scheduled; view[data-busy] is set until the last one is shown
  function schedule() { asked += 1; view.dataset.busy = "1"; clearTimeout(timer); timer = setTimeout(run, 120); }
  async function run() {
    const mine = asked;
    const done = () => { if (mine === asked) delete view.dataset.busy; };
    const { test, localErrors } = editor.read();
    const { base, bad } = readBase();
    if (localErrors || bad) { done(); return; }
    const resp = await ask("evaluate", evaluateFields(test, { base, rules: { criteria: rulesSel.value } }), "quick");
    if (resp.superseded) return;
    view.dataset.evaluated = String((Number(view.dataset.evaluated) || 0) + 1);
    const waiting = notYet(resp);
    const placed = showFieldError(form, resp.ok || waiting ? null : resp.error, editor, baseEditor);
    status.textContent = !resp.ok && !placed && !waiting ? plainWords(resp.error.message, form) : "";
    renderHeadline(headBox, resp, Boolean(base));
    renderVerdict(verdictBox, resp, { title: "All checks", notice: false, waiting: "Type the delivered material's figures to see them." });
    if (resp.ok) {
      renderDvalues(dBox, resp.result.sample);
      renderChart(chartBox, { sample: resp.result.sample, base: resp.result.base, limits: resp.result.limits }, app.settings.axis);
    } else {
      fill(dBox); fill(chartBox);
    }
    done();
  }
  async function saveAs() {
    const { test, localErrors } = editor.read();
    const { base, record, bad } = readBase();
    if (localErrors || bad) { status.textContent = "Fix the highlighted entries first."; return; }
    const meta = { sample_id: newSampleId(), rules: { criteria: rulesSel.value }, notes: "From a spot check." };
    if (app.settings.tester) meta.tested_by = app.settings.tester;
    if (record) meta.base_id = record.record_id;
    else if (base) {
      // Only a base soil the core accepts is stored.
      const check = await ask("gradation", { test: base });
      if (!check.ok) { status.textContent = `Not saved: the base soil's figures are refused (${check.error?.message}).`; return; }
      // A typed base soil becomes a base record of its own, so the test can point to it.
      const baseRec = blankRecord("base", { meta: { sample_id: newSampleId().replace(/^S-/, "B-"), notes: "Typed in a spot check." }, test: base });
      const { record: saved } = await saveRecord(baseRec, { by: app.settings.tester || "", summary: "created in a spot check" });
      meta.base_id = saved.record_id;
      announce(`Base soil saved as ${saved.meta.sample_id}. Complete the test record and save it.`);
    } else announce("Complete the record and save it.");
    app.go("#/entry", { seed: blankRecord("test", { meta, test }) });
  }
}

/** Retention and permeability, large, as the core reports them (statuses and figures are the core's). */
function renderHeadline(box, resp, hasBase = false) {
  if (!resp || !resp.ok) {
    fill(box, h("h2", { text: "Retention and permeability" }),
      h("p", { class: "muted", text: resp && !notYet(resp) ? "No result yet: see the message beside the entries." : "Type the delivered material's figures to see them." }),
      noticeNode());
    return;
  }
  const checks = HEADLINE_CHECKS.map((id) => (resp.result.checks || []).find((c) => c.id === id && (c.subject || "sample") === "sample"))
    .filter(Boolean);
  fill(box, h("h2", { text: "Retention and permeability" }),
    hasBase ? null : h("p", { class: "hint", text: "No base soil given: both need one." }),
    checks.length ? h("ul", { class: "checks headline-checks" }, checks.map(checkItem))
      : h("p", { class: "muted", text: "The core reported neither check for this input." }),
    h("p", { class: "hint", text: "All checks together (listed below):" }),
    verdictBlock(resp.result.verdict),
    noticeNode(resp.result.notice || undefined));
}
