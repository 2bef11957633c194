// The sedimentation (hydrometer) sheet of a test, entered as read: the
// hydrometer, the specific gravity of solids, the dry mass in suspension, the
// sieve the suspension was split on, the composite correction (one measured
// value or a calibration at temperatures), the meniscus correction, and per
// reading the elapsed time, the reading and the suspension temperature. It is
// the test's `sedimentation` key (docs/json-contract.md). Nothing is computed
// here: the reduced table (diameter, percent finer), the percent passing the
// split sieve and the warnings are the core's `gradation` response.
// A reading row with nothing typed is not sent; one with part of its three
// figures is said to be incomplete once the person has left the row.
import { h, fill, fmt, fmtPct, newId, table } from "../dom.js";
import { parseDecimal, showDecimal } from "../decimal.js";
import { decimalInput, plainWords } from "./fields.js";

const READING_KEYS = ["time_min", "reading", "temperature_c"];
const READING_WORDS = { time_min: "the time of reading", reading: "reading", temperature_c: "the temperature of reading" };
/** Keys of the sheet this form shows; any other key of `sedimentation` is kept as it was. */
const SHOWN = ["hydrometer", "specific_gravity", "dry_mass_g", "split_mm", "composite_correction", "correction_calibration",
  "meniscus_correction", "depth_calibration", "readings"];
const blank = (s) => String(s ?? "").trim() === "";
const pairsOf = (list, a, b) => (Array.isArray(list) ? list : []).map((p) => ({ a: showDecimal(p?.[a]), b: showDecimal(p?.[b]) }));

/** The sheet's state from a test's `sedimentation` key. */
export function loadSed(t) {
  const s = t?.sedimentation;
  const o = s && typeof s === "object" ? s : {};
  const rows = (Array.isArray(o.readings) ? o.readings : []).map((r) => {
    const extra = {};
    for (const [k, v] of Object.entries(r || {})) if (!READING_KEYS.includes(k)) extra[k] = v;
    return { time: showDecimal(r?.time_min), reading: showDecimal(r?.reading), temp: showDecimal(r?.temperature_c), extra };
  });
  const extra = {};
  for (const [k, v] of Object.entries(o)) if (!SHOWN.includes(k)) extra[k] = v;
  return {
    open: s !== undefined && s !== null,
    touched: false, // an untouched sheet is sent exactly as it was loaded
    given: s,
    hydrometer: o.hydrometer === "151H" ? "151H" : "152H",
    gs: showDecimal(o.specific_gravity),
    mass: showDecimal(o.dry_mass_g),
    split: o.split_mm === 0.075 ? "0.075" : "2",
    ccMode: o.correction_calibration ? "calibration" : "measured",
    cc: showDecimal(o.composite_correction),
    cal: o.correction_calibration ? pairsOf(o.correction_calibration, "temperature_c", "composite_correction") : [{ a: "", b: "" }, { a: "", b: "" }],
    meniscus: showDecimal(o.meniscus_correction),
    depth: o.depth_calibration ? pairsOf(o.depth_calibration, "reading", "depth_cm") : [{ a: "", b: "" }, { a: "", b: "" }],
    rows: rows.length ? rows : [{ time: "", reading: "", temp: "", extra: {} }],
    extra,
    sent: [], // sent[k]: the row on screen of the k-th reading sent
    calSent: [],
    depthSent: [],
    reduced: null, // the core's `sedimentation` result
    findings: [],
    points: [],
  };
}

/**
 * The sheet inside the editor `ed` (its state.sed, path, changed()).
 * Returns the element; the reduced table and the warnings are drawn by showSed.
 */
export function renderSed(ed) {
  const s = ed.state.sed;
  const base = `${ed.path}.sedimentation`;
  const box = h("fieldset", { class: "sed-box" });
  const touch = () => { s.touched = true; ed.changed(); };
  const redraw = () => { fill(box, ...body()); };
  s.redraw = redraw;

  /** A decimal field of the sheet: label, input, its error line. */
  const num = (label, key, fieldName, hint = "") => {
    const id = newId("sed");
    const input = decimalInput(s[key], { id, dataset: { field: `${base}.${fieldName}`, words: `the ${label.replace(/ \(.*\)$/, "").toLowerCase()}` } });
    const err = h("p", { class: "field-error", id: `${id}-err`, role: "status" });
    const hintNode = hint ? h("p", { class: "hint", id: `${id}-hint`, text: hint }) : null;
    input.setAttribute("aria-describedby", hint ? `${id}-err ${id}-hint` : `${id}-err`);
    ed.onDecimal(input, err, (v) => { s[key] = v; s.touched = true; });
    return h("div", { class: "field" }, h("label", { for: id, text: label }), input, hintNode, err);
  };
  /** A choice of two or three, as radios. */
  const choice = (legend, key, options, fieldName = null, after = null) => {
    const name = newId("sedc");
    return h("fieldset", { class: "toggle" }, h("legend", { text: legend }),
      options.map(([v, label], i) => {
        const id = `${name}-${i}`;
        return h("span", { class: "radio" },
          h("input", { type: "radio", name, id, value: v, checked: s[key] === v, dataset: fieldName && i === 0 ? { field: `${base}.${fieldName}`, words: `the ${legend.toLowerCase()}` } : {},
            onchange: () => { s[key] = v; touch(); if (after) after(); } }),
          h("label", { for: id, text: label }));
      }));
  };
  /** Pairs of figures (calibration tables): rows of two decimal inputs. */
  const pairs = (key, fieldName, [ka, kb], [la, lb], caption, addWords) => {
    const tbody = h("tbody");
    s[key].forEach((p, i) => {
      const cell = (k, label, prop) => {
        const input = decimalInput(p[k], { "aria-label": `${label}, row ${i + 1}`, dataset: { field: `${base}.${fieldName}[${i}].${prop}`, words: `the ${label.toLowerCase()} of row ${i + 1}` } });
        const err = h("p", { class: "field-error", role: "status" });
        ed.onDecimal(input, err, (v) => { p[k] = v; s.touched = true; });
        return h("td", {}, input, err);
      };
      tbody.append(h("tr", {}, cell("a", la, ka), cell("b", lb, kb),
        h("td", {}, h("button", { type: "button", class: "icon-btn", text: "✕", "aria-label": `Remove row ${i + 1} of the ${caption.toLowerCase()}`,
          onclick: () => { s[key].splice(i, 1); redraw(); touch(); } }))));
    });
    return h("div", { dataset: { field: `${base}.${fieldName}`, words: `the ${caption.toLowerCase()}` } },
      table({ class: "sieve-table sed-pairs" }, caption, [la, lb, null], tbody),
      h("button", { type: "button", class: "btn", text: addWords, onclick: () => { s[key].push({ a: "", b: "" }); redraw(); box.querySelector(`[data-field='${base}.${fieldName}[${s[key].length - 1}].${ka}']`)?.focus(); } }));
  };

  function readingsTable() {
    const tbody = h("tbody");
    s.rows.forEach((r, i) => {
      // The cells are narrow: their typing errors go in the full-width line under the row.
      const errs = [];
      const cell = (k, prop, label) => {
        const id = newId("sedr");
        const input = decimalInput(r[k], { id, "aria-label": `${label}, reading ${i + 1}`, dataset: { field: `${base}.readings[${i}].${prop}`, words: `${READING_WORDS[prop]} ${i + 1}` } });
        const err = h("p", { class: "field-error", id: `${id}-err`, role: "status" });
        input.setAttribute("aria-describedby", `${id}-err`);
        errs.push(err);
        input.addEventListener("input", () => {
          r[k] = input.value; s.touched = true;
          const p = parseDecimal(input.value);
          const what = READING_WORDS[prop];
          err.textContent = p.ok ? "" : `${what.charAt(0).toUpperCase()}${what.slice(1)} ${i + 1}: ${p.message}`;
          input.setAttribute("aria-invalid", p.ok ? "false" : "true");
          ed.changed();
        });
        return h("td", {}, input);
      };
      const missing = h("p", { class: "field-error sed-missing", role: "status" });
      const note = h("p", { class: "field-note sed-warning", role: "status" });
      const tr = h("tr", { dataset: { reading: String(i), field: `${base}.readings[${i}]`, words: `reading ${i + 1}`, errorsBelow: "1" } },
        h("th", { scope: "row", text: String(i + 1) }),
        cell("time", "time_min", "Elapsed time in minutes"), cell("reading", "reading", "Hydrometer reading"), cell("temp", "temperature_c", "Temperature in degrees C"),
        h("td", {}, h("button", { type: "button", class: "icon-btn", text: "✕", "aria-label": `Remove reading ${i + 1}`,
          onclick: () => { s.rows.splice(i, 1); if (!s.rows.length) s.rows.push({ time: "", reading: "", temp: "", extra: {} }); redraw(); touch(); } })));
      const noteRow = h("tr", { class: "sed-note-row", dataset: { noteOf: String(i) } }, h("td", { colspan: "5" }, errs, missing, note));
      r.tr = tr; r.missing = missing; r.note = note;
      // Leaving a half-filled row says what it lacks.
      const half = () => { const t = [r.time, r.reading, r.temp].map((x) => !blank(x)); return t.some(Boolean) && !t.every(Boolean); };
      tr.addEventListener("focusout", (ev) => { if (!tr.contains(ev.relatedTarget) && half()) ed.changed(); });
      tbody.append(tr, noteRow);
    });
    return h("div", { dataset: { field: `${base}.readings`, words: "the readings" } },
      table({ class: "sieve-table sed-readings" }, "Readings as taken: elapsed time, hydrometer reading, suspension temperature",
        ["No.", "Time (min)", "Reading", "Temp. (°C)", null], tbody),
      h("button", { type: "button", class: "btn", text: "Add a reading", onclick: () => {
        s.rows.push({ time: "", reading: "", temp: "", extra: {} });
        redraw();
        box.querySelector(`[data-field='${base}.readings[${s.rows.length - 1}].time_min']`)?.focus();
      } }));
  }

  function body() {
    const legend = h("legend", { text: "Hydrometer (sedimentation)" });
    if (!s.open) {
      return [legend, h("p", { class: "hint", text: "For the fines below 0.075 mm: the laboratory's hydrometer readings, typed as read; the calculator reduces them and joins them to the sieve curve." }),
        h("button", { type: "button", class: "btn", text: "Add hydrometer readings", onclick: () => {
          s.open = true; s.touched = true; redraw();
          box.querySelector("input.seq")?.focus();
          ed.changed();
        } })];
    }
    const splitLine = h("p", { class: "hint sed-split", role: "status" });
    s.splitLine = splitLine;
    s.reducedBox = h("div", { class: "sed-reduced" });
    s.sheetNote = h("p", { class: "field-note sed-sheet-note", role: "status" });
    return [legend,
      choice("Hydrometer", "hydrometer", [["152H", "152H"], ["151H", "151H"]], "hydrometer", redraw),
      h("div", { class: "grid2 sed-grid" },
        num("Specific gravity of solids Gs", "gs", "specific_gravity"),
        num("Dry mass in suspension (g)", "mass", "dry_mass_g", "Oven-dry mass of the soil dispersed in the cylinder")),
      choice("Split on the sieve", "split", [["2", "2 mm (No. 10)"], ["0.075", "0.075 mm (No. 200)"]], "split_mm"),
      splitLine,
      choice("Composite correction", "ccMode", [["measured", "One measured value"], ["calibration", "From a calibration at temperatures"]], null, redraw),
      s.ccMode === "measured"
        ? num("Composite correction (reading in the blank)", "cc", "composite_correction")
        : pairs("cal", "correction_calibration", ["temperature_c", "composite_correction"], ["Temp. (°C)", "Correction"], "Correction calibration", "Add a temperature"),
      num("Meniscus correction", "meniscus", "meniscus_correction", "Leave empty for none (0)."),
      s.hydrometer === "151H" ? pairs("depth", "depth_calibration", ["reading", "depth_cm"], ["Reading", "Depth (cm)"], "Effective depth calibration", "Add a depth point") : null,
      readingsTable(),
      s.sheetNote,
      s.reducedBox,
      h("button", { type: "button", class: "btn", text: "Remove the hydrometer sheet", onclick: () => {
        if (!confirm("Remove the hydrometer readings from this test?")) return;
        Object.assign(s, loadSed(null), { open: false, touched: true });
        redraw(); ed.changed();
      } })];
  }
  redraw();
  return box;
}

/**
 * The `sedimentation` key to send, or null for none. `num` parses typed text
 * (counting failures), `missing()` counts an incomplete row. Returns
 * {sed, ready}: `ready` is false while no reading is complete (the sheet is
 * kept in the record but not sent to the core yet).
 */
export function readSed(s, num, missing) {
  if (!s.open) return { sed: null, ready: false };
  if (!s.touched) {
    s.sent = (s.given?.readings || []).map((_, i) => i);
    s.calSent = (s.given?.correction_calibration || []).map((_, i) => i);
    s.depthSent = (s.given?.depth_calibration || []).map((_, i) => i);
    // As loaded (a stored record, a draft): the same rule as when typed, no reading yet is not sent.
    const some = Array.isArray(s.given?.readings) && s.given.readings.length > 0;
    return { sed: s.given ?? null, ready: s.given !== undefined && s.given !== null && (some || !Array.isArray(s.given?.readings)) };
  }
  const out = { ...s.extra, hydrometer: s.hydrometer };
  const put = (key, text) => { const v = num(text); if (v !== null) out[key] = v; };
  put("specific_gravity", s.gs);
  put("dry_mass_g", s.mass);
  out.split_mm = Number(s.split);
  const pairList = (rows, ka, kb, sentKey) => {
    const list = [];
    s[sentKey] = [];
    rows.forEach((p, i) => {
      if (blank(p.a) && blank(p.b)) return;
      const o = {};
      const a = num(p.a); const b = num(p.b);
      if (a !== null) o[ka] = a;
      if (b !== null) o[kb] = b;
      list.push(o);
      s[sentKey].push(i);
    });
    return list;
  };
  if (s.ccMode === "measured") put("composite_correction", s.cc);
  else out.correction_calibration = pairList(s.cal, "temperature_c", "composite_correction", "calSent");
  put("meniscus_correction", s.meniscus);
  if (s.hydrometer === "151H") out.depth_calibration = pairList(s.depth, "reading", "depth_cm", "depthSent");
  const readings = [];
  s.sent = [];
  s.rows.forEach((r, i) => {
    const typed = [r.time, r.reading, r.temp].map((t) => !blank(t));
    const away = !r.tr || !r.tr.contains(document.activeElement);
    if (r.missing) r.missing.textContent = "";
    if (!typed.some(Boolean)) return;
    if (!typed.every(Boolean)) {
      missing();
      const lacks = ["the elapsed time", "the reading", "the temperature"].filter((_, k) => !typed[k]);
      if (r.missing && away) r.missing.textContent = `Reading ${i + 1}: ${lacks.join(" and ")} ${lacks.length > 1 ? "are" : "is"} missing.`;
      return;
    }
    const o = { ...r.extra };
    const t = num(r.time); const v = num(r.reading); const c = num(r.temp);
    if (t !== null) o.time_min = t;
    if (v !== null) o.reading = v;
    if (c !== null) o.temperature_c = c;
    readings.push(o);
    s.sent.push(i);
  });
  out.readings = readings;
  // An opened sheet with nothing typed in it is no sedimentation at all.
  const typedPair = (rows) => rows.some((p) => !blank(p.a) || !blank(p.b));
  const anyTyped = [s.gs, s.mass, s.cc, s.meniscus].some((t) => !blank(t)) || typedPair(s.cal) || typedPair(s.depth)
    || s.rows.some((r) => [r.time, r.reading, r.temp].some((t) => !blank(t))) || Object.keys(s.extra).length > 0;
  if (!anyTyped) return { sed: null, ready: false };
  return { sed: out, ready: readings.length > 0 };
}

/** Map a field path of the request under `<path>.sedimentation` to the row on screen. */
export function sedScreenField(s, path, field) {
  const re = new RegExp(`^${path.replace(".", "\\.")}\\.sedimentation\\.(readings|correction_calibration|depth_calibration)\\[(\\d+)\\](.*)$`);
  const m = re.exec(field || "");
  if (!m) return field;
  const sent = { readings: s.sent, correction_calibration: s.calSent, depth_calibration: s.depthSent }[m[1]];
  const row = sent?.[Number(m[2])];
  return row === undefined ? field : `${path}.sedimentation.${m[1]}[${row}]${m[3]}`;
}

/**
 * Show the core's answer on the sheet: `result` a `gradation` result (its
 * `sedimentation` table and `points`), `findings` its findings (paths under
 * `test.` are read as this editor's path). `scope`: where field names are
 * looked up for plain words.
 */
export function showSed(s, path, result, findings, scope) {
  if (!s.open || !s.reducedBox) return;
  const sed = result?.sedimentation || null;
  s.reduced = sed;
  const mine = (f) => String(f || "").replace(/^(test|sample|base)(?=\.sedimentation)/, path);
  const words = (f) => plainWords(String(f.message || "").replace(/\b(test|sample|base)\.sedimentation/g, `${path}.sedimentation`), scope,
    (p) => sedScreenField(s, path, p));
  for (const r of s.rows) if (r.note) r.note.textContent = "";
  const sheetNotes = [];
  for (const f of findings || []) {
    const field = mine(f.field);
    if (!field.startsWith(`${path}.sedimentation`)) continue;
    const m = /\.readings\[(\d+)\]/.exec(field);
    const row = m ? s.rows[s.sent[Number(m[1])]] : null;
    const text = `${f.level === "warning" ? "Warning: " : ""}${words(f)}`;
    if (row?.note) row.note.textContent = row.note.textContent ? `${row.note.textContent} ${text}` : text;
    else sheetNotes.push(text);
  }
  if (s.sheetNote) s.sheetNote.textContent = sheetNotes.join(" ");
  if (s.splitLine) {
    s.splitLine.textContent = sed && typeof sed.passing_split_pct === "number"
      ? `Passing ${fmt(sed.split_mm, 4)} mm, from the sieves: ${fmtPct(sed.passing_split_pct)} %. The percent finer below is of the whole specimen.`
      : `The percent passing ${s.split === "2" ? "2 mm" : "0.075 mm"} is read from the sieves; that sieve must be in the gradation above.`;
  }
  if (!sed) {
    fill(s.reducedBox, h("p", { class: "muted sed-waiting", text: result === null && s.sent.length
      ? "No reduced sheet while the calculator refuses an entry: see the message in red."
      : "The reduced sheet appears once a reading (time, reading, temperature) is complete." }));
    return;
  }
  fill(s.reducedBox, reducedTable(sed, result?.points || []));
}

/** A number the person typed, shown back as typed (no rounding, no trailing zeros). */
const asTyped = (v) => (typeof v === "number" ? String(v) : "—");

/** The core's reduced sheet: per reading the corrected reading, the diameter and the percent finer. */
export function reducedTable(sed, points = []) {
  const inCurve = new Set(points.filter((p) => p.source === "sedimentation").map((p) => p.opening_mm));
  const tbody = h("tbody", {}, (sed.readings || []).map((r, i) => h("tr", { dataset: { reduced: String(i) } },
    h("th", { scope: "row", text: asTyped(r.time_min) }),
    h("td", { class: "calc", text: fmt(r.corrected_reading, 4) }),
    h("td", { class: "calc diam", text: fmt(r.diameter_mm, 3) }),
    h("td", { class: "calc finer" }, fmtPct(r.finer_pct),
      inCurve.has(r.diameter_mm) ? null : h("span", { class: "field-note", text: "not in the curve: the sieves govern" })))));
  return table({ class: "sieve-table sed-table" }, "Reduced by the calculator: diameter (Stokes) and percent finer of the whole specimen",
    ["Time (min)", "Corr. reading", "D (mm)", "Finer (%)"], tbody);
}
