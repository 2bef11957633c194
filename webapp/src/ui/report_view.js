// Screen "Report": the printable report of a test, a lot or a day. The
// document is the core's (op `report_html`, the same HTML the office writes
// with `python -m tamis report --html`), shown in a sandboxed frame that runs
// no script; printed or saved as PDF through the browser's print, saved as a
// file, or shared through the device's share sheet where it offers one.
import { h, fill, announce } from "./dom.js";
import { ask, errorText } from "./core.js";
import { listRecords } from "../storage/records.js";
import { contextFor } from "./exchange.js";

const PAPER_KEY = "tamis.reportPaper";

function paperChoice() {
  try {
    const kept = localStorage.getItem(PAPER_KEY);
    if (["auto", "a4", "letter"].includes(kept)) return kept;
  } catch { /* storage refused */ }
  return "auto";
}

/**
 * The records a report needs: `what` is "test", "lot" or "day", `key` the
 * record id, the lot or the date (YYYY-MM-DD, UTC). A test without its own
 * rules is sent with the rules the app judges it by (the settings' rule
 * set), so the report says what the screen says.
 */
async function recordsFor(app, what, key) {
  const all = await listRecords({ includeDeleted: true });
  let tests;
  if (what === "test") tests = all.filter((r) => r.record_id === key);
  else if (what === "lot") tests = all.filter((r) => r.kind === "test" && !r.deleted && String(r.meta?.lot ?? "") === key);
  else tests = all.filter((r) => r.kind === "test" && !r.deleted && String(r.meta?.sampled_at ?? "").slice(0, 10) === key);
  const withRules = tests.map((r) => (r.meta?.rules ? r : { ...r, meta: { ...r.meta, rules: { criteria: app.settings.rules } } }));
  return { records: withRules, context: await contextFor(tests) };
}

function fileName(title) {
  return `${title.replace(/[^A-Za-z0-9._-]+/g, "-").replace(/^-+|-+$/g, "")}.html`;
}

export async function reportScreen(app, view, arg) {
  delete view.dataset.report; // set again once this screen's document has loaded
  const [what = "test", ...rest] = String(arg || "").split("/");
  const key = rest.join("/");
  const status = h("p", { class: "status-line", role: "status", "aria-live": "polite" });
  const frame = h("iframe", {
    class: "report-frame", title: "Report preview",
    // No script runs in the report; same origin only so that its print can be asked for from here.
    sandbox: "allow-same-origin allow-modals",
  });
  let doc = null; // {html, title, count}
  const paper = h("select", { id: "report-paper", "aria-describedby": "report-paper-hint" },
    [["auto", "The printer's paper"], ["a4", "A4"], ["letter", "US letter"]].map(([v, t]) => h("option", { value: v, text: t, selected: v === paperChoice() })));
  const printBtn = h("button", { type: "button", class: "btn primary", text: "Print or save as PDF", disabled: true, onclick: () => {
    const w = frame.contentWindow;
    if (!w) return;
    w.focus();
    w.print();
  } });
  const saveBtn = h("button", { type: "button", class: "btn", text: "Save as a file", disabled: true, onclick: () => {
    const file = new File([doc.html], fileName(doc.title), { type: "text/html" });
    const url = URL.createObjectURL(file);
    const a = h("a", { href: url, download: file.name, class: "sr-only", text: file.name });
    document.body.append(a); a.click(); a.remove();
    setTimeout(() => URL.revokeObjectURL(url), 10000);
    status.textContent = `Saved as ${file.name}.`;
  } });
  const canShare = typeof navigator.share === "function";
  const shareBtn = canShare ? h("button", { type: "button", class: "btn", text: "Share", disabled: true, onclick: async () => {
    const file = new File([doc.html], fileName(doc.title), { type: "text/html" });
    const data = navigator.canShare && navigator.canShare({ files: [file] })
      ? { files: [file], title: doc.title } : { title: doc.title, text: frame.contentDocument?.body?.innerText?.slice(0, 4000) || doc.title };
    try {
      await navigator.share(data);
      status.textContent = "Shared.";
    } catch (err) {
      status.textContent = `Not shared (${err.name}).`;
    }
  } }) : null;

  const back = what === "test" ? `#/record/${key}` : "#/records";
  fill(view, h("div", { class: "screen report-screen" },
    h("h1", { text: "Report" }),
    h("div", { class: "actions report-actions" }, printBtn, saveBtn, shareBtn,
      h("a", { class: "btn", href: back, text: what === "test" ? "Back to the test" : "Back to the records" })),
    h("div", { class: "field report-paper" }, h("label", { for: "report-paper", text: "Paper" }), paper,
      h("p", { class: "hint", id: "report-paper-hint", text: "One page per test on A4 or US letter. In the print dialog, choose \"Save as PDF\" to keep a PDF." })),
    status, frame));

  async function load() {
    status.textContent = "Preparing the report…";
    const { records, context } = await recordsFor(app, what, key);
    if (what === "test" && records.length === 0) { status.textContent = "Record not found."; return; }
    const req = { records, context, report: what, paper: paper.value };
    if (what === "test") req.ids = [key];
    else req[what] = key;
    const resp = await ask("report_html", req);
    if (!resp.ok) { status.textContent = errorText(resp); return; }
    doc = resp.result;
    frame.srcdoc = doc.html;
    await new Promise((resolve) => { frame.addEventListener("load", resolve, { once: true }); });
    const d = frame.contentDocument;
    if (d) frame.style.height = `${Math.max(400, d.documentElement.scrollHeight + 16)}px`;
    for (const b of [printBtn, saveBtn, shareBtn]) if (b) b.disabled = false;
    view.dataset.report = "ready";
    status.textContent = `${doc.title}: ready to print${what === "test" ? "" : ` (${doc.count} test${doc.count === 1 ? "" : "s"})`}.`;
    announce(status.textContent);
  }
  paper.addEventListener("change", () => {
    try { localStorage.setItem(PAPER_KEY, paper.value); } catch { /* not kept */ }
    delete view.dataset.report;
    load();
  });
  await load();
}
