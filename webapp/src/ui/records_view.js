// Screens "Records" (list with search and filters) and a record's detail
// (figures, verdict, chart, history).
import { h, fill, field, fmt, announce, when } from "./dom.js";
import { ask, evaluateRecord, evaluateRecords, errorText } from "./core.js";
import { renderVerdict, verdictLine, VERDICT_WORDS } from "./verdict.js";
import { renderChart } from "./chart.js";
import { renderDvalues, bandName, baseName } from "./entry.js";
import { reducedTable } from "./editor/sedimentation.js";
import { dueWarning, lotPage, lotName } from "./lots_view.js";
import { listRecords, getRecord, notExported, softDelete, restore, cachedResults, storeResult, storeResults, blankRecord } from "../storage/records.js";

/** Rows drawn at a time; more are drawn as the list is scrolled to its end. */
export const PAGE_ROWS = 100;
/** Verdict requests sent to the worker in one message. */
const VERDICT_BATCH = 50;
/**
 * Pause for more typing before the list is redrawn [ms]: one frame. The search
 * runs on a prebuilt index and a redraw takes 10-40 ms at 20,000 records
 * (bench/bench_records.py), so a longer pause would only add delay.
 */
const SEARCH_DEBOUNCE_MS = 16;

/**
 * Verdicts of stored tests: the cache is read once (hits made by the running
 * core version for the record's revision), the rest is computed in batches in
 * the worker and cached. onProgress(verdicts, done, total, ids) after the cache
 * and after each batch (ids: the records it added); stops early when cancelled().
 */
export async function verdictsFor(app, tests, byId, { onProgress = () => {}, cancelled = () => false } = {}) {
  const out = new Map();
  const version = await app.ready; // the cache is valid only for the running core's version
  if (!version) {
    for (const rec of tests) out.set(rec.record_id, { verdict: null });
    onProgress(out, tests.length, tests.length, tests.map((r) => r.record_id));
    return out;
  }
  const hits = await cachedResults(tests, version);
  for (const [id, hit] of hits) out.set(id, hit);
  const missing = tests.filter((r) => !hits.has(r.record_id));
  let done = tests.length - missing.length;
  onProgress(out, done, tests.length, [...hits.keys()]);
  for (let i = 0; i < missing.length && !cancelled(); i += VERDICT_BATCH) {
    const chunk = missing.slice(i, i + VERDICT_BATCH);
    const resps = await evaluateRecords(chunk, byId, app.settings);
    const keep = [];
    chunk.forEach((rec, j) => {
      const resp = resps[j];
      const hit = resp.ok ? { verdict: resp.result.verdict } : { verdict: null, error: resp.error?.message };
      if (resp.ok) keep.push([rec, hit]);
      out.set(rec.record_id, hit);
    });
    if (keep.length) await storeResults(keep, resps.find((r) => r.ok)?.core_version || version);
    done += chunk.length;
    onProgress(out, done, tests.length, chunk.map((r) => r.record_id));
  }
  return out;
}

const KIND_WORDS = { test: "Test", band: "Band", base: "Base soil", lot: "Lot" };

export function recordTitle(r) {
  if (r.kind === "band") return bandName(r);
  if (r.kind === "base") return baseName(r);
  if (r.kind === "lot") return lotName(r);
  return [r.meta?.sample_id, r.meta?.material].filter(Boolean).join(" · ") || r.record_id.slice(0, 8);
}

export async function recordsScreen(app, view) {
  const all = await listRecords({ includeDeleted: true });
  const byId = new Map(all.map((r) => [r.record_id, r]));
  const live = all.filter((r) => !r.deleted);
  const tests = live.filter((r) => r.kind === "test");
  const projects = [...new Set(live.map((r) => r.meta?.project).filter(Boolean))].sort();
  const materials = [...new Set(live.map((r) => r.meta?.material).filter(Boolean))].sort();

  const search = field("Search", h("input", { type: "search", autocomplete: "off", placeholder: "sample id, station, notes…" }));
  const sel = (label, opts) => field(label, h("select", {}, h("option", { value: "", text: "All" }), opts.map((o) => h("option", { value: o.value ?? o, text: o.text ?? o }))));
  const kindF = sel("Kind", [{ value: "test", text: "Tests" }, { value: "band", text: "Bands" }, { value: "base", text: "Base soils" }, { value: "lot", text: "Lots" }, { value: "deleted", text: "Deleted, not yet exported" }]);
  kindF.input.value = "test";
  const projectF = sel("Project", projects);
  const materialF = sel("Material", materials);
  const verdictF = sel("Verdict", Object.entries(VERDICT_WORDS).map(([k, v]) => ({ value: k, text: v.word })));
  const pending = h("input", { type: "checkbox", id: "f-pending" });
  const list = h("ul", { class: "record-list", "aria-label": "Records", dataset: { verdicts: "pending" } });
  const count = h("p", { class: "hint", role: "status" });
  const progress = h("progress", { max: Math.max(tests.length, 1), value: 0, "aria-label": "Tests checked so far" });
  const progressLine = h("p", { class: "hint verdict-progress" }, progress, h("span"));
  const more = h("button", { type: "button", class: "btn", hidden: true, onclick: () => drawMore() });
  const dueBox = h("section", { class: "card lot-due-warning", role: "alert", "aria-label": "Testing due", hidden: true });
  const selected = new Set();
  const exportSel = h("button", { type: "button", class: "btn", text: "Export the selected records", disabled: true, onclick: () => app.go("#/exchange", { selection: [...selected] }) });

  fill(view, h("div", { class: "screen" },
    h("h1", { text: "Records on this device" }),
    h("div", { class: "actions" },
      h("a", { class: "btn primary", href: "#/entry", text: "New sieve test" }),
      h("a", { class: "btn", href: "#/lots", text: "Lots" })),
    dueBox,
    // The records first; search and filters one tap away.
    h("details", { class: "card filters" }, h("summary", { text: "Search and filters" }),
      search.wrap, h("div", { class: "grid2" }, kindF.wrap, projectF.wrap, materialF.wrap, verdictF.wrap),
      h("div", { class: "check-row" }, pending, h("label", { for: "f-pending", text: "Only records not yet exported" }))),
    count, progressLine, list, more, exportSel));

  // The search runs on an index made once: each record's searchable text, lower-cased.
  const index = all.map((r) => JSON.stringify([r.meta, r.band?.name]).toLowerCase());
  let verdicts = new Map();
  let rows = [];
  let drawn = 0;
  const spans = new Map(); // record_id -> verdict span of a drawn row
  const verdictText = (v) => (v ? verdictLine(v.verdict) : "… verdict pending");
  const item = (r) => {
    const v = verdicts.get(r.record_id);
    const box = h("input", { type: "checkbox", id: `sel-${r.record_id}`, checked: selected.has(r.record_id),
      "aria-label": `Select ${recordTitle(r)}`,
      onchange: (e) => { if (e.target.checked) selected.add(r.record_id); else selected.delete(r.record_id); exportSel.disabled = selected.size === 0; } });
    const span = r.kind === "test" ? h("span", { class: "record-verdict", dataset: { verdict: v?.verdict || "none" }, text: verdictText(v) }) : null;
    if (span) spans.set(r.record_id, span);
    return h("li", { class: "record-item", dataset: { id: r.record_id, kind: r.kind } },
      box,
      h("a", { href: r.kind === "lot" ? `#/lot/${r.record_id}` : `#/record/${r.record_id}`, class: "record-link" },
        h("span", { class: "record-title", text: recordTitle(r) }),
        h("span", { class: "record-sub", text: [KIND_WORDS[r.kind], r.meta?.project, r.meta?.station && `station ${r.meta.station}`, r.updated_at?.slice(0, 10)].filter(Boolean).join(" · ") }),
        span,
        notExported(r) ? h("span", { class: "pill", text: "not exported" }) : null));
  };
  function drawMore() {
    const next = rows.slice(drawn, drawn + PAGE_ROWS);
    list.append(...next.map(item));
    drawn += next.length;
    const left = rows.length - drawn;
    more.hidden = left === 0;
    more.textContent = `Show ${Math.min(left, PAGE_ROWS)} more (${left} not drawn yet)`;
  }
  let draws = 0;
  const draw = () => {
    const q = search.input.value.trim().toLowerCase();
    const kind = kindF.input.value;
    const project = projectF.input.value;
    const material = materialF.input.value;
    const verdict = verdictF.input.value;
    rows = [];
    for (let i = 0; i < all.length; i += 1) {
      const r = all[i];
      if (kind === "deleted") { if (!r.deleted) continue; } else if (r.deleted || (kind && r.kind !== kind)) continue;
      if (project && r.meta?.project !== project) continue;
      if (material && r.meta?.material !== material) continue;
      if (verdict && verdicts.get(r.record_id)?.verdict !== verdict) continue;
      if (pending.checked && !notExported(r)) continue;
      if (q && !index[i].includes(q)) continue;
      rows.push(r);
    }
    count.textContent = `${rows.length} of ${all.length} records shown.`;
    spans.clear();
    list.replaceChildren();
    drawn = 0;
    drawMore();
    list.dataset.query = q;
    list.dataset.draws = String(++draws);
  };
  let searchTimer = null;
  search.input.addEventListener("input", () => { clearTimeout(searchTimer); searchTimer = setTimeout(draw, SEARCH_DEBOUNCE_MS); });
  for (const f of [kindF, projectF, materialF, verdictF]) f.input.addEventListener("input", draw);
  pending.addEventListener("change", draw);
  // More rows are drawn when the end of the list comes into view.
  const seen = typeof IntersectionObserver === "function"
    ? new IntersectionObserver((entries) => { if (entries.some((e) => e.isIntersecting) && !more.hidden) drawMore(); }, { rootMargin: "400px" })
    : null;
  seen?.observe(more);
  let left = false;
  app.leaving?.push(() => { left = true; seen?.disconnect(); clearTimeout(searchTimer); });
  draw();
  dueWarning(dueBox, all).catch((err) => console.error(err));

  const onProgress = (map, done, total, ids) => {
    verdicts = map;
    progress.value = done;
    progressLine.lastChild.textContent = done < total ? ` Verdicts: ${done.toLocaleString("en")} of ${total.toLocaleString("en")} worked out…` : "";
    progressLine.hidden = done >= total;
    if (verdictF.input.value) { draw(); return; }
    for (const id of ids) {
      const span = spans.get(id);
      if (!span) continue;
      const v = map.get(id);
      span.dataset.verdict = v?.verdict || "none";
      span.textContent = verdictText(v);
    }
  };
  try {
    await verdictsFor(app, tests, byId, { onProgress, cancelled: () => left });
  } catch (err) {
    progressLine.lastChild.textContent = ` Verdicts could not be worked out: ${err.message}`;
    return;
  }
  if (!left) list.dataset.verdicts = "done";
}

function metaList(meta) {
  const skip = new Set(["rules", "band_id", "base_id", "retest_of", "lot_id"]);
  const rows = Object.entries(meta || {}).filter(([k]) => !skip.has(k));
  return h("dl", { class: "meta-list" }, rows.map(([k, v]) => [h("dt", { text: k.replaceAll("_", " ") }), h("dd", { text: typeof v === "object" ? JSON.stringify(v) : String(v) })]));
}

const FINES_WORDS = { plasticity: "plasticity of the fines", nonplastic: "fines nonplastic", liquid_limit: "liquid limit LL (%)", plasticity_index: "plasticity index PI (%)" };

/** What a test says of its fines: "Nonplastic", "LL 38 %, PI 18 %", "Not tested"; and for a base, dispersive or not. */
export function finesWords(rec) {
  const pl = rec.test?.plasticity || {};
  const parts = [pl.nonplastic ? "Nonplastic" : typeof pl.liquid_limit === "number" ? `LL ${pl.liquid_limit} %, PI ${pl.plasticity_index} %` : "Plasticity not tested"];
  if (rec.kind === "base") parts.push(rec.test?.dispersive === true ? "dispersive" : rec.test?.dispersive === false ? "not dispersive" : "dispersion not known");
  return parts.join("; ");
}

const TOTALS = { pan_g: "pan (g)", dry_mass_g: "dry mass before washing (g)", washed_dry_mass_g: "dry mass after washing (g)" };
const SED_WORDS = { hydrometer: "hydrometer", specific_gravity: "specific gravity of solids Gs", dry_mass_g: "dry mass in suspension (g)",
  split_mm: "split sieve (mm)", composite_correction: "composite correction", meniscus_correction: "meniscus correction",
  correction_calibration: "correction calibration", depth_calibration: "effective depth calibration", readings: "readings",
  time_min: "time (min)", reading: "reading", temperature_c: "temperature (°C)", depth_cm: "depth (cm)" };

/** A field of the hydrometer sheet in words: "hydrometer reading 3 at 15 min: temperature (°C)". */
function sedWords(rest, rec) {
  if (!rest) return "hydrometer sheet";
  let m = /^\.readings\[(\d+)\](\.([a-z_]+))?$/.exec(rest);
  if (m) {
    const t = rec.test?.sedimentation?.readings?.[Number(m[1])]?.time_min;
    const head = `hydrometer reading ${Number(m[1]) + 1}${typeof t === "number" ? ` at ${t} min` : ""}`;
    return m[3] ? `${head}: ${SED_WORDS[m[3]] || m[3].replaceAll("_", " ")}` : head;
  }
  if ((m = /^\.(correction_calibration|depth_calibration)\[(\d+)\](\.([a-z_]+))?$/.exec(rest))) {
    return `hydrometer ${SED_WORDS[m[1]]}, row ${Number(m[2]) + 1}${m[4] ? `: ${SED_WORDS[m[4]] || m[4].replaceAll("_", " ")}` : ""}`;
  }
  if ((m = /^\.([a-z_]+)$/.exec(rest))) return `hydrometer ${SED_WORDS[m[1]] || m[1].replaceAll("_", " ")}`;
  return null;
}

/**
 * A changed field in words, the stored path after it: "mass on 2.36 mm (g)"
 * for test.sieves[2].retained_g (the size is the record's current one at that row).
 */
export function fieldWords(path, rec) {
  let m = /^test\.sieves\[(\d+)\]\.retained_g$/.exec(path);
  const size = (list, i) => { const d = rec.test?.[list]?.[Number(i)]?.opening_mm; return d === undefined ? `row ${Number(i) + 1}` : `${fmt(d, 4)} mm`; };
  if (m) return `mass on ${size("sieves", m[1])} (g)`;
  if ((m = /^test\.passing\[(\d+)\]\.passing_pct$/.exec(path))) return `passing at ${size("passing", m[1])} (%)`;
  if ((m = /^test\.passing\[(\d+)\]\.opening_mm$/.exec(path))) return `size of row ${Number(m[1]) + 1} (mm)`;
  if ((m = /^test\.d_mm\.(D\d+(\.\d+)?)$/.exec(path))) return `${m[1]} (mm)`;
  if ((m = /^test\.(pan_g|dry_mass_g|washed_dry_mass_g)$/.exec(path))) return TOTALS[m[1]];
  if ((m = /^test\.plasticity(\.(nonplastic|liquid_limit|plasticity_index))?$/.exec(path))) return FINES_WORDS[m[2] || "plasticity"];
  if (path === "test.dispersive") return "dispersive";
  if ((m = /^test\.sedimentation(.*)$/.exec(path))) return sedWords(m[1], rec);
  if ((m = /^meta\.([a-z_]+)$/.exec(path))) return m[1].replaceAll("_", " ");
  return null;
}

function historyList(rec) {
  return h("ol", { class: "history" }, (rec.history || []).slice().reverse().map((e) =>
    h("li", {},
      h("p", {}, h("strong", { text: `Revision ${e.rev}` }), ` · ${when(e.at)} · ${e.by || "unknown"} · ${e.summary}`),
      e.changes?.length ? h("ul", {}, e.changes.map((c) => {
        const words = fieldWords(c.field, rec);
        return h("li", {}, words ? `${words}: ` : "", `${show(c.old)} → ${show(c.new)}`,
          h("span", { class: "field-path", text: ` (${c.field})` }));
      })) : null)));
}
const show = (v) => (v === null || v === undefined ? "empty" : typeof v === "object" ? JSON.stringify(v) : String(v));

export async function detailScreen(app, view, id) {
  const rec = await getRecord(id);
  if (!rec) { fill(view, h("div", { class: "screen" }, h("h1", { text: "Record not found" }), h("a", { href: "#/records", text: "Back to the records" }))); return; }
  if (rec.kind === "lot") { await lotPage(app, view, rec.record_id); return; }
  const all = await listRecords({ includeDeleted: true });
  const byId = new Map(all.map((r) => [r.record_id, r]));
  const verdictBox = h("section", { class: "card verdict-card" });
  const dvalBox = h("section", { class: "card" });
  const chartBox = h("section", { class: "card" });
  const resultChart = h("div", { class: "chart-box", role: "group", "aria-label": "Gradation chart" });
  const sedBox = rec.test?.sedimentation ? h("section", { class: "card sed-detail", "aria-label": "Hydrometer sheet" }) : null;
  const status = h("p", { class: "hint", role: "status" });
  const editHref = rec.kind === "test" ? `#/entry/${rec.record_id}` : `#/${rec.kind}/${rec.record_id}`;
  const actions = h("div", { class: "actions" },
    rec.deleted ? null : h("a", { class: "btn primary", href: editHref, text: "Edit" }),
    rec.kind === "test" && rec.test ? h("a", { class: "btn", href: `#/report/test/${rec.record_id}`, text: "Report" }) : null,
    rec.kind === "test" && rec.meta?.lot ? h("a", { class: "btn", href: `#/report/lot/${encodeURIComponent(String(rec.meta.lot))}`, text: `Lot report (${rec.meta.lot})` }) : null,
    rec.kind === "test" && /^\d{4}-\d\d-\d\d/.test(rec.meta?.sampled_at || "") ? h("a", { class: "btn", href: `#/report/day/${rec.meta.sampled_at.slice(0, 10)}`, text: `Daily report (${rec.meta.sampled_at.slice(0, 10)})` }) : null,
    rec.kind === "test" && !rec.deleted ? h("button", { type: "button", class: "btn", text: "Retest this sample", onclick: () => {
      const seed = blankRecord("test", { meta: { ...rec.meta, retest_of: rec.record_id, sample_id: `${rec.meta?.sample_id || "S"}-R` }, test: null });
      app.go("#/entry", { seed });
    } }) : null,
    h("button", { type: "button", class: "btn", text: rec.deleted ? "Restore" : "Delete", onclick: async () => {
      if (!rec.deleted && !confirm("Delete this record? It stays on the device, hidden, until it has been exported.")) return;
      await (rec.deleted ? restore(rec.record_id, app.settings.tester) : softDelete(rec.record_id, app.settings.tester));
      announce(rec.deleted ? "Record restored." : "Record deleted; it leaves the device after the next export.");
      app.refreshBadge();
      app.go(`#/record/${rec.record_id}`, { force: true });
    } }));
  const refs = [];
  if (rec.meta?.band_id) refs.push(h("p", {}, "Band: ", h("a", { href: `#/record/${rec.meta.band_id}`, text: byId.get(rec.meta.band_id) ? bandName(byId.get(rec.meta.band_id)) : "missing" })));
  if (rec.meta?.base_id) refs.push(h("p", {}, "Base soil: ", h("a", { href: `#/record/${rec.meta.base_id}`, text: byId.get(rec.meta.base_id) ? baseName(byId.get(rec.meta.base_id)) : "missing" })));
  if (rec.meta?.lot_id || rec.meta?.lot) {
    const lotRec = byId.get(rec.meta.lot_id);
    refs.push(h("p", { class: "lot-link" }, "Lot: ", h("a", { href: `#/lot/${encodeURIComponent(lotRec ? lotRec.record_id : rec.meta.lot)}`, text: lotRec ? lotName(lotRec) : `Lot ${rec.meta.lot}` }),
      typeof rec.meta.quantity === "number" ? ` · represents ${rec.meta.quantity} ${rec.meta.quantity_unit === "t" ? "t" : "m³"}` : "",
      rec.meta.ticket ? ` · ticket ${rec.meta.ticket}` : ""));
  }
  if (rec.meta?.retest_of) refs.push(h("p", {}, "Retest of: ", h("a", { href: `#/record/${rec.meta.retest_of}`, text: byId.get(rec.meta.retest_of) ? recordTitle(byId.get(rec.meta.retest_of)) : "missing" })));

  fill(view, h("div", { class: "screen detail", dataset: { id: rec.record_id } },
    h("h1", { text: `${KIND_WORDS[rec.kind]} ${recordTitle(rec)}` }),
    rec.deleted ? h("p", { class: "core-error", text: "Deleted: kept on this device until it has been exported." }) : null,
    h("p", { class: "hint", text: `Revision ${rec.rev}, saved ${when(rec.updated_at)} by ${rec.updated_by || "unknown"}; ${notExported(rec) ? "not yet exported" : `exported ${when(rec.exported_at)}`}.` }),
    actions, status,
    rec.kind === "test" ? [verdictBox, dvalBox] : chartBox,
    sedBox,
    rec.test ? h("section", { class: "card" }, h("h2", { text: "Fines" }), h("p", { class: "fines-line", text: finesWords(rec) })) : null,
    h("section", { class: "card" }, h("h2", { text: "Details" }), ...refs, metaList(rec.meta)),
    rec.kind === "band" ? h("section", { class: "card" }, h("h2", { text: "Band limits" }),
      h("table", {}, h("thead", {}, h("tr", {}, h("th", { scope: "col", text: "Size (mm)" }), h("th", { scope: "col", text: "Min (%)" }), h("th", { scope: "col", text: "Max (%)" }))),
        h("tbody", {}, (rec.band?.limits || []).map((l) => h("tr", {}, h("td", { text: fmt(l.opening_mm, 4) }), h("td", { text: l.min_pct ?? "" }), h("td", { text: l.max_pct ?? "" })))))) : null,
    h("section", { class: "card" }, h("h2", { text: "History" }), historyList(rec))));

  if (rec.kind === "band") {
    renderChart(chartBox, { band: rec.band }, app.settings.axis, "Band limits");
  } else if (rec.kind === "base") {
    const resp = await ask("gradation", { test: rec.test });
    if (resp.ok) { renderChart(chartBox, { base: resp.result }, app.settings.axis, "Base soil curve"); showSheet(resp); }
    else status.textContent = errorText(resp);
  } else {
    const resp = await evaluateRecord(rec, byId, app.settings);
    renderVerdict(verdictBox, resp, { slot: resultChart });
    if (resp.ok) {
      renderDvalues(dvalBox, resp.result.sample);
      const band = byId.get(rec.meta?.band_id)?.band || null;
      renderChart(resultChart, { sample: resp.result.sample, base: resp.result.base, band, limits: resp.result.limits }, app.settings.axis);
      await storeResult(rec, resp.core_version, { verdict: resp.result.verdict });
    }
    if (sedBox) showSheet(await ask("gradation", { test: rec.test }));
  }

  /** The hydrometer sheet as the core reduced it, with its warnings. */
  function showSheet(resp) {
    if (!sedBox) return;
    const sed = resp.ok ? resp.result.sedimentation : null;
    const warnings = (resp.findings || []).filter((f) => String(f.field || "").startsWith("test.sedimentation"));
    fill(sedBox, h("h2", { text: "Hydrometer sheet" }),
      sed ? h("p", { class: "hint", text: `${sed.hydrometer}, Gs ${sed.specific_gravity}, ${sed.dry_mass_g} g in suspension; split on ${fmt(sed.split_mm, 4)} mm, ${sed.passing_split_pct.toFixed(1)} % passing it.` }) : null,
      sed ? reducedTable(sed, resp.result.points) : h("p", { class: "core-error", text: errorText(resp) }),
      warnings.length ? h("ul", { class: "findings sed-findings" }, warnings.map((f) => h("li", {
        text: `${f.level === "warning" ? "Warning: " : ""}${String(f.message).replace(/\btest\.sedimentation[\w.[\]]*/g, (p) => fieldWords(p, rec) || p)}` }))) : null);
  }
}
