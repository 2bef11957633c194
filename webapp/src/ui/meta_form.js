// The metadata of a test (who, where, when, what), as labelled fields.
import { h, field, newId } from "./dom.js";
import { parseDecimal, showDecimal } from "./decimal.js";
import { SAMPLING_POINTS } from "./presets.js";

const TEXT_FIELDS = [
  ["sample_id", "Sample id"],
  ["project", "Project"],
  ["material", "Material"],
  ["zone", "Zone"],
  ["source", "Source or pit"],
  ["station", "Station"],
  ["lift", "Lift"],
  ["tested_by", "Tested by"],
];
const NUMBER_FIELDS = [
  ["offset_m", "Offset (m)"],
  ["elevation_m", "Elevation (m)"],
  ["latitude", "Latitude (°)"],
  ["longitude", "Longitude (°)"],
];

/** A generated sample id: S-YYYYMMDD-XXXX (editable). */
export function newSampleId(date = new Date()) {
  const d = date.toISOString().slice(0, 10).replaceAll("-", "");
  const r = crypto.getRandomValues(new Uint16Array(1))[0].toString(16).toUpperCase().padStart(4, "0");
  return `S-${d}-${r}`;
}

/** ISO UTC -> value of a datetime-local input (device local time). */
function toLocalInput(iso) {
  if (!iso) return "";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return "";
  const pad = (n) => String(n).padStart(2, "0");
  return `${d.getFullYear()}-${pad(d.getMonth() + 1)}-${pad(d.getDate())}T${pad(d.getHours())}:${pad(d.getMinutes())}`;
}

/**
 * Metadata fields in `box`; returns {read(): {meta, errors}}. Keys not shown
 * here (band_id, base_id, rules, demo, retest_of...) are kept untouched.
 */
export function metaForm(box, meta, { onChange = () => {}, lots = [] } = {}) {
  const inputs = {};
  const kept = { ...meta };
  const grid = h("div", { class: "grid2" });
  for (const [key, label] of TEXT_FIELDS) {
    const f = field(label, h("input", { type: "text", class: "seq", enterkeyhint: "next", autocomplete: "off", value: meta[key] ?? "", oninput: onChange }));
    inputs[key] = f;
    grid.append(f.wrap);
  }
  const sp = h("select", { onchange: onChange },
    h("option", { value: "", text: "Not recorded" }),
    SAMPLING_POINTS.map((s) => h("option", { value: s.id, text: s.name, selected: meta.sampling_point === s.id })));
  inputs.sampling_point = field("Sampling point", sp);
  grid.append(inputs.sampling_point.wrap);
  const when = h("input", { type: "datetime-local", value: toLocalInput(meta.sampled_at), oninput: onChange });
  inputs.sampled_at = field("Sampled at", when);
  grid.append(inputs.sampled_at.wrap);
  for (const [key, label] of NUMBER_FIELDS) {
    const input = h("input", { type: "text", inputmode: "decimal", class: "seq num", enterkeyhint: "next", autocomplete: "off", value: showDecimal(meta[key]) });
    const f = field(label, input);
    input.addEventListener("input", () => {
      const p = parseDecimal(input.value);
      f.error.textContent = p.ok ? "" : p.message;
      input.setAttribute("aria-invalid", p.ok ? "false" : "true");
      onChange();
    });
    inputs[key] = f;
    grid.append(f.wrap);
  }
  // The lot the test belongs to, the quantity it represents and the delivery ticket (docs/records.md).
  const lotSel = h("select", { onchange: () => { const l = lots.find((r) => r.record_id === lotSel.value); if (l?.meta?.quantity_unit) unitSel.value = l.meta.quantity_unit; onChange(); } },
    h("option", { value: "", text: "No lot" }),
    lots.map((r) => h("option", { value: r.record_id, text: [`Lot ${r.meta?.lot || r.record_id.slice(0, 8)}`, r.meta?.material].filter(Boolean).join(" · "), selected: meta.lot_id === r.record_id })));
  if (!meta.lot_id && meta.lot) {  // a test that names its lot by code only: matched to the lot record with that code
    const byCode = lots.find((r) => r.meta?.lot === meta.lot);
    if (byCode) lotSel.value = byCode.record_id;
    else lotSel.append(h("option", { value: `code:${meta.lot}`, text: `Lot ${meta.lot} (no lot record yet)`, selected: true }));
  }
  inputs.lot = field("Lot", lotSel);
  const qty = h("input", { type: "text", inputmode: "decimal", class: "seq num", enterkeyhint: "next", autocomplete: "off", value: showDecimal(meta.quantity) });
  inputs.quantity = field("Quantity it represents", qty, { hint: "Placed quantity this sample stands for." });
  qty.addEventListener("input", () => { const p = parseDecimal(qty.value); inputs.quantity.error.textContent = p.ok ? (p.value !== null && p.value < 0 ? "A quantity cannot be negative." : "") : p.message; onChange(); });
  const unitSel = h("select", { onchange: onChange }, [["m3", "m³"], ["t", "t"]].map(([v, t]) => h("option", { value: v, text: t, selected: (meta.quantity_unit || "m3") === v })));
  inputs.quantity_unit = field("Unit", unitSel);
  inputs.ticket = field("Delivery ticket or truck", h("input", { type: "text", class: "seq", enterkeyhint: "next", autocomplete: "off", value: meta.ticket ?? "", oninput: onChange }));
  grid.append(inputs.lot.wrap, inputs.quantity.wrap, inputs.quantity_unit.wrap, inputs.ticket.wrap);
  const gpsStatus = h("p", { class: "hint", role: "status", id: newId("gps") });
  const gps = h("button", {
    type: "button", class: "btn", text: "Add my GPS position",
    onclick: () => {
      if (!navigator.geolocation) { gpsStatus.textContent = "This device gives no position."; return; }
      gpsStatus.textContent = "Asking the device for a position…";
      navigator.geolocation.getCurrentPosition((pos) => {
        inputs.latitude.input.value = String(pos.coords.latitude);
        inputs.longitude.input.value = String(pos.coords.longitude);
        gpsStatus.textContent = `Position added (within about ${Math.round(pos.coords.accuracy)} m, as the device reports).`;
        onChange();
      }, (err) => { gpsStatus.textContent = `No position: ${err.message}`; }, { enableHighAccuracy: true, timeout: 20000 });
    },
  });
  const notes = h("textarea", { rows: 3, oninput: onChange });
  notes.value = meta.notes ?? "";
  inputs.notes = field("Notes", notes);
  box.append(grid, h("div", { class: "gps" }, gps, gpsStatus), inputs.notes.wrap);

  return {
    read() {
      const out = { ...kept };
      let errors = 0;
      for (const [key] of TEXT_FIELDS) {
        const v = inputs[key].input.value.trim();
        if (v) out[key] = v; else delete out[key];
      }
      if (sp.value) out.sampling_point = sp.value; else delete out.sampling_point;
      if (when.value) {
        const d = new Date(when.value);
        if (Number.isNaN(d.getTime())) errors += 1;
        else out.sampled_at = d.toISOString().replace(/\.\d{3}Z$/, "Z");
      } else delete out.sampled_at;
      for (const [key] of NUMBER_FIELDS) {
        const p = parseDecimal(inputs[key].input.value);
        if (!p.ok) errors += 1;
        else if (p.value === null) delete out[key];
        else out[key] = p.value;
      }
      if (lotSel.value.startsWith("code:")) { out.lot = lotSel.value.slice(5); delete out.lot_id; }
      else if (lotSel.value) { out.lot_id = lotSel.value; out.lot = lots.find((r) => r.record_id === lotSel.value)?.meta?.lot || out.lot; }
      else { delete out.lot_id; delete out.lot; }
      const q = parseDecimal(qty.value);
      if (!q.ok || (q.value !== null && q.value < 0)) errors += 1;
      else if (q.value === null) { delete out.quantity; delete out.quantity_unit; }
      else { out.quantity = q.value; out.quantity_unit = unitSel.value; }
      const tk = inputs.ticket.input.value.trim();
      if (tk) out.ticket = tk; else delete out.ticket;
      const n = notes.value.trim();
      if (n) out.notes = notes.value; else delete out.notes;
      return { meta: out, errors };
    },
    focusFirst() { inputs.sample_id.input.focus(); },
  };
}
