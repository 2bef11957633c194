// The masses form: mass retained on each sieve of a stack (with the core's
// cumulative and passing beside it), pan, dry mass before and after washing.
// A sieve with no mass typed is left out of the test (not in this stack, or
// not reached yet): never an error. One left empty between two masses is
// noted beside it, in case a mass was forgotten (the mass check after
// sieving would show it too).
import { h, field, fmtPct, newId, table } from "../dom.js";
import { parseDecimal, showDecimal } from "../decimal.js";
import { decimalInput, rowFor } from "./fields.js";

const TOTALS = [["pan", "pan_g"], ["dry", "dry_mass_g"], ["washed", "washed_dry_mass_g"]];
const key = (mm) => Number(mm).toPrecision(12);

/** The state of this form loaded from a test. */
export function loadMasses(state, t) {
  state.rows = (t?.sieves || []).map((s) => ({ opening_mm: s.opening_mm, text: showDecimal(s.retained_g) }));
  for (const [k, name] of TOTALS) state[k] = showDecimal(t?.[name]);
}

function massRows(ed) {
  const { state, path } = ed;
  const tbody = h("tbody");
  state.rows.forEach((row, i) => {
    const id = newId("sv");
    const label = ed.labelOf(row.opening_mm);
    const input = decimalInput(row.text, { id, "aria-label": `Mass retained on ${label}, grams`, dataset: { field: `${path}.sieves[${i}].retained_g`, words: `the mass on ${label}` } });
    const err = h("p", { class: "field-error", id: `${id}-err`, role: "status" });
    input.setAttribute("aria-describedby", `${id}-err`);
    ed.onDecimal(input, err, (v) => { row.text = v; });
    const note = h("p", { class: "field-note", role: "status" });
    row.input = input; row.note = note;
    const point = rowFor(ed.gradation, row.opening_mm);
    const cum = point ? point.cum_retained_pct ?? null : null;
    tbody.append(h("tr", { dataset: { opening: row.opening_mm } },
      h("th", { scope: "row" }, ed.sieveLabel(row.opening_mm)),
      h("td", {}, input, err, note),
      h("td", { class: "calc cum", text: cum === null ? "—" : fmtPct(cum) }),
      h("td", { class: "calc pass", text: point ? fmtPct(point.passing_pct) : "—" }),
      h("td", {}, ed.removeButton(`Remove sieve ${label}`, i))));
  });
  return table({ class: "sieve-table" }, "Masses retained on each sieve; cumulative retained (Cum.) and passing from the calculator",
    ["Sieve", "Retained (g)", "Cum. (%)", "Passing (%)", null], tbody);
}

function massTotals(ed) {
  const { state, path } = ed;
  const make = (label, k, fieldName, hint) => {
    const f = field(label, decimalInput(state[k]), { fieldPath: `${path}.${fieldName}`, hint });
    f.input.dataset.words = `the ${label.replace(" (g)", "").toLowerCase()}`;
    ed.onDecimal(f.input, f.error, (v) => { state[k] = v; });
    return f.wrap;
  };
  return h("div", { class: "grid2" },
    make("Pan (g)", "pan", "pan_g", ""),
    make("Dry mass before washing (g)", "dry", "dry_mass_g", "Oven-dry mass of the whole sample"),
    make("Dry mass after washing (g)", "washed", "washed_dry_mass_g", "Leave empty if not washed"));
}

/** Choosing a sieve stack (the band's sieves first when a band is chosen), or adding one sieve. */
function stackControls(ed) {
  const { state } = ed;
  const stacks = [...ed.extraStacks, ...ed.presets];
  const sel = h("select", { id: newId("preset") },
    h("option", { value: "", text: "Choose a sieve stack…" }),
    stacks.map((p) => h("option", { value: p.id, text: p.name })));
  const apply = h("button", {
    type: "button", class: "btn", text: "Use this stack",
    onclick: () => {
      const p = stacks.find((q) => q.id === sel.value);
      if (!p) return;
      const old = new Map(state.rows.map((r) => [key(r.opening_mm), r.text]));
      state.rows = p.sieves.map((s) => ({ opening_mm: s.opening_mm, text: old.get(key(s.opening_mm)) || "" }));
      ed.rerender();
      state.rows[0]?.input?.focus();
    },
  });
  const custom = decimalInput("", { class: "num", enterkeyhint: "done" });
  const customErr = h("p", { class: "field-error", role: "status" });
  const add = h("button", {
    type: "button", class: "btn", text: "Add sieve",
    onclick: () => {
      const p = parseDecimal(custom.value);
      if (!p.ok || p.value === null || p.value <= 0) { customErr.textContent = p.ok ? "Type the opening in mm, for example 1.18." : p.message; return; }
      const row = { opening_mm: p.value, text: "" };
      state.rows.push(row);
      state.rows.sort((a, b) => b.opening_mm - a.opening_mm);
      ed.rerender();
      row.input?.focus();
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

/**
 * The sieves and totals as the core takes them. `num` parses typed text
 * (counting failures). Returns {test, sent}: `sent[k]` is the row of the k-th
 * sieve sent.
 */
export function readMasses(state, num) {
  const typed = state.rows.map((r) => String(r.text ?? "").trim() !== "");
  const first = typed.indexOf(true);
  const last = typed.lastIndexOf(true);
  const sieves = [];
  const sent = [];
  state.rows.forEach((r, i) => {
    if (r.note) r.note.textContent = typed[i] || !(i > first && i < last) ? "" : "Left out: no mass typed (type 0 if nothing stayed on it).";
    if (!typed[i]) return;
    const o = { opening_mm: r.opening_mm };
    const v = num(r.text);
    if (v !== null) o.retained_g = v;
    sieves.push(o);
    sent.push(i);
  });
  const test = { sieves };
  for (const [k, name] of TOTALS) {
    const v = num(state[k]);
    if (v !== null) test[name] = v;
  }
  return { test, sent };
}
