// The D-value form (a supplier's sheet): one field per D-value, then percent
// passing at a few sizes if the sheet gives them (the fines).
import { h, newId, table } from "../dom.js";
import { showDecimal } from "../decimal.js";
import { decimalInput } from "./fields.js";
import { addSizeButton, loadPassing, passingRows, readPassingRows } from "./passing.js";

/** D-values offered in the D-value form (more appear when a loaded test has them). */
export const D_NAMES = ["D10", "D15", "D60", "D85", "D90"];
export const dOrder = (a, b) => Number(a.slice(1)) - Number(b.slice(1));

export function loadDvalues(state, t) {
  state.d = Object.fromEntries(Object.entries(t?.d_mm || {}).map(([k, v]) => [k, showDecimal(v)]));
  loadPassing(state, t);
}

export function renderDvalues(ed) {
  const { state, path } = ed;
  const names = [...new Set([...ed.dNames, ...Object.keys(state.d)])].sort(dOrder);
  const tbody = h("tbody");
  for (const name of names) {
    const id = newId("dv");
    const input = decimalInput(state.d[name] ?? "", { id, "aria-label": `${name}, mm`, dataset: { field: `${path}.d_mm.${name}`, words: name } });
    const err = h("p", { class: "field-error", id: `${id}-err`, role: "status" });
    input.setAttribute("aria-describedby", `${id}-err`);
    ed.onDecimal(input, err, (v) => { state.d[name] = v; });
    tbody.append(h("tr", { dataset: { dname: name } },
      h("th", { scope: "row", text: name }), h("td", {}, input, err)));
  }
  return [
    table({ class: "sieve-table dvalue-table" }, "D-values: the size at that percent passing (leave empty what the sheet does not give)",
      ["D-value", "Size (mm)"], tbody),
    passingRows(ed, "Percent passing at sizes, if given (the fines: passing 0.075 mm). A row with no percent is left out."),
    addSizeButton(ed)];
}

/** The D-values and any percent passing rows; {test, sent} as readPassingRows. */
export function readDvalues(state, num, missing) {
  const test = { d_mm: {} };
  for (const [name, text] of Object.entries(state.d).sort(([a], [b]) => dOrder(a, b))) {
    const v = num(text);
    if (v !== null) test.d_mm[name] = v;
  }
  // A row with no percent is left out (the fines row is shown with its size filled in).
  const { passing, sent } = readPassingRows(state, num, missing, { sizeOptional: true });
  if (passing.length) test.passing = passing;
  return { test, sent };
}
