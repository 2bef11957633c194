// Screen "Exchange": CSV export (download, or Web Share where files can be
// shared), import with a review of conflicts, and the demo project.
import { h, fill, field, announce } from "./dom.js";
import { ask, errorText } from "./core.js";
import { listRecords, notExported, markExported, putRecords, purgeRecords, nowIso } from "../storage/records.js";
import { recordTitle } from "./records_view.js";

export const DEMO_PROJECT = "Tallowmere Dam (demo)";
/** A demo record carries both markers; a user's record with only one of them is never removed as demo. */
export const isDemo = (r) => r.meta?.demo === true && r.meta?.project === DEMO_PROJECT;

function fileName(at) {
  return `tamis-${at.replaceAll(":", "").replace("T", "-").replace("Z", "")}.csv`;
}

const DIALECT_KEY = "tamis.csvDialect";
/**
 * The CSV variant to write: the one chosen last on this device, else the one
 * the device's own number format suggests (a decimal comma -> "decimal_comma").
 */
export function csvDialect() {
  try {
    const kept = localStorage.getItem(DIALECT_KEY);
    if (kept === "standard" || kept === "decimal_comma") return kept;
  } catch { /* storage refused: fall through */ }
  const dec = new Intl.NumberFormat().formatToParts(1.5).find((p) => p.type === "decimal")?.value;
  return dec === "," ? "decimal_comma" : "standard";
}

function dialectChoice() {
  const current = csvDialect();
  const opt = (value, label) => h("label", { class: "radio" },
    h("input", { type: "radio", name: "csv-dialect", value, checked: current === value,
      onchange: () => { try { localStorage.setItem(DIALECT_KEY, value); } catch { /* not kept */ } } }),
    " ", label);
  return h("fieldset", { class: "csv-dialect" },
    h("legend", { text: "For which spreadsheet" }),
    opt("standard", "Commas, decimal point (12.4)"),
    opt("decimal_comma", "Semicolons, decimal comma (12,4)"),
    h("p", { class: "hint", text: "Both import back here as the same records." }));
}

/** Export records through the core's CSV codec; returns {ok, message}. */
export async function exportRecords(app, records, { share = false, dialect = csvDialect() } = {}) {
  if (records.length === 0) return { ok: false, message: "Nothing to export." };
  const context = await contextFor(records);
  const resp = await ask("records_export_csv", { records, bom: false, context, dialect });
  if (!resp.ok) return { ok: false, message: errorText(resp) };
  const at = nowIso();
  const name = fileName(at);
  const file = new File([resp.result.csv], name, { type: "text/csv" });
  let how = "downloaded";
  if (share && navigator.canShare && navigator.canShare({ files: [file] })) {
    try {
      await navigator.share({ files: [file], title: name });
      how = "shared";
    } catch (err) {
      return { ok: false, message: `Not shared (${err.name}); nothing was marked as exported.` };
    }
  } else {
    const url = URL.createObjectURL(file);
    const a = h("a", { href: url, download: name, class: "sr-only", text: name });
    document.body.append(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(url), 10000);
  }
  await markExported(records.map((r) => r.record_id), at);
  await app.refreshBadge();
  await app.recount?.();
  return { ok: true, message: `${resp.result.count} records ${how} as ${name}.`, csv: resp.result.csv };
}

/**
 * The band and base-soil records the exported tests point to (meta.band_id,
 * meta.base_id) and that are not exported with them: they travel as
 * `context`, so the file's computed columns (verdict, D-values) are filled
 * even for a selection.
 */
export async function contextFor(records) {
  const ids = new Set(records.map((r) => r.record_id));
  const wanted = new Set(records.filter((r) => r.kind === "test")
    .flatMap((r) => [r.meta?.band_id, r.meta?.base_id]).filter((id) => id && !ids.has(id)));
  if (wanted.size === 0) return [];
  return (await listRecords({ includeDeleted: true })).filter((r) => wanted.has(r.record_id));
}

function describe(r) {
  if (!r) return "missing";
  return `${recordTitle(r)} · revision ${r.rev} · ${r.updated_at} by ${r.updated_by || "unknown"}`;
}

export async function exchangeScreen(app, view, opts = {}) {
  let all = await listRecords({ includeDeleted: true });
  let pending = all.filter(notExported);
  const selection = (opts.selection || []).map((id) => all.find((r) => r.record_id === id)).filter(Boolean);
  // The counts on the buttons follow the records at once after an export or an import.
  const counted = []; // [button, label, () => records]
  app.recount = async () => {
    if (!view.contains(status)) return;
    all = await listRecords({ includeDeleted: true });
    pending = all.filter(notExported);
    for (const [btn, label, recs] of counted) { const n = recs().length; btn.textContent = typeof label === "function" ? label(n) : `${label} (${n})`; btn.disabled = n === 0; }
  };
  const status = h("p", { class: "status-line", role: "status", "aria-live": "polite" });
  const importBox = h("div", { class: "import-result" });
  const canShare = Boolean(navigator.canShare);
  const exportBtn = (label, recs) => {
    const btn = h("button", {
      type: "button", class: "btn", text: `${label} (${recs().length})`, disabled: recs().length === 0,
      onclick: async () => { status.textContent = "Exporting…"; const r = await exportRecords(app, recs(), { share: false }); status.textContent = r.message; if (r.ok) announce(r.message); },
    });
    counted.push([btn, label, recs]);
    return btn;
  };
  const shareBtn = (recs) => {
    if (!canShare) return null;
    const btn = h("button", {
      type: "button", class: "btn", text: `Share not yet exported (${recs().length})`, disabled: recs().length === 0,
      onclick: async () => { const r = await exportRecords(app, recs(), { share: true }); status.textContent = r.message; },
    });
    counted.push([btn, "Share not yet exported", recs]);
    return btn;
  };

  const fileInput = h("input", { type: "file", id: "import-file", accept: ".csv,text/csv" });
  fileInput.addEventListener("change", async () => {
    const f = fileInput.files[0];
    if (!f) return;
    await importText(app, await f.text(), importBox, status, f.name);
    fileInput.value = "";
  });

  let demo = all.filter(isDemo);
  const demoText = (n) => `Remove the demo (${n} records)`;
  const live = all.filter((r) => !r.deleted);
  let demoBtn = null;
  fill(view, h("div", { class: "screen" },
    h("h1", { text: "Import and export" }),
    h("section", { class: "card" }, h("h2", { text: "Export as CSV" }),
      h("p", { class: "hint", text: "Data leaves this device only when you export it. Exported records are marked with the time of export." }),
      dialectChoice(),
      h("div", { class: "actions column" },
        exportBtn("Export records not yet exported", () => pending),
        shareBtn(() => pending),
        exportBtn("Export all records", () => all),
        selection.length ? exportBtn("Export the selected records", () => selection) : h("p", { class: "hint", text: "To export a selection, tick records in the Records list." }))),
    h("section", { class: "card" }, h("h2", { text: "Import a CSV" }),
      h("p", { class: "hint", text: "Tests, bands and base soils from the office or another device. Nothing is written until the file has been read without error." }),
      h("div", { class: "field" }, h("label", { for: "import-file", text: "CSV file" }), fileInput), importBox),
    h("section", { class: "card" }, h("h2", { text: "Demo project" }),
      live.length === 0 ? h("p", { text: "This device holds no records yet. The demo project (an invented dam) shows how tests, bands and base soils fit together." }) : null,
      h("div", { class: "actions" },
        h("button", { type: "button", class: "btn", text: "Open the demo project", onclick: () => openDemo(app, importBox, status) }),
        demoBtn = h("button", { type: "button", class: "btn", text: demoText(demo.length), disabled: demo.length === 0, onclick: async () => {
          demo = all.filter(isDemo);
          if (!confirm(`Remove the ${demo.length} demo records? Your own records are not touched.`)) return;
          await purgeRecords(demo.map((r) => r.record_id));
          announce("Demo removed.");
          app.refreshBadge();
          app.go("#/exchange", { force: true });
        } }))),
    status));
  counted.push([demoBtn, demoText, () => all.filter(isDemo)]);
}

/**
 * Fetch the demo CSV laid out by the build and import it in one tap: it is
 * applied at once when nothing conflicts (the usual case, and always on an
 * empty device); only a conflict brings up the review.
 */
export async function openDemo(app, box, status) {
  let text;
  try {
    const r = await fetch(new URL("../../vendor/demo/demo_project.csv", import.meta.url));
    if (!r.ok) throw new Error(`HTTP ${r.status}`);
    text = await r.text();
  } catch (err) {
    status.textContent = `The demo project is not in this build (${err.message}).`;
    return;
  }
  await importText(app, text, box, status, "the demo project", { direct: true });
}

const KIND_PLURAL = { test: "tests", band: "bands", base: "base soils", lot: "lots" };

/** "3 tests, 2 bands": the kinds of some records, counted. */
function kindsText(records) {
  const n = new Map();
  for (const r of records) n.set(r.kind, (n.get(r.kind) || 0) + 1);
  return [...n].map(([k, c]) => `${c} ${KIND_PLURAL[k] || k}`).join(", ");
}

/** Write the records an import result adds or changes, in one transaction; returns them. */
async function writeImport(r) {
  const changed = new Set([...(r.added || []), ...(r.updated || [])]);
  const list = (r.records || []).filter((x) => changed.has(x.record_id));
  await putRecords(list);
  return list;
}

/** What an applied import did, with the records it added listed by name. */
async function doneView(app, box, status, name, r, written) {
  const added = written.filter((x) => (r.added || []).includes(x.record_id));
  const resolved = (r.resolved || []).length;
  const parts = [`${r.added.length} added${added.length ? ` (${kindsText(added)})` : ""}`];
  if (r.updated.length - resolved) parts.push(`${r.updated.length - resolved} updated`);
  if (r.unchanged.length) parts.push(`${r.unchanged.length} unchanged`);
  if (resolved) parts.push(resolved === 1 ? "1 conflict settled as a new revision" : `${resolved} conflicts settled as new revisions`);
  const msg = `Imported ${name}: ${parts.join(", ")}.`;
  fill(box, h("p", { class: "ok-line", text: msg }),
    added.length ? h("details", { class: "added-list" },
      h("summary", { text: `What was added (${added.length})` }),
      h("ul", {}, added.map((x) => h("li", {}, h("a", { href: `#/record/${x.record_id}`, text: recordTitle(x) }))))) : null,
    h("div", { class: "actions" }, h("a", { class: "btn", href: "#/records", text: "See the records" })));
  status.textContent = msg;
  announce(msg);
  await app.refreshBadge();
  await app.recount?.();
}

/**
 * Import CSV text: show what would change and ask for each conflict, then
 * write all at once. `direct`: apply at once when nothing conflicts.
 * A conflict is settled by the core (`resolve`, with `at` and `by`): the
 * choice becomes a new revision that supersedes both versions, so the same
 * conflict does not come back at the next import or merge.
 */
export async function importText(app, csv, box, status, name, { direct = false } = {}) {
  status.textContent = `Reading ${name}…`;
  const resp = await ask("records_import_csv", { csv, existing: await listRecords({ includeDeleted: true }) });
  if (!resp.ok) {
    fill(box, h("p", { class: "core-error", role: "alert", text: `${name} was not imported, nothing changed: ${errorText(resp)}` }));
    status.textContent = "Import refused.";
    return;
  }
  const r = resp.result;
  const conflicts = r.conflicts || [];
  if (direct && conflicts.length === 0) {
    await doneView(app, box, status, name, r, await writeImport(r));
    return;
  }
  const choice = new Map();
  const byInput = h("input", { type: "text", autocomplete: "name", value: app.settings.tester || "" });
  const byField = field("Your name or initials, recorded with your choices", byInput);
  const apply = h("button", { type: "button", class: "btn primary", text: "Apply the import", disabled: conflicts.length > 0 });
  const refresh = () => { apply.disabled = choice.size < conflicts.length || (conflicts.length > 0 && !byInput.value.trim()); };
  byInput.addEventListener("input", refresh);
  const conflictList = h("ul", { class: "conflicts" }, conflicts.map((c, i) => {
    const nameR = `conflict-${i}`;
    const opt = (value, label) => h("span", { class: "radio" },
      h("input", { type: "radio", name: nameR, id: `${nameR}-${value}`, value, onchange: () => { choice.set(c.record_id, value); refresh(); } }),
      h("label", { for: `${nameR}-${value}`, text: label }));
    return h("li", { class: "conflict", dataset: { id: c.record_id } },
      h("p", {}, h("strong", { text: "Changed on both sides: " }), recordTitle(c.local || c.incoming)),
      h("p", { text: `On this device: ${describe(c.local)}` }),
      h("p", { text: `In the file: ${describe(c.incoming)}` }),
      h("fieldset", {}, h("legend", { text: "Keep which version?" }), opt("local", "Keep the one on this device"), opt("incoming", "Take the one in the file")));
  }));
  apply.addEventListener("click", async () => {
    apply.disabled = true;
    let result = r;
    if (conflicts.length) {
      // Ask the core again with the choices: it returns each settled record as
      // a new revision descending from both versions.
      const again = await ask("records_import_csv", {
        csv, existing: await listRecords({ includeDeleted: true }),
        resolve: Object.fromEntries(choice), at: nowIso(), by: byInput.value.trim(),
      });
      if (!again.ok) {
        status.textContent = `Not applied, nothing changed: ${errorText(again)}`;
        refresh();
        return;
      }
      result = again.result;
      if ((result.conflicts || []).length) {
        status.textContent = "The records changed while you chose; the file was read again. Choose again.";
        await importText(app, csv, box, status, name);
        return;
      }
    }
    await doneView(app, box, status, name, result, await writeImport(result));
  });
  fill(box,
    h("p", { text: `${name}: ${r.rows} rows; ${r.added.length} new, ${r.updated.length} newer than on this device, ${r.unchanged.length} unchanged, ${conflicts.length} in conflict.` }),
    conflicts.length ? [h("p", { class: "hint", text: "Each conflict needs your choice; nothing is overwritten without it. The version you keep is saved as a new revision, with both histories." }),
      conflictList, byField.wrap] : null,
    h("div", { class: "actions" }, apply));
  status.textContent = `${name} read; review and apply.`;
}
