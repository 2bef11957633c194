// The fines of a test: nonplastic, or their liquid limit and plasticity
// index; and, for a base soil, whether it is dispersive (yes, no, not known).
// The filter checks need them (plasticity of a filter's fines, the base
// soil's category and its dispersive limit); a test that does not say stays
// "needs data" on those checks.
import { h, newId } from "../dom.js";
import { parseDecimal, showDecimal } from "../decimal.js";
import { decimalInput } from "./fields.js";

/** The fines state from a test's `plasticity` and `dispersive` keys. */
export function loadFines(t) {
  const pl = t?.plasticity || {};
  return {
    touched: false, // an untouched test is sent with its keys exactly as loaded
    given: { plasticity: t?.plasticity, dispersive: t?.dispersive },
    nonplastic: pl.nonplastic === true,
    ll: showDecimal(pl.liquid_limit), pi: showDecimal(pl.plasticity_index),
    dispersive: typeof t?.dispersive === "boolean" ? t.dispersive : null,
  };
}

/** The fieldset of the fines; `dispersive`: also ask whether the soil is dispersive (base soils). */
export function renderFines(ed, { dispersive = false } = {}) {
  const f = ed.state.fines;
  const { path } = ed;
  const touch = () => { f.touched = true; ed.changed(); };
  const npId = newId("np");
  const np = h("input", { type: "checkbox", id: npId, checked: f.nonplastic, dataset: { field: `${path}.plasticity.nonplastic` } });
  const limit = (label, key, name) => {
    const id = newId("al");
    const input = decimalInput(f[key], { id, dataset: { field: `${path}.plasticity.${name}`, words: label } });
    const err = h("p", { class: "field-error", id: `${id}-err`, role: "status" });
    input.setAttribute("aria-describedby", `${id}-err`);
    input.addEventListener("input", () => {
      f[key] = input.value;
      const p = parseDecimal(input.value);
      err.textContent = p.ok ? "" : p.message;
      input.setAttribute("aria-invalid", p.ok ? "false" : "true");
      touch();
    });
    return { input, wrap: h("div", { class: "field" }, h("label", { for: id, text: label }), input, err) };
  };
  const ll = limit("Liquid limit LL (%)", "ll", "liquid_limit");
  const pi = limit("Plasticity index PI (%)", "pi", "plasticity_index");
  const sync = () => { ll.input.disabled = np.checked; pi.input.disabled = np.checked; };
  np.addEventListener("change", () => { f.nonplastic = np.checked; sync(); touch(); });
  sync();
  let disp = null;
  if (dispersive) {
    const name = newId("disp");
    disp = h("fieldset", { class: "toggle" }, h("legend", { text: "Dispersive (crumb, pinhole or double-hydrometer test)" }),
      [[true, "Yes"], [false, "No"], [null, "Not known"]].map(([v, label]) => {
        const id = `${name}-${String(v)}`;
        return h("span", { class: "radio" },
          h("input", { type: "radio", name, id, checked: f.dispersive === v, dataset: v === null ? {} : { field: `${path}.dispersive` },
            onchange: () => { f.dispersive = v; touch(); } }),
          h("label", { for: id, text: label }));
      }));
  }
  return h("fieldset", { class: "fines-box" },
    h("legend", { text: "Fines (passing 0.075 mm)" }),
    h("div", { class: "check-row" }, np, h("label", { for: npId, text: "Nonplastic" })),
    h("div", { class: "grid2" }, ll.wrap, pi.wrap),
    h("p", { class: "hint", text: "Leave empty if not tested: the checks that need it then say \"needs data\"." }),
    disp);
}

/** The `plasticity` and `dispersive` keys to send (`num` parses typed text, counting failures). */
export function readFines(f, num) {
  if (!f.touched) {
    const out = {};
    if (f.given.plasticity !== undefined) out.plasticity = f.given.plasticity;
    if (f.given.dispersive !== undefined) out.dispersive = f.given.dispersive;
    return out;
  }
  const out = {};
  if (f.nonplastic) out.plasticity = { nonplastic: true };
  else {
    const ll = num(f.ll); const pi = num(f.pi);
    if (ll !== null || pi !== null) {
      out.plasticity = {};
      if (ll !== null) out.plasticity.liquid_limit = ll;
      if (pi !== null) out.plasticity.plasticity_index = pi;
    }
  }
  if (f.dispersive !== null) out.dispersive = f.dispersive;
  return out;
}
