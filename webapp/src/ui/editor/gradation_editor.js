// The input of one sieve test, in any form the core takes: masses
// retained on a stack of sieves (with pan, dry mass and washed mass),
// percent passing at a few sizes, or D-values (a supplier's sheet), alone or
// with percent passing at a few sizes. Typed text is parsed as a decimal
// (comma or point); the percent passing and cumulative figures shown beside
// each sieve come from the core's response through `showGradation`.
// Each form lives in its own module (masses.js, passing.js, dvalues.js);
// the fines (plasticity, dispersive) in fines.js; this one holds what they
// share: the state, the choice of form, reading, and the map from the rows
// sent to the rows on screen (empty rows are not sent).
import { h, fill, fmt, fmtPct, newId } from "../dom.js";
import { parseDecimal } from "../decimal.js";
import { onDecimal, rowFor } from "./fields.js";
import { loadMasses, readMasses, renderMasses } from "./masses.js";
import { loadPassing, readPassingRows, renderPassing } from "./passing.js";
import { D_NAMES, loadDvalues, readDvalues, renderDvalues } from "./dvalues.js";
import { loadFines, readFines, renderFines } from "./fines.js";
import { loadSed, readSed, renderSed, sedScreenField, showSed } from "./sedimentation.js";

export { D_NAMES } from "./dvalues.js";
export { enterMovesOn, showFieldError } from "./fields.js";

const FORM_WORDS = { masses: "Masses retained", passing: "Percent passing", dvalues: "D-values (supplier's sheet)" };
/** Keys of a test that belong to one of the forms; any other key is kept as it was. */
const FORM_KEYS = ["sieves", "passing", "d_mm", "pan_g", "dry_mass_g", "washed_dry_mass_g", "plasticity", "dispersive"];

/**
 * Build a gradation editor inside `box`.
 * opts.path: field-path prefix the core uses for this test ("sample", "base", "test").
 * opts.onChange(): called after every edit.
 * opts.presets: [{id, name, sieves: [{opening_mm, label}]}] from `sieve_presets`.
 * opts.forms: the forms offered, of "masses", "passing", "dvalues" (a choice is shown when more than one).
 * opts.dNames: the D-values offered in the D-value form.
 * opts.dispersive: also ask whether the soil is dispersive (a base soil).
 * opts.sedimentation: also offer the hydrometer sheet (the test's `sedimentation` key).
 */
export function gradationEditor(box, test, { path = "sample", onChange = () => {}, presets = [], forms = ["masses", "passing", "dvalues"], dNames = D_NAMES, dispersive = false, sedimentation = false } = {}) {
  const state = {
    form: forms[0],
    rows: [], // masses: {opening_mm, text}; passing and D-value forms: {openText, pctText}
    d: {}, // D-value form: name -> typed text
    pan: "", dry: "", washed: "",
    extra: {}, // keys no form shows, kept as they were
    fines: loadFines(null),
    sed: loadSed(null),
  };
  const formKeys = sedimentation ? [...FORM_KEYS, "sedimentation"] : FORM_KEYS;
  const labels = new Map();
  for (const s of [...(presets.labelsOnly || []), ...presets.flatMap((p) => p.sieves || [])]) {
    if (s.label) labels.set(Number(s.opening_mm).toPrecision(12), s.label);
  }
  const root = h("div", { class: "test-editor" });
  const formBox = h("div");
  const finesBox = h("div");
  const sedBox = h("div");
  root.append(formBox, finesBox, sedBox);
  box.append(root);
  const labelOf = (mm) => {
    const name = labels.get(Number(mm).toPrecision(12));
    return name ? `${name} · ${fmt(mm, 4)} mm` : `${fmt(mm, 4)} mm`;
  };
  let sent = []; // sent[k]: the row on screen of the k-th row sent

  // What the form modules see of the editor.
  const ed = {
    state, path, presets, dNames, gradation: null, extraStacks: [], changed: onChange,
    labelOf,
    /** "No. 16" over "1.18 mm" (read as "No. 16 · 1.18 mm"). */
    sieveLabel: (mm) => {
      const name = labels.get(Number(mm).toPrecision(12));
      return name ? [name, h("span", { class: "sr-only", text: " · " }), h("span", { class: "mm", text: `${fmt(mm, 4)} mm` })] : `${fmt(mm, 4)} mm`;
    },
    onDecimal: (input, errNode, set) => onDecimal(input, errNode, set, onChange),
    removeButton: (label, i) => h("button", {
      type: "button", class: "icon-btn", "aria-label": label, text: "✕",
      onclick: () => { state.rows.splice(i, 1); render(); onChange(); },
    }),
    rerender: () => { render(); onChange(); },
  };

  function load(t) {
    state.extra = {};
    state.fines = loadFines(t);
    if (sedimentation) state.sed = loadSed(t);
    for (const [k, v] of Object.entries(t || {})) if (!formKeys.includes(k)) state.extra[k] = v;
    loadDvalues(state, t);
    if (t && (t.passing || t.d_mm)) {
      state.form = t.d_mm ? "dvalues" : "passing";
      loadPassing(state, t);
    } else {
      if (t?.sieves) state.form = "masses";
      loadMasses(state, t);
    }
  }
  load(test);
  if (!forms.includes(state.form)) state.form = forms[0];

  function render() {
    const formId = newId("form");
    const toggle = forms.length > 1 ? h("fieldset", { class: "toggle" },
      h("legend", { text: "Entered as" }),
      forms.map((v) => {
        const id = `${formId}-${v}`;
        return h("span", { class: "radio" },
          h("input", { type: "radio", name: formId, id, value: v, checked: state.form === v,
            onchange: () => {
              state.form = v; state.d = {};
              // The fines row is shown with its size filled in, in view, and is
              // never sent without a percent typed beside it.
              state.rows = v === "dvalues" ? [{ openText: "0.075", pctText: "" }] : [];
              render(); onChange();
            } }),
          h("label", { for: id, text: FORM_WORDS[v] }));
      })) : null;
    const body = { masses: renderMasses, passing: renderPassing, dvalues: renderDvalues }[state.form](ed);
    fill(formBox, toggle, body);
  }
  render();
  fill(finesBox, renderFines(ed, { dispersive }));
  if (sedimentation) fill(sedBox, renderSed(ed));

  return {
    /**
     * {test, localErrors, core}: the test as typed (stored and kept in drafts), how many fields failed to
     * parse or are incomplete, and the test to send to the core (without a hydrometer sheet that has no
     * complete reading yet).
     */
    read() {
      let bad = 0;
      const num = (t) => { const p = parseDecimal(t); if (!p.ok) bad += 1; return p.ok ? p.value : null; };
      const missing = () => { bad += 1; };
      let part;
      if (state.form === "masses") ({ test: part, sent } = readMasses(state, num));
      else if (state.form === "dvalues") ({ test: part, sent } = readDvalues(state, num, missing));
      else { const r = readPassingRows(state, num, missing); part = { passing: r.passing }; sent = r.sent; }
      const test = { ...state.extra, ...part, ...readFines(state.fines, num) };
      let core = test;
      if (sedimentation) {
        const { sed, ready } = readSed(state.sed, num, missing);
        if (sed) test.sedimentation = sed;
        core = ready ? test : { ...test };
        if (!ready) delete core.sedimentation;
      }
      return { test, localErrors: bad, core };
    },
    load(t) {
      load(t); render(); fill(finesBox, renderFines(ed, { dispersive }));
      if (sedimentation) fill(sedBox, renderSed(ed));
    },
    /** The field on screen of a field path of the request (rows left out shift the indices). */
    screenField(field) {
      if (sedimentation && String(field || "").startsWith(`${path}.sedimentation.`)) return sedScreenField(state.sed, path, field);
      const m = new RegExp(`^${path.replace(".", "\\.")}\\.(sieves|passing)\\[(\\d+)\\](.*)$`).exec(field || "");
      if (!m || sent[Number(m[2])] === undefined) return field;
      return `${path}.${m[1]}[${sent[Number(m[2])]}]${m[3]}`;
    },
    /** Offer more sieve stacks first in the choice (the band's sieves); re-renders the form. */
    offerStacks(stacks) { ed.extraStacks = stacks; if (state.form === "masses") render(); },
    /**
     * Show the core's per-sieve figures (a `gradation` result with its `table`, or a gradation's points),
     * and on the hydrometer sheet its reduced table and the `findings` that concern it.
     */
    showGradation(g, findings = []) {
      ed.gradation = g;
      if (sedimentation) showSed(state.sed, path, g, findings, root.closest("form, .screen") || root);
      for (const tr of root.querySelectorAll("tr[data-opening]")) {
        const p = rowFor(g, Number(tr.dataset.opening));
        const cum = p ? p.cum_retained_pct ?? null : null;
        tr.querySelector(".pass").textContent = p ? fmtPct(p.passing_pct) : "—";
        tr.querySelector(".cum").textContent = cum === null ? "—" : fmtPct(cum);
      }
    },
    root,
  };
}
