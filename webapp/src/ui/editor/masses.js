// The masses form: mass retained on each sieve of a stack (with the core's
// cumulative and passing beside it), pan, dry mass before and after washing.
import { h, field, fmtPct, newId, table } from "../dom.js";
import { parseDecimal, showDecimal } from "../decimal.js";
import { decimalInput, rowFor } from "./fields.js";

const TOTALS = [["pan", "pan_g"], ["dry", "dry_mass_g"], ["washed", "washed_dry_mass_g"]];

/** The state of this form loaded from a test. */
export function loadMasses(state, t) {
  state.rows = (t?.sieves || []).map((s) => ({ opening_mm: s.opening_mm, text: showDecimal(s.retained_g) }));
  for (const [key, name] of TOTALS) state[key] = showDecimal(t?.[name]);
}

function massRows(ed) {
  const { state, path } = ed;
  const tbody = h("tbody");
  state.rows.forEach((row, i) => {
    const id = newId("sv");
    const input = decimalInput(row.text, { id, "aria-label": `Mass retained on ${ed.labelOf(row.opening_mm)}, grams`, dataset: { field: `${path}.sieves[${i}].retained_g` } });
    const err = h("p", { class: "field-error", id: `${id}-err`, role: "status" });
    input.setAttribute("aria-describedby", `${id}-err`);
    ed.onDecimal(input, err, (v) => { row.text = v; });
    const point = rowFor(ed.gradation, row.opening_mm);
    const cum = point ? point.cum_retained_pct ?? null : null;
    tbody.append(h("tr", { dataset: { opening: row.opening_mm } },
      h("th", { scope: "row", text: ed.labelOf(row.opening_mm) }),
      h("td", {}, input, err),
      h("td", { class: "calc cum", text: cum === null ? "—" : fmtPct(cum) }),
      h("td", { class: "calc pass", text: point ? fmtPct(point.passing_pct) : "—" }),
      h("td", {}, ed.removeButton(`Remove sieve ${ed.labelOf(row.opening_mm)}`, i))));
  });
  return table({ class: "sieve-table" }, "Masses retained on each sieve; cumulative retained (Cum.) and passing from the calculator",
    ["Sieve", "Retained (g)", "Cum. (%)", "Passing (%)", null], tbody);
}

function massTotals(ed) {
  const { state, path } = ed;
  const make = (label, key, fieldName, hint) => {
    const f = field(label, decimalInput(state[key]), { fieldPath: `${path}.${fieldName}`, hint });
    ed.onDecimal(f.input, f.error, (v) => { state[key] = v; });
    return f.wrap;
  };
  return h("div", { class: "grid2" },
    make("Pan (g)", "pan", "pan_g", ""),
    make("Dry mass before washing (g)", "dry", "dry_mass_g", "Oven-dry mass of the whole sample"),
    make("Dry mass after washing (g)", "washed", "washed_dry_mass_g", "Leave empty if not washed"));
}

/** Choosing a sieve stack, or adding one sieve by its opening. */
function stackControls(ed) {
  const { state, presets } = ed;
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
      ed.rerender();
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
      ed.rerender();
    },
  });
  const f = field("Custom sieve opening (mm)", custom);
  f.error.replaceWith(customErr);
  customErr.id = `${custom.id}-err`;
  return h("div", { class: "stack-controls" },
    field("Sieve stack", sel).wrap, apply,
    f.wrap, add);
}

export function renderMasses(ed) {
  return [stackControls(ed), massRows(ed), massTotals(ed)];
}

/** The sieves and totals as the core takes them; `num` parses typed text (counting failures). */
export function readMasses(state, num) {
  const t = {};
  t.sieves = state.rows.map((r) => {
    const o = { opening_mm: r.opening_mm };
    const v = num(r.text);
    if (v !== null) o.retained_g = v;
    return o;
  });
  for (const [key, name] of TOTALS) {
    const v = num(state[key]);
    if (v !== null) t[name] = v;
  }
  return t;
}
