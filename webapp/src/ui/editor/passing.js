// The percent-passing form: rows of a size and the percent passing it.
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
    const a = decimalInput(row.openText, { "aria-label": `Size ${i + 1}, mm`, dataset: { field: `${path}.passing[${i}].opening_mm` } });
    const b = decimalInput(row.pctText, { "aria-label": `Passing at size ${i + 1}, percent`, dataset: { field: `${path}.passing[${i}].passing_pct` } });
    row.inputs = [a, b];
    const ea = h("p", { class: "field-error", role: "status" });
    const eb = h("p", { class: "field-error", role: "status" });
    ed.onDecimal(a, ea, (v) => { row.openText = v; });
    ed.onDecimal(b, eb, (v) => { row.pctText = v; });
    tbody.append(h("tr", {},
      h("td", {}, a, ea), h("td", {}, b, eb),
      h("td", {}, ed.removeButton(`Remove row ${i + 1}`, i))));
  });
  return table({ class: "sieve-table" }, caption, ["Size (mm)", "Passing (%)", null], tbody);
}

/** "Add a size": one more empty row. */
export function addSizeButton(ed) {
  return h("button", { type: "button", class: "btn", text: "Add a size", onclick: () => { ed.state.rows.push({ openText: "", pctText: "" }); ed.rerender(); } });
}

export function renderPassing(ed) {
  return [addSizeButton(ed), passingRows(ed)];
}

export function readPassing(state, num) {
  return {
    passing: state.rows.map((r) => {
      const o = {};
      const a = num(r.openText); const b = num(r.pctText);
      if (a !== null) o.opening_mm = a;
      if (b !== null) o.passing_pct = b;
      return o;
    }),
  };
}
