// The page: boot status, offline state, navigation between the screens.
// Screens live in ./ui/, storage in ./storage/; the Python core is reached
// only through ./bridge.js, so every figure shown comes from tamis.api.
import { onStatus, onSnapshot, whenReady, call } from "./bridge.js";
import { startOffline } from "./offline.js";
import { h, fill, announce, clearToast } from "./ui/dom.js";
import { loadSettings } from "./storage/settings.js";
import { listRecords, notExported } from "./storage/records.js";
import { requestPersistence } from "./storage/persist.js";
import { entryScreen } from "./ui/entry.js";
import { quickScreen } from "./ui/quick.js";
import { recordsScreen, detailScreen } from "./ui/records_view.js";
import { refsScreen, bandEditor, baseEditor } from "./ui/refs.js";
import { exchangeScreen, openDemo } from "./ui/exchange.js";
import { settingsScreen, applyTheme } from "./ui/settings_view.js";
import { reportScreen } from "./ui/report_view.js";
import { lotsScreen, lotPage, lotEditor } from "./ui/lots_view.js";

const view = document.getElementById("view");
const bootLine = document.getElementById("boot-status");
const offlineLine = document.getElementById("offline-status");
const badge = document.getElementById("unexported");
const banner = document.getElementById("banner");

let carryToast = false;
const app = {
  settings: null,
  coreVersion: null,
  persistence: null,
  nav: {}, // one-shot options for the next screen (seed record, selection)
  leaving: [], // called once when the screen showing is replaced (a form stops keeping its draft)
  go(hash, opts = {}) {
    app.nav = opts;
    carryToast = true; // a toast just said ("Saved") goes with the screen the app opens
    if (location.hash === hash) render();
    else location.hash = hash;
  },
  async refreshBadge() {
    const recs = await listRecords({ includeDeleted: true });
    const n = recs.filter((r) => r.kind === "test" && notExported(r)).length;
    badge.textContent = String(n);
    badge.hidden = n === 0;
    badge.setAttribute("aria-label", `${n} not exported`);
    badge.setAttribute("role", "status");
  },
};

// ---- boot status of the Python worker -----------------------------------------
onStatus((s) => {
  // the moment the calculator is ready, for the benchmark (bench/bench_webapp.py)
  if (s.ready && !performance.getEntriesByName("tamis-calculator-ready").length) performance.mark("tamis-calculator-ready");
  const pct = typeof s.progress === "number" ? ` ${Math.round(s.progress * 100)} %` : "";
  bootLine.dataset.stage = s.error ? "failed" : s.ready ? "ready" : "booting";
  bootLine.textContent = s.error
    ? `Calculator failed to start: ${s.error}`
    : s.ready ? `Calculator ready${app.coreVersion ? ` (core ${app.coreVersion})` : ""}`
      : `Calculator starting: ${s.detail || s.stage}${pct}`;
});
// app.ready resolves once the core answered its version (null if it cannot boot).
app.ready = whenReady().then(async () => {
  const v = await call("version");
  if (v.ok) app.coreVersion = v.result.core_version;
  bootLine.textContent = `Calculator ready (core ${app.coreVersion})`;
  document.body.dataset.coreReady = "1";
  return app.coreVersion;
}).catch(() => null);
// The background memory snapshot (docs/webapp.md "Boot paths") is shown to nobody; its state is kept on the
// body for tests and benchmarks (a measurement taken while it is being made shares the CPU with it).
onSnapshot((s) => { document.body.dataset.snapshot = s.state; });

// ---- offline state and updates ------------------------------------------------
startOffline({
  onState(st) {
    offlineLine.dataset.state = st.precached ? "ready" : st.error ? "error" : "saving";
    offlineLine.textContent = st.precached
      ? "Ready offline"
      : st.error ? `Not ready offline: ${st.error}`
        : typeof st.bytes === "number" && st.total_bytes
          ? `Saving for offline use: ${(st.bytes / 1e6).toFixed(1)} of ${(st.total_bytes / 1e6).toFixed(1)} MB`
          : `Saving for offline use: ${st.done || 0} of ${st.total || "…"} files`;
  },
  onUpdate(applyFn) {
    fill(banner,
      h("p", { text: "A new version of the app is ready. What you typed is kept." }),
      h("button", { type: "button", class: "btn", text: "Switch to the new version", onclick: () => applyFn() }),
      h("button", { type: "button", class: "btn", text: "Later", onclick: () => { banner.hidden = true; } }));
    banner.hidden = false;
  },
});

// ---- navigation ---------------------------------------------------------------
const ROUTES = {
  entry: (arg) => entryScreen(app, view, arg, app.nav.seed || null),
  quick: () => quickScreen(app, view),
  records: () => recordsScreen(app, view),
  record: (arg) => detailScreen(app, view, arg),
  report: (arg) => reportScreen(app, view, arg),
  refs: () => refsScreen(app, view),
  band: (arg) => bandEditor(app, view, arg, app.nav.seed || null),
  base: (arg) => baseEditor(app, view, arg),
  exchange: () => exchangeScreen(app, view, app.nav),
  settings: () => settingsScreen(app, view),
  lots: () => lotsScreen(app, view),
  lot: (arg) => lotPage(app, view, arg),
  lotedit: (arg) => lotEditor(app, view, arg),
  welcome: () => welcomeScreen(),
};

let rendering = 0;
async function render() {
  const [, name = "", arg = null] = location.hash.match(/^#\/([a-z]+)(?:\/(.+))?$/) || [];
  const route = ROUTES[name] ? name : "entry";
  const ticket = ++rendering;
  for (const f of app.leaving.splice(0)) {
    try { f(); } catch (err) { console.error(err); }
  }
  for (const a of document.querySelectorAll("nav a")) {
    if (a.dataset.route === route || (["record", "report", "lots", "lot", "lotedit"].includes(route) && a.dataset.route === "records")) a.setAttribute("aria-current", "page");
    else a.removeAttribute("aria-current");
  }
  view.dataset.screen = route;
  if (!carryToast) clearToast();
  carryToast = false;
  delete view.dataset.evaluated;
  delete view.dataset.busy;
  delete view.dataset.report;
  try {
    await ROUTES[route](arg ? decodeURIComponent(arg) : null);
  } catch (err) {
    if (ticket === rendering) fill(view, h("div", { class: "screen" }, h("h1", { text: "Something went wrong" }), h("p", { class: "core-error", text: err.message })));
    console.error(err);
  }
  app.nav = {};
  if (ticket === rendering) {
    view.dataset.rendered = String(ticket);
    const h1 = view.querySelector("h1");
    if (h1 && document.activeElement === document.body) { h1.tabIndex = -1; }
  }
}

async function welcomeScreen() {
  const status = h("p", { class: "status-line", role: "status" });
  const box = h("div");
  fill(view, h("div", { class: "screen" },
    h("h1", { text: "Welcome to tamis" }),
    h("p", { text: "Sieve masses in, gradation and screening verdicts out, on this device, with or without signal." }),
    h("div", { class: "actions column" },
      h("a", { class: "btn primary", href: "#/entry", text: "Start a sieve test" }),
      h("button", { type: "button", class: "btn", text: "Open the demo project", onclick: () => openDemo(app, box, status) }),
      h("a", { class: "btn", href: "#/refs", text: "Enter a band or a base soil" })),
    box, status));
}

window.addEventListener("hashchange", () => render());

async function main() {
  app.settings = await loadSettings();
  applyTheme(app.settings.theme);
  const recs = await listRecords({ includeDeleted: true });
  if (!location.hash) location.replace(recs.length === 0 ? "#/welcome" : "#/entry");
  await app.refreshBadge();
  await render();
  showPersistence(await requestPersistence({ onLater: showPersistence }));
}

// What each engine is told about keeping the records (docs/decisions.md).
const STORAGE_WORDS = {
  refused: "This browser may clear the app's records when space runs low. Export your tests often, and add the app to the home screen.",
  pending: "The browser is asking whether this app may keep its records on this device: allow it, so they are not cleared when space runs low. Until then, export your tests often.",
  unsupported: "This browser cannot be asked to keep the app's records: it may clear them when space runs low or after weeks without use. Export your tests often, and add the app to the home screen.",
};
function showPersistence(state) {
  app.persistence = state;
  const warn = document.getElementById("storage-warning");
  warn.dataset.persistence = state;
  warn.textContent = STORAGE_WORDS[state] || "";
  warn.hidden = !STORAGE_WORDS[state];
}

main().catch((err) => { announce(err.message); console.error(err); });
