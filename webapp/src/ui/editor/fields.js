// Pieces shared by the entry forms of a gradation: a decimal input, its
// error line, the core's row for a sieve, Enter moving on, and placing a core
// error beside the field it names.
import { h } from "../dom.js";
import { parseDecimal, showDecimal } from "../decimal.js";

/** The core's row for one sieve: from `table` (cumulative and passing) or else `points`. */
export function rowFor(g, mm) {
  const same = (q) => Math.abs(q.opening_mm - mm) <= 1e-9 * mm;
  return (g?.table || []).find(same) || (g?.points || []).find(same) || null;
}

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

export function decimalInput(value, attrs = {}) {
  return h("input", {
    type: "text", inputmode: "decimal", autocomplete: "off", enterkeyhint: "next",
    class: "seq num", value: showDecimal(value), ...attrs,
  });
}

/** Parse `input` as a decimal on every edit: keep its text with `set`, say a typing error in `errNode`. */
export function onDecimal(input, errNode, set, changed) {
  input.addEventListener("input", () => {
    set(input.value);
    const p = parseDecimal(input.value);
    errNode.textContent = p.ok ? "" : p.message;
    input.setAttribute("aria-invalid", p.ok ? "false" : "true");
    changed();
  });
}

const PATH = /\b(sample|base|test|band)((\.[A-Za-z_][A-Za-z0-9_]*)|(\[\d+\]))+/g;

/**
 * A core message in plain words: each field path in it becomes what the
 * field is called on screen (its data-words), or its last name spelled out.
 */
export function plainWords(message, scope, toScreen = (f) => f) {
  const text = String(message || "").replace(PATH, (path) => {
    const node = [...scope.querySelectorAll("[data-field]")].find((n) => n.dataset.field === toScreen(path));
    if (node?.dataset.words) return node.dataset.words;
    const last = /([A-Za-z_]+)(\[\d+\])?$/.exec(path)?.[1] || path;
    return `the ${last.replace(/_(g|mm|pct)$/, "").replaceAll("_", " ")}`;
  });
  return text.charAt(0).toUpperCase() + text.slice(1);
}

/**
 * Put a core error next to the field it names (inputs carry data-field, the
 * path kept there for mapping), in plain words. `editors`: the gradation
 * editors of the screen, which map the request's row indices to the rows on
 * screen. Returns true if placed.
 */
export function showFieldError(scope, error, ...editors) {
  for (const n of scope.querySelectorAll(".core-field-error")) n.remove();
  for (const n of scope.querySelectorAll("[aria-invalid='true'][data-core-invalid]")) {
    n.removeAttribute("aria-invalid"); delete n.dataset.coreInvalid;
  }
  if (!error || !error.field) return false;
  const toScreen = (f) => editors.reduce((acc, e) => e.screenField(acc), f);
  const target = [...scope.querySelectorAll("[data-field]")].find((n) => n.dataset.field === toScreen(error.field));
  if (!target) return false;
  target.setAttribute("aria-invalid", "true");
  target.dataset.coreInvalid = "1";
  const msg = h("p", { class: "field-error core-field-error", role: "status", text: plainWords(error.message, scope, toScreen) });
  // A row whose cells are narrow (the hydrometer readings) has a full-width line below it for messages.
  const below = target.closest("tr[data-errors-below]")?.nextElementSibling?.querySelector("td");
  if (below) below.prepend(msg);
  else (target.type === "checkbox" || target.type === "radio" ? target.closest(".check-row, fieldset") || target : target).insertAdjacentElement("afterend", msg);
  return true;
}
