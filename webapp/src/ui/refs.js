// Screen "References": specification bands and base soils, stored as records.
import { h, fill, field, announce, table } from "./dom.js";
import { ask, errorText } from "./core.js";
import { parseDecimal, showDecimal } from "./decimal.js";
import { gradationEditor, enterMovesOn, showFieldError } from "./editor/gradation_editor.js";
import { renderChart } from "./chart.js";
import { renderDvalues, bandName, baseName } from "./entry.js";
import { sievePresets } from "./presets.js";
import { blankRecord, getRecord, listRecords, saveRecord } from "../storage/records.js";

export async function refsScreen(app, view) {
  const [bands, bases] = await Promise.all([listRecords({ kind: "band" }), listRecords({ kind: "base" })]);
  const presetBox = h("div");
  fill(view, h("div", { class: "screen" },
    h("h1", { text: "Bands and base soils" }),
    h("p", { class: "hint", text: "Bands and base soils are stored as records: tests point to them, and they travel in the CSV files like tests." }),
    h("section", { class: "card" }, h("h2", { text: "Specification bands" }),
      h("ul", { class: "record-list", "aria-label": "Bands" }, bands.map((b) => h("li", { class: "record-item" },
        h("a", { class: "record-link", href: `#/record/${b.record_id}` }, h("span", { class: "record-title", text: bandName(b) }),
          h("span", { class: "record-sub", text: `${b.band?.limits?.length || 0} sizes` }))))),
      h("div", { class: "actions" }, h("a", { class: "btn primary", href: "#/band", text: "New band" })),
      presetBox),
    h("section", { class: "card" }, h("h2", { text: "Base soils" }),
      h("ul", { class: "record-list", "aria-label": "Base soils" }, bases.map((b) => h("li", { class: "record-item" },
        h("a", { class: "record-link", href: `#/record/${b.record_id}` }, h("span", { class: "record-title", text: baseName(b) }),
          h("span", { class: "record-sub", text: b.meta?.project || "" }))))),
      h("div", { class: "actions" }, h("a", { class: "btn primary", href: "#/base", text: "New base soil" })))));

  const resp = await ask("band_presets");
  if (resp.ok && (resp.result.presets || resp.result.bands || []).length) {
    const list = resp.result.presets || resp.result.bands;
    const sel = h("select", {}, list.map((p, i) => h("option", { value: String(i), text: p.name || p.id })));
    fill(presetBox, h("div", { class: "stack-controls" }, field("Start from a published band", sel).wrap,
      h("button", { type: "button", class: "btn", text: "Copy into a new band", onclick: () => {
        const p = list[Number(sel.value)];
        const seed = blankRecord("band", { meta: { material: p.name || "" }, band: { name: p.name || p.id, limits: (p.limits || []).map((l) => ({ opening_mm: l.opening_mm, min_pct: l.min_pct, max_pct: l.max_pct })) } });
        app.go("#/band", { seed });
      } })));
  }
}

export async function bandEditor(app, view, id = null, seed = null) {
  const stored = id ? await getRecord(id) : null;
  let rec = seed || (stored ? structuredClone(stored) : blankRecord("band", { band: { name: "", limits: [] } }));
  const rows = (rec.band?.limits || []).map((l) => ({ d: showDecimal(l.opening_mm), lo: showDecimal(l.min_pct), hi: showDecimal(l.max_pct) }));
  if (rows.length === 0) rows.push({ d: "", lo: "", hi: "" });
  const form = h("form", { class: "screen", novalidate: true, onsubmit: (e) => e.preventDefault() });
  enterMovesOn(form);
  const name = field("Band name", h("input", { type: "text", class: "seq", value: rec.band?.name || "" }));
  const project = field("Project", h("input", { type: "text", class: "seq", value: rec.meta?.project || "" }));
  const material = field("Material", h("input", { type: "text", class: "seq", value: rec.meta?.material || "" }));
  const tableBox = h("div");
  const chartBox = h("section", { class: "card" });
  const status = h("p", { class: "hint", role: "status" });
  let bad = 0;

  function read() {
    bad = 0;
    const num = (t) => { const p = parseDecimal(t); if (!p.ok) bad += 1; return p.ok ? p.value : null; };
    const limits = rows.map((r) => {
      const o = {};
      const d = num(r.d); const lo = num(r.lo); const hi = num(r.hi);
      if (d !== null) o.opening_mm = d;
      o.min_pct = lo; o.max_pct = hi;
      return o;
    }).filter((o) => o.opening_mm !== undefined || o.min_pct !== null || o.max_pct !== null);
    const meta = { ...rec.meta };
    for (const [k, f] of [["project", project], ["material", material]]) { const v = f.input.value.trim(); if (v) meta[k] = v; else delete meta[k]; }
    return { ...rec, meta, band: { name: name.input.value.trim(), limits } };
  }
  // The band is checked by the core when a test is evaluated against it;
  // here it is only drawn.
  function preview() {
    const r = read();
    if (bad) return;
    renderChart(chartBox, { band: r.band }, app.settings.axis, "Band limits");
  }
  function drawRows() {
    const tbody = h("tbody");
    rows.forEach((r, i) => {
      const cell = (key, label, path) => {
        const input = h("input", { type: "text", inputmode: "decimal", class: "seq num", enterkeyhint: "next", value: r[key], "aria-label": `${label}, row ${i + 1}`, dataset: { field: `band.limits[${i}].${path}` } });
        const err = h("p", { class: "field-error", role: "status" });
        input.addEventListener("input", () => { r[key] = input.value; const p = parseDecimal(input.value); err.textContent = p.ok ? "" : p.message; preview(); });
        return h("td", {}, input, err);
      };
      tbody.append(h("tr", {}, cell("d", "Size in mm", "opening_mm"), cell("lo", "Minimum passing in percent", "min_pct"), cell("hi", "Maximum passing in percent", "max_pct"),
        h("td", {}, h("button", { type: "button", class: "icon-btn", text: "✕", "aria-label": `Remove row ${i + 1}`, onclick: () => { rows.splice(i, 1); drawRows(); preview(); } }))));
    });
    fill(tableBox, table({ class: "sieve-table" }, "Limits of percent passing", ["Size (mm)", "Min (%)", "Max (%)", null], tbody),
      h("button", { type: "button", class: "btn", text: "Add a size", onclick: () => { rows.push({ d: "", lo: "", hi: "" }); drawRows(); } }));
  }
  fill(view, form);
  form.append(h("h1", { text: stored ? `Edit band ${bandName(stored)}` : "New band" }),
    h("section", { class: "card" }, name.wrap, project.wrap, material.wrap, tableBox), chartBox,
    h("div", { class: "actions" }, h("button", { type: "button", class: "btn primary", text: "Save band", onclick: async () => {
      const r = read();
      if (bad) { status.textContent = "Not saved: fix the highlighted entries first."; return; }
      if (!r.band.name) { status.textContent = "Not saved: give the band a name."; name.input.focus(); return; }
      const { record } = await saveRecord(r, { by: app.settings.tester, summary: stored ? "edited" : "created" });
      announce(`Band ${record.band.name} saved (revision ${record.rev}).`);
      app.go(`#/record/${record.record_id}`);
    } })), status);
  for (const f of [name, project, material]) f.input.addEventListener("input", preview);
  drawRows();
  preview();
}

export async function baseEditor(app, view, id = null) {
  const stored = id ? await getRecord(id) : null;
  const rec = stored ? structuredClone(stored) : blankRecord("base", { test: { passing: [] } });
  const presets = await sievePresets();
  const form = h("form", { class: "screen", novalidate: true, onsubmit: (e) => e.preventDefault() });
  enterMovesOn(form);
  const fields = [["sample_id", "Sample id"], ["material", "Description"], ["project", "Project"], ["zone", "Zone"], ["source", "Where it was taken"]]
    .map(([k, label]) => [k, field(label, h("input", { type: "text", class: "seq", value: rec.meta?.[k] || "" }))]);
  const testBox = h("div");
  const dBox = h("section", { class: "card" });
  const chartBox = h("section", { class: "card" });
  const status = h("p", { class: "hint", role: "status" });
  fill(view, form);
  form.append(h("h1", { text: stored ? `Edit base soil ${baseName(stored)}` : "New base soil" }),
    h("section", { class: "card" }, h("div", { class: "grid2" }, fields.map(([, f]) => f.wrap))),
    h("section", { class: "card" }, h("h2", { text: "Its gradation" }),
      h("p", { class: "hint", text: "Percent passing from the laboratory report (hydrometer points included), or masses from a sieve test, with the hydrometer readings as read if the laboratory ran one." }), testBox),
    dBox, chartBox,
    h("div", { class: "actions" }, h("button", { type: "button", class: "btn primary", text: "Save base soil", onclick: save })), status);
  const editor = gradationEditor(testBox, rec.test, { path: "test", presets, dispersive: true, sedimentation: true, onChange: () => preview() });

  function read() {
    const meta = { ...rec.meta };
    for (const [k, f] of fields) { const v = f.input.value.trim(); if (v) meta[k] = v; else delete meta[k]; }
    const t = editor.read();
    return { record: { ...rec, meta, test: t.test }, bad: t.localErrors, core: t.core };
  }
  let asked = 0; // previews asked; view[data-busy] is set until the last one is shown
  async function preview() {
    const mine = ++asked;
    view.dataset.busy = "1";
    const done = () => { if (mine === asked) delete view.dataset.busy; };
    const { bad, core } = read();
    if (bad) { done(); return; }
    const resp = await ask("gradation", { test: core }, "base-editor");
    if (resp.superseded) return;
    done();
    const placed = showFieldError(form, resp.ok ? null : resp.error, editor);
    status.textContent = !resp.ok && !placed ? errorText(resp) : "";
    if (!resp.ok) editor.showGradation(null);
    if (resp.ok) {
      editor.showGradation(resp.result, resp.findings);
      renderDvalues(dBox, resp.result);
      renderChart(chartBox, { base: resp.result }, app.settings.axis, "Base soil curve");
    }
  }
  async function save() {
    const { record, bad } = read();
    if (bad) { status.textContent = "Not saved: fix the highlighted entries first."; return; }
    const { record: saved } = await saveRecord(record, { by: app.settings.tester, summary: stored ? "edited" : "created" });
    announce(`Base soil saved (revision ${saved.rev}).`);
    app.go(`#/record/${saved.record_id}`);
  }
  preview();
}

