// The input of one sieve test, in any form the core takes: masses
// retained on a stack of sieves (with pan, dry mass and washed mass),
// percent passing at a few sizes, or D-values (a supplier's sheet), alone or
// with percent passing at a few sizes. Typed text is parsed as a decimal
// (comma or point); the percent passing and cumulative figures shown beside
// each sieve come from the core's response through `showGradation`.
import { h, fill, field, fmt, fmtPct, newId, table } from "./dom.js";
import { parseDecimal, showDecimal } from "./decimal.js";

/** The core's row for one sieve: from `table` (cumulative and passing) or else `points`. */
function rowFor(g, mm) {
  const same = (q) => Math.abs(q.opening_mm - mm) <= 1e-9 * mm;
  return (g?.table || []).find(same) || (g?.points || []).find(same) || null;
}

/** D-values offered in the D-value form (more appear when a loaded test has them). */
export const D_NAMES = ["D10", "D15", "D60", "D85", "D90"];
const FORM_WORDS = { masses: "Masses retained", passing: "Percent passing", dvalues: "D-values (supplier's sheet)" };
const dOrder = (a, b) => Number(a.slice(1)) - Number(b.slice(1));

/** Enter moves to the next entry field of the same form (phone "next" key). */
export function enterMovesOn(form) {
  form.addEventListener("keydown", (ev) => {
    if (ev.key !== "Enter" || !ev.target.matches("input.seq")) return;
    ev.preventDefault();
    const seq = [...form.querySelectorAll("input.seq:not([disabled])")];
    const next = seq[seq.indexOf(ev.target) + 1];
    if (next) next.focus();
    else ev.target.dispatchEvent(new CustomEvent("lastenter", { bubbles: true }));
  });
}

function decimalInput(value, attrs = {}) {
  return h("input", {
    type: "text", inputmode: "decimal", autocomplete: "off", enterkeyhint: "next",
    class: "seq num", value: showDecimal(value), ...attrs,
  });
}

/**
 * Build a test editor inside `box`.
 * opts.path: field-path prefix the core uses for this test ("sample", "base", "test").
 * opts.onChange(): called after every edit.
 * opts.presets: [{id, name, sieves: [{opening_mm, label}]}] from `sieve_presets`.
 * opts.forms: the forms offered, of "masses", "passing", "dvalues" (a choice is shown when more than one).
 * opts.dNames: the D-values offered in the D-value form.
 */
export function testEditor(box, test, { path = "sample", onChange = () => {}, presets = [], forms = ["masses", "passing", "dvalues"], dNames = D_NAMES } = {}) {
  const state = {
    form: forms[0],
    rows: [], // masses: {opening_mm, label, text}; passing and D-value forms: {openText, pctText}
    d: {}, // D-value form: name -> typed text
    pan: "", dry: "", washed: "",
    extra: {}, // plasticity, dispersive etc. kept as they were
  };
  const labels = new Map();
  for (const s of [...(presets.labelsOnly || []), ...presets.flatMap((p) => p.sieves || [])]) {
    if (s.label) labels.set(Number(s.opening_mm).toPrecision(12), s.label);
  }
  const labelOf = (mm) => labels.get(Number(mm).toPrecision(12)) || `${fmt(mm, 4)} mm`;

  function load(t) {
    state.extra = {};
    for (const [k, v] of Object.entries(t || {})) {
      if (!["sieves", "passing", "d_mm", "pan_g", "dry_mass_g", "washed_dry_mass_g"].includes(k)) state.extra[k] = v;
    }
    state.d = Object.fromEntries(Object.entries(t?.d_mm || {}).map(([k, v]) => [k, showDecimal(v)]));
    if (t && (t.passing || t.d_mm)) {
      state.form = t.d_mm ? "dvalues" : "passing";
      state.rows = (t.passing || []).map((p) => ({ openText: showDecimal(p.opening_mm), pctText: showDecimal(p.passing_pct) }));
    } else {
      if (t?.sieves) state.form = "masses";
      state.rows = (t?.sieves || []).map((s) => ({ opening_mm: s.opening_mm, text: showDecimal(s.retained_g) }));
      state.pan = showDecimal(t?.pan_g);
      state.dry = showDecimal(t?.dry_mass_g);
      state.washed = showDecimal(t?.washed_dry_mass_g);
    }
  }
  load(test);
  if (!forms.includes(state.form)) state.form = forms[0];

  const root = h("div", { class: "test-editor" });
  box.append(root);
  let gradation = null;

  function changed() { onChange(); }

  function onDecimal(input, errNode, set) {
    input.addEventListener("input", () => {
      set(input.value);
      const p = parseDecimal(input.value);
      errNode.textContent = p.ok ? "" : p.message;
      input.setAttribute("aria-invalid", p.ok ? "false" : "true");
      changed();
    });
  }

  function removeButton(label, i) {
    return h("button", {
      type: "button", class: "icon-btn", "aria-label": label, text: "✕",
      onclick: () => { state.rows.splice(i, 1); render(); changed(); },
    });
  }

  function massRows() {
    const tbody = h("tbody");
    state.rows.forEach((row, i) => {
      const id = newId("sv");
      const input = decimalInput(row.text, { id, "aria-label": `Mass retained on ${labelOf(row.opening_mm)}, grams`, dataset: { field: `${path}.sieves[${i}].retained_g` } });
      const err = h("p", { class: "field-error", id: `${id}-err`, role: "status" });
      input.setAttribute("aria-describedby", `${id}-err`);
      onDecimal(input, err, (v) => { row.text = v; });
      const point = rowFor(gradation, row.opening_mm);
      const cum = point ? point.cum_retained_pct ?? null : null;
      tbody.append(h("tr", { dataset: { opening: row.opening_mm } },
        h("th", { scope: "row", text: labelOf(row.opening_mm) }),
        h("td", {}, input, err),
        h("td", { class: "calc cum", text: cum === null ? "—" : fmtPct(cum) }),
        h("td", { class: "calc pass", text: point ? fmtPct(point.passing_pct) : "—" }),
        h("td", {}, removeButton(`Remove sieve ${labelOf(row.opening_mm)}`, i))));
    });
    return table({ class: "sieve-table" }, "Masses retained on each sieve; cumulative retained (Cum.) and passing from the calculator",
      ["Sieve", "Retained (g)", "Cum. (%)", "Passing (%)", null], tbody);
  }

  function passingRows(caption = "Percent passing at each size") {
    const tbody = h("tbody");
    state.rows.forEach((row, i) => {
      const a = decimalInput(row.openText, { "aria-label": `Size ${i + 1}, mm`, dataset: { field: `${path}.passing[${i}].opening_mm` } });
      const b = decimalInput(row.pctText, { "aria-label": `Passing at size ${i + 1}, percent`, dataset: { field: `${path}.passing[${i}].passing_pct` } });
      row.inputs = [a, b];
      const ea = h("p", { class: "field-error", role: "status" });
      const eb = h("p", { class: "field-error", role: "status" });
      onDecimal(a, ea, (v) => { row.openText = v; });
      onDecimal(b, eb, (v) => { row.pctText = v; });
      tbody.append(h("tr", {},
        h("td", {}, a, ea), h("td", {}, b, eb),
        h("td", {}, removeButton(`Remove row ${i + 1}`, i))));
    });
    return table({ class: "sieve-table" }, caption, ["Size (mm)", "Passing (%)", null], tbody);
  }

  /** The D-value form: one field per D-value, then optional percent passing at sizes. */
  function dValueRows() {
    const names = [...new Set([...dNames, ...Object.keys(state.d)])].sort(dOrder);
    const tbody = h("tbody");
    for (const name of names) {
      const id = newId("dv");
      const input = decimalInput(state.d[name] ?? "", { id, "aria-label": `${name}, mm`, dataset: { field: `${path}.d_mm.${name}` } });
      const err = h("p", { class: "field-error", id: `${id}-err`, role: "status" });
      input.setAttribute("aria-describedby", `${id}-err`);
      onDecimal(input, err, (v) => { state.d[name] = v; });
      tbody.append(h("tr", { dataset: { dname: name } },
        h("th", { scope: "row", text: name }), h("td", {}, input, err)));
    }
    return [
      table({ class: "sieve-table dvalue-table" }, "D-values: the size at that percent passing (leave empty what the sheet does not give)",
        ["D-value", "Size (mm)"], tbody),
      passingRows("Percent passing at sizes, if given (the fines: passing 0.075 mm). A row with no percent is left out.")];
  }

  function massTotals() {
    const make = (label, key, fieldName, hint) => {
      const f = field(label, decimalInput(state[key]), { fieldPath: `${path}.${fieldName}`, hint });
      onDecimal(f.input, f.error, (v) => { state[key] = v; });
      return f.wrap;
    };
    return h("div", { class: "grid2" },
      make("Pan (g)", "pan", "pan_g", ""),
      make("Dry mass before washing (g)", "dry", "dry_mass_g", "Oven-dry mass of the whole sample"),
      make("Dry mass after washing (g)", "washed", "washed_dry_mass_g", "Leave empty if not washed"));
  }

  function stackControls() {
    if (state.form !== "masses") {
      return h("button", { type: "button", class: "btn", text: "Add a size", onclick: () => { state.rows.push({ openText: "", pctText: "" }); render(); changed(); } });
    }
    const sel = h("select", { id: newId("preset") },
      h("option", { value: "", text: "Choose a sieve stack…" }),
      presets.map((p) => h("option", { value: p.id, text: p.name })));
    const apply = h("button", {
      type: "button", class: "btn", text: "Use this stack",
      onclick: () => {
        const p = presets.find((q) => q.id === sel.value);
        if (!p) return;
        const old = new Map(state.rows.map((r) => [Number(r.opening_mm).toPrecision(12), r.text]));
        state.rows = p.sieves.map((s) => ({ opening_mm: s.opening_mm, text: old.get(Number(s.opening_mm).toPrecision(12)) || "" }));
        render(); changed();
      },
    });
    const custom = decimalInput("", { class: "num", enterkeyhint: "done" });
    const customErr = h("p", { class: "field-error", role: "status" });
    const add = h("button", {
      type: "button", class: "btn", text: "Add sieve",
      onclick: () => {
        const p = parseDecimal(custom.value);
        if (!p.ok || p.value === null) { customErr.textContent = p.ok ? "Type the opening in mm." : p.message; return; }
        state.rows.push({ opening_mm: p.value, text: "" });
        state.rows.sort((a, b) => b.opening_mm - a.opening_mm);
        render(); changed();
      },
    });
    const f = field("Custom sieve opening (mm)", custom);
    f.error.replaceWith(customErr);
    customErr.id = `${custom.id}-err`;
    return h("div", { class: "stack-controls" },
      field("Sieve stack", sel).wrap, apply,
      f.wrap, add);
  }

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
              render(); changed();
            } }),
          h("label", { for: id, text: FORM_WORDS[v] }));
      })) : null;
    const body = { masses: () => [massRows(), massTotals()], passing: () => passingRows(), dvalues: () => dValueRows() }[state.form]();
    fill(root, toggle, state.form === "dvalues" ? [body, stackControls()] : [stackControls(), body]);
  }
  render();

  return {
    /** {test, localErrors}: the test as the core takes it, and how many fields failed to parse. */
    read() {
      let bad = 0;
      const num = (t) => { const p = parseDecimal(t); if (!p.ok) bad += 1; return p.ok ? p.value : null; };
      const t = { ...state.extra };
      if (state.form === "passing") {
        t.passing = state.rows.map((r) => {
          const o = {};
          const a = num(r.openText); const b = num(r.pctText);
          if (a !== null) o.opening_mm = a;
          if (b !== null) o.passing_pct = b;
          return o;
        });
      } else if (state.form === "dvalues") {
        t.d_mm = {};
        for (const [name, text] of Object.entries(state.d).sort(([a], [b]) => dOrder(a, b))) {
          const v = num(text);
          if (v !== null) t.d_mm[name] = v;
        }
        // A row with no percent is left out; the inputs of each row sent carry
        // the index it has in the request, so a core error lands beside them.
        const rows = [];
        for (const r of state.rows) {
          const a = num(r.openText); const b = num(r.pctText);
          const [ia, ib] = r.inputs || [];
          if (b === null) { ia?.removeAttribute("data-field"); ib?.removeAttribute("data-field"); continue; }
          if (ia) ia.dataset.field = `${path}.passing[${rows.length}].opening_mm`;
          if (ib) ib.dataset.field = `${path}.passing[${rows.length}].passing_pct`;
          rows.push(a === null ? { passing_pct: b } : { opening_mm: a, passing_pct: b });
        }
        if (rows.length) t.passing = rows;
      } else {
        t.sieves = state.rows.map((r) => {
          const o = { opening_mm: r.opening_mm };
          const v = num(r.text);
          if (v !== null) o.retained_g = v;
          return o;
        });
        for (const [key, name] of [["pan", "pan_g"], ["dry", "dry_mass_g"], ["washed", "washed_dry_mass_g"]]) {
          const v = num(state[key]);
          if (v !== null) t[name] = v;
        }
      }
      return { test: t, localErrors: bad };
    },
    load(t) { load(t); render(); },
    /** Show the core's per-sieve figures (a `gradation` result with its `table`, or a gradation's points). */
    showGradation(g) {
      gradation = g;
      for (const tr of root.querySelectorAll("tr[data-opening]")) {
        const mm = Number(tr.dataset.opening);
        const p = rowFor(g, mm);
        const cum = p ? p.cum_retained_pct ?? null : null;
        tr.querySelector(".pass").textContent = p ? fmtPct(p.passing_pct) : "—";
        tr.querySelector(".cum").textContent = cum === null ? "—" : fmtPct(cum);
      }
    },
    root,
  };
}

/** Put a core error next to the field it names (inputs carry data-field). Returns true if placed. */
export function showFieldError(scope, error) {
  for (const n of scope.querySelectorAll(".core-field-error")) n.remove();
  for (const n of scope.querySelectorAll("[aria-invalid='true'][data-core-invalid]")) {
    n.removeAttribute("aria-invalid"); delete n.dataset.coreInvalid;
  }
  if (!error || !error.field) return false;
  const target = [...scope.querySelectorAll("[data-field]")].find((n) => n.dataset.field === error.field);
  if (!target) return false;
  target.setAttribute("aria-invalid", "true");
  target.dataset.coreInvalid = "1";
  const msg = h("p", { class: "field-error core-field-error", role: "status", text: error.message });
  target.insertAdjacentElement("afterend", msg);
  return true;
}
