// The screen shown when a save is refused because the stored record moved on
// since the form was opened: both versions, field by field, and the choice to
// keep either or merge (docs/records.md, "Saving in the app").
import { h, fill, when } from "./dom.js";
import { fieldWords } from "./records_view.js";
import { flatten } from "../storage/records.js";

const PATH_PART = /([^.[\]]+)|\[(\d+)\]/g;
const parts = (path) => [...path.matchAll(PATH_PART)].map((m) => (m[2] !== undefined ? Number(m[2]) : m[1]));

export function getPath(obj, path) {
  let v = obj;
  for (const p of parts(path)) { if (v === null || v === undefined) return null; v = v[p]; }
  return v === undefined ? null : v;
}

function setPath(obj, path, value) {
  const ps = parts(path);
  let v = obj;
  ps.slice(0, -1).forEach((p, i) => {
    if (v[p] === null || v[p] === undefined) v[p] = typeof ps[i + 1] === "number" ? [] : {};
    v = v[p];
  });
  const last = ps[ps.length - 1];
  if (value === null && ps.length > 1 && !Array.isArray(v)) delete v[last]; else v[last] = value;
}

const shape = (t) => Object.keys(flatten(t ?? {})).sort().join("|");

/**
 * The units a merge chooses between: each meta key; the test's entries one by
 * one when both versions have the same rows (else the whole test); the band whole.
 */
export function mergeUnits(...recs) {
  const units = new Set();
  for (const r of recs) for (const k of Object.keys(r?.meta || {})) units.add(`meta.${k}`);
  const tests = recs.filter(Boolean).map((r) => r.test ?? null);
  if (tests.every((t) => t && shape(t) === shape(tests[0]))) for (const p of Object.keys(flatten(tests[0]))) units.add(`test.${p}`);
  else units.add("test");
  units.add("band");
  return [...units];
}

const same = (a, b) => JSON.stringify(a ?? null) === JSON.stringify(b ?? null);
const show = (v) => (v === null || v === undefined || v === "" ? "empty" : typeof v === "object" ? JSON.stringify(v) : String(v));

/** The fields where `saved` and `mine` differ, with the default choice (the side that changed it since `base`). */
export function conflictRows(saved, mine, base) {
  const rows = [];
  for (const unit of mergeUnits(saved, mine)) {
    const s = getPath(saved, unit); const m = getPath(mine, unit);
    if (same(s, m)) continue;
    const b = base ? getPath(base, unit) : null;
    const mineOnly = same(s, b) && !same(m, b);
    rows.push({ unit, saved: s, mine: m, both: !same(s, b) && !same(m, b), choice: mineOnly ? "mine" : "saved" });
  }
  return rows;
}

/** The saved record with the fields chosen as "mine" taken from `mine`. */
export function mergeRecord(saved, mine, choices) {
  const out = structuredClone(saved);
  for (const [unit, choice] of choices) if (choice === "mine") setPath(out, unit, structuredClone(getPath(mine, unit)));
  return out;
}

/**
 * Fill `box` with the two versions. `on.keepSaved()`, `on.keepMine()`,
 * `on.merge(record)`, and for a new test `on.separate()` (save mine as another test).
 */
export function showConflict(box, { saved, mine, base, isNew }, on) {
  const rows = conflictRows(saved, mine, base);
  const name = `merge-${saved.record_id}`;
  const choice = new Map(rows.map((r) => [r.unit, r.choice]));
  const radio = (r, side) => {
    const id = `${name}-${r.unit}-${side}`.replace(/[^A-Za-z0-9_-]/g, "_");
    return h("span", { class: "radio" },
      h("input", { type: "radio", name: `${name}-${r.unit}`, id, value: side, checked: r.choice === side,
        onchange: () => choice.set(r.unit, side) }),
      h("label", { for: id, text: side === "saved" ? "saved" : "this tab" }));
  };
  const words = (unit) => fieldWords(unit, saved) || fieldWords(unit, mine) || unit;
  fill(box,
    h("h2", { text: isNew ? "This test's id was saved meanwhile" : "Saved elsewhere since you opened it" }),
    h("p", { text: `Not saved: the stored record is at revision ${saved.rev} (${when(saved.updated_at)}, by ${saved.updated_by || "unknown"}), `
      + `and this form started from ${isNew ? "a new test" : `revision ${mine.rev}`}. Nothing is lost: choose what to keep.` }),
    h("table", { class: "conflict-table" },
      h("caption", { text: "The fields that differ; the choice marked comes from the version that changed it" }),
      h("thead", {}, h("tr", {}, ["Field", `Saved (rev ${saved.rev})`, "This tab", "Keep"].map((t) => h("th", { scope: "col", text: t })))),
      h("tbody", {}, rows.map((r) => h("tr", { dataset: { field: r.unit, both: r.both ? "1" : "0" } },
        h("th", { scope: "row", text: `${words(r.unit)}${r.both ? " (changed in both)" : ""}` }),
        h("td", { class: "saved-value", text: show(r.saved) }),
        h("td", { class: "mine-value", text: show(r.mine) }),
        h("td", {}, h("fieldset", { class: "toggle" }, h("legend", { class: "sr-only", text: `Keep ${words(r.unit)} from` }),
          radio(r, "saved"), radio(r, "mine"))))))),
    h("div", { class: "actions" },
      h("button", { type: "button", class: "btn primary", text: "Save the merge", onclick: () => on.merge(mergeRecord(saved, mine, choice)) }),
      h("button", { type: "button", class: "btn", text: "Keep mine", onclick: () => on.keepMine() }),
      h("button", { type: "button", class: "btn", text: "Keep the saved version", onclick: () => on.keepSaved() }),
      isNew && on.separate ? h("button", { type: "button", class: "btn", text: "Save mine as a separate test", onclick: () => on.separate() }) : null));
  box.hidden = false;
  box.querySelector("h2").tabIndex = -1;
  box.querySelector("h2").focus();
  return rows;
}
