// Small DOM helpers. Every piece of text goes in through textContent or an
// attribute, never through innerHTML, so user text can never become markup.

/**
 * Create an element: h("button", {class: "big", onclick: fn}, "Save").
 * Attributes starting with "on" become listeners; `text` sets textContent;
 * children may be strings (become text nodes), nodes, null or arrays.
 */
export function h(tag, attrs = {}, ...children) {
  const node = tag.startsWith("svg:")
    ? document.createElementNS("http://www.w3.org/2000/svg", tag.slice(4))
    : document.createElement(tag);
  for (const [k, v] of Object.entries(attrs || {})) {
    if (v === null || v === undefined || v === false) continue;
    if (k.startsWith("on") && typeof v === "function") node.addEventListener(k.slice(2), v);
    else if (k === "text") node.textContent = String(v);
    else if (k === "dataset") Object.assign(node.dataset, v);
    else if (k === "value" && "value" in node) node.value = v;
    else if (k === "checked" && "checked" in node) node.checked = Boolean(v);
    else node.setAttribute(k, v === true ? "" : String(v));
  }
  append(node, children);
  return node;
}

export function append(node, children) {
  for (const c of children.flat(Infinity)) {
    if (c === null || c === undefined || c === false) continue;
    node.append(c instanceof Node ? c : document.createTextNode(String(c)));
  }
  return node;
}

/** Replace all children of `node`. */
export function fill(node, ...children) {
  node.replaceChildren();
  return append(node, children);
}

/**
 * A table with a caption and column headers; a header given as null is a
 * visually hidden "Remove" column (for row buttons).
 */
export function table(attrs, caption, headers, body) {
  return h("table", attrs,
    h("caption", { text: caption }),
    h("thead", {}, h("tr", {}, headers.map((t) => (t === null
      ? h("th", { scope: "col" }, h("span", { class: "sr-only", text: "Remove" }))
      : h("th", { scope: "col", text: t }))))),
    body);
}

let uid = 0;
/** A unique element id for label/for pairs. */
export function newId(prefix = "f") {
  uid += 1;
  return `${prefix}-${uid}`;
}

/** A labelled field: returns {wrap, input, error}. */
export function field(label, input, { hint = "", fieldPath = "" } = {}) {
  const id = input.id || newId("in");
  input.id = id;
  const error = h("p", { class: "field-error", id: `${id}-err`, role: "status", "aria-live": "polite" });
  const describedBy = [`${id}-err`];
  let hintNode = null;
  if (hint) {
    hintNode = h("p", { class: "hint", id: `${id}-hint`, text: hint });
    describedBy.push(`${id}-hint`);
  }
  input.setAttribute("aria-describedby", describedBy.join(" "));
  if (fieldPath) input.dataset.field = fieldPath;
  const wrap = h("div", { class: "field" }, h("label", { for: id, text: label }), input, hintNode, error);
  return { wrap, input, error };
}

/** Format a number from the core for display only (never fed back into a computation). */
export function fmt(value, digits = 3) {
  if (value === null || value === undefined) return "—";
  if (typeof value !== "number") return String(value);
  if (value === 0) return "0";
  const abs = Math.abs(value);
  // No scientific notation in the ranges people read (masses of kilograms,
  // sizes down to microns, percentages): 16410.6, 0.0012.
  if (abs >= 1e15 || abs < 1e-6) return value.toPrecision(digits);
  if (abs >= 100) return value.toFixed(1);
  return Number(value.toPrecision(digits)).toString();
}

/** Percent for display: one decimal. */
export function fmtPct(value) {
  if (value === null || value === undefined) return "—";
  return value.toFixed(1);
}

/** Announce a short message to screen readers and show it in the toast line. */
export function announce(message) {
  const node = document.getElementById("toast");
  if (!node) return;
  node.textContent = "";
  // A fresh text node so the live region re-announces identical messages.
  requestAnimationFrame(() => { node.textContent = message; });
  clearTimeout(announce.timer);
  announce.timer = setTimeout(() => { node.textContent = ""; }, 6000);
}

/** Clear the toast line: a screen the person opens does not show a message of the one they left. */
export function clearToast() {
  const node = document.getElementById("toast");
  if (node) { clearTimeout(announce.timer); node.textContent = ""; }
}

/** An ISO UTC time for people: "2026-12-01T09:30:00Z" -> "2026-12-01 09:30 UTC" (anything else as it is). */
export function when(iso) {
  const m = /^(\d{4}-\d\d-\d\d)T(\d\d:\d\d)(:\d\d(\.\d+)?)?Z$/.exec(String(iso ?? ""));
  return m ? `${m[1]} ${m[2]} UTC` : String(iso ?? "");
}
