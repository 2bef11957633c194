// The percent-passing form: rows of a size and the percent passing it. A row
// left empty is ignored; a row with one of its two figures is incomplete,
// said beside it once the person has left the row.
import { h, table } from "../dom.js";
import { showDecimal } from "../decimal.js";
import { decimalInput } from "./fields.js";

export function loadPassing(state, t) {
  state.rows = (t?.passing || []).map((p) => ({ openText: showDecimal(p.opening_mm), pctText: showDecimal(p.passing_pct) }));
}

export function passingRows(ed, caption = "Percent passing at each size") {
  const { state, path } = ed;
  const tbody = h("tbody");
  state.rows.forEach((row, i) => {
    const a = decimalInput(row.openText, { "aria-label": `Size ${i + 1}, mm`, dataset: { field: `${path}.passing[${i}].opening_mm`, words: `the size of row ${i + 1}` } });
    const b = decimalInput(row.pctText, { "aria-label": `Passing at size ${i + 1}, percent`, dataset: { field: `${path}.passing[${i}].passing_pct`, words: `the percent passing of row ${i + 1}` } });
    row.inputs = [a, b];
    const ea = h("p", { class: "field-error", role: "status" });
    const eb = h("p", { class: "field-error", role: "status" });
    row.errs = [ea, eb];
    ed.onDecimal(a, ea, (v) => { row.openText = v; });
    ed.onDecimal(b, eb, (v) => { row.pctText = v; });
    const tr = h("tr", {},
      h("td", {}, a, ea), h("td", {}, b, eb),
      h("td", {}, ed.removeButton(`Remove row ${i + 1}`, i)));
    row.tr = tr;
    // Leaving a half-filled row says what it lacks.
    const half = () => (String(row.openText ?? "").trim() === "") !== (String(row.pctText ?? "").trim() === "");
    tr.addEventListener("focusout", (ev) => { if (!tr.contains(ev.relatedTarget) && half()) ed.changed(); });
    tbody.append(tr);
  });
  return table({ class: "sieve-table" }, caption, ["Size (mm)", "Passing (%)", null], tbody);
}

/** "Add a size": one more empty row, its size field focused. */
export function addSizeButton(ed) {
  return h("button", { type: "button", class: "btn", text: "Add a size", onclick: () => {
    ed.state.rows.push({ openText: "", pctText: "" });
    ed.rerender();
    ed.state.rows.at(-1).inputs?.[0]?.focus();
  } });
}

export function renderPassing(ed) {
  return [passingRows(ed), addSizeButton(ed)];
}

/**
 * The rows as the core takes them. `sizeOptional`: a row with a size and no
 * percent is left out (the D-value form's prefilled fines row). Returns
 * {passing, sent}: `sent[k]` is the row of the k-th point sent.
 */
export function readPassingRows(state, num, missing, { sizeOptional = false } = {}) {
  const passing = [];
  const sent = [];
  state.rows.forEach((r, i) => {
    const hasA = String(r.openText ?? "").trim() !== "";
    const hasB = String(r.pctText ?? "").trim() !== "";
    const [ea, eb] = r.errs || [];
    const away = !r.tr || !r.tr.contains(document.activeElement);
    if (!hasA && !hasB) { if (ea) ea.textContent = ""; if (eb) eb.textContent = ""; return; }
    if (!hasB && sizeOptional) return;
    if (!hasA && !sizeOptional) {
      missing("size");
      if (ea) ea.textContent = away ? "The size of this row is missing." : "";
      return;
    }
    if (!hasB) {
      missing("percent");
      if (eb) eb.textContent = away ? "The percent passing this size is missing." : "";
      return;
    }
    const a = num(r.openText); const b = num(r.pctText);
    const o = {};
    if (a !== null) o.opening_mm = a;
    if (b !== null) o.passing_pct = b;
    passing.push(o);
    sent.push(i);
  });
  return { passing, sent };
}
