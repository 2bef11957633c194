// The tamis Python worker: one long-lived module worker that boots Pyodide from
// this origin, installs the tamis wheel, runs a self-test and answers
// tamis.api requests. JSON strings only cross the seam, never PyProxies.
//
// Messages in:   {type: "request", n, json}
//                {type: "batch", n, jsons}         many requests, answered in order in one reply
// Messages out:  {type: "status", stage, detail, progress, ready, error, timings?}
//                {type: "response", n, json}       every answer, Python errors included (an array for a batch)
//                {type: "fatal", error}             the runtime itself failed; no more answers
//
// Install mode: ?install=unpack (default, measured faster) or ?install=micropip
// on this script's URL; see docs/webapp.md for the figures.

import { prepareFetchGuard } from "./guard.js";
import { sha256Hex } from "./digest.js";
import * as snapshots from "./snapshot_store.js";
import "../fetch_once.js";  // self.tamisFetchOnce: one download per file, shared with the service worker's precache

const HERE = new URL(".", import.meta.url);
const SITE = new URL("../../", HERE);
const VENDOR = new URL("vendor/", SITE);
const PYODIDE_DIR = new URL("pyodide/", VENDOR);
const INSTALL_MODE = new URL(import.meta.url).searchParams.get("install") === "micropip" ? "micropip" : "unpack";
// Set by the bridge when a service worker controls the page: its cache answers every fetch, so the shared
// downloads below (for a first visit, or a page it does not control) are not needed.
const CONTROLLED = new URL(import.meta.url).searchParams.get("sw") === "1";
// role=snapshot: the short-lived second worker that makes the memory snapshot (started by the main worker
// after its plain boot, see makeSnapshotLater); the main worker answers the page.
const ROLE = new URL(import.meta.url).searchParams.get("role") === "snapshot" ? "snapshot" : "main";
// snapshot=off on the page URL (passed on by the bridge): always boot plainly (for comparisons).
const SNAPSHOT_OFF = new URL(import.meta.url).searchParams.get("snapshot") === "off";
// snapshot=discard (set by the bridge when a snapshot boot did not reach ready in time and it restarted this
// worker): the stored snapshot is refused without trying it, and the boot is plain.
const SNAPSHOT_DISCARD = new URL(import.meta.url).searchParams.get("snapshot") === "discard";

const t0 = performance.now();
const timings = {};
let handle = null;      // tamis.api.handle as a callable proxy; its results are JS strings
let broken = null;      // set once the runtime has failed: every later request gets the fatal error
const queue = [];       // requests received before the runtime was ready
let lastRequestAt = performance.now();  // the snapshot is made once requests pause (makeSnapshotLater)

function post(msg) {
  self.postMessage(msg);
}

function status(stage, detail, progress, extra = {}) {
  if (broken) return;
  post({ type: "status", stage, detail, progress, ready: false, error: null, ...extra });
}

function mark(name) {
  timings[name] = Math.round(performance.now() - t0);
}

async function fetchChecked(url, what) {
  let response;
  try {
    response = await fetch(url);
  } catch (err) {
    throw new Error(`${what} could not be loaded from ${url.pathname} (${err.message}); ` +
      "the app's files are missing from this device and the network is unavailable");
  }
  if (!response.ok) {
    throw new Error(`${what} is missing: ${url.pathname} answered HTTP ${response.status}; rebuild the app (make build)`);
  }
  return response;
}

async function loadManifest() {
  const manifest = await (await fetchChecked(new URL("manifest.json", VENDOR), "the build manifest")).json();
  if (!manifest || !manifest.wheel || !Array.isArray(manifest.files)) {
    throw new Error("vendor/manifest.json is not a tamis build manifest; rebuild the app (make build)");
  }
  return manifest;
}

async function fetchWheel(manifest) {
  const entry = manifest.files.find((f) => f.path === manifest.wheel);
  const url = new URL(manifest.wheel, SITE);
  const bytes = new Uint8Array(await (await fetchChecked(url, "the tamis core wheel")).arrayBuffer());
  if (entry && (await sha256Hex(bytes)) !== entry.sha256) {
    throw new Error(`the tamis wheel ${manifest.wheel} does not match the build manifest; rebuild the app`);
  }
  return { url, bytes };
}

async function installCore(py, manifest) {
  if (INSTALL_MODE === "micropip") {
    await py.loadPackage("micropip", { messageCallback: () => {}, errorCallback: (m) => console.warn(m) });
    const micropip = py.pyimport("micropip");
    try {
      await micropip.install.callKwargs(new URL(manifest.wheel, SITE).href, { deps: false });
    } finally {
      micropip.destroy();
    }
  } else {
    const { bytes } = await fetchWheel(manifest);
    py.unpackArchive(bytes, "wheel");
  }
}

function selfTestVersion(candidate, manifest) {
  const text = candidate(JSON.stringify({ schema: 1, op: "version", id: "selftest" }));
  const answer = JSON.parse(text);
  if (!answer.ok || answer.result.core_version !== manifest.core_version) {
    throw new Error(`self-test failed: the version op answered ${text.slice(0, 300)}; ` +
      `the build manifest expects core ${manifest.core_version}`);
  }
  return answer.result.core_version;
}

let goldenCase = null;  // the self-test case, read once (started as soon as the manifest is known)

function readGoldenCase(manifest) {
  if (!goldenCase) goldenCase = fetchChecked(new URL(manifest.selftest, SITE), "the self-test case").then((r) => r.json());
  return goldenCase;
}

async function selfTestGolden(candidate, manifest) {
  if (!manifest.selftest) return null;
  const golden = await readGoldenCase(manifest);
  const got = candidate(golden.request);
  if (got !== golden.response) {
    let i = 0;
    while (i < got.length && got[i] === golden.response[i]) i += 1;
    throw new Error(`self-test ${golden.name} differs from its golden response at character ${i}: ` +
      `got …${got.slice(Math.max(0, i - 40), i + 40)}… expected …${golden.response.slice(Math.max(0, i - 40), i + 40)}…`);
  }
  return golden.name;
}

// Imports every op's module right after "ready" (once the requests already
// queued are answered), so the first evaluate is not slowed by imports.
// Modules that fail to import are reported on the console; their ops answer
// with an error response, the others still work.
const WARM_UP = `
import importlib, json, tamis.api
_failed = []
for _module in sorted({target.split(":")[0] for target in tamis.api.OPS.values()}):
    try:
        importlib.import_module(_module)
    except Exception as exc:
        _failed.append("%s (%s: %s)" % (_module, type(exc).__name__, exc))
json.dumps(_failed)
`;

function warmUp(py) {
  const namespace = py.globals.get("dict")();
  let failed;
  try {
    failed = JSON.parse(py.runPython(WARM_UP, { globals: namespace }));
  } finally {
    namespace.destroy();
  }
  for (const line of failed) console.warn(`tamis: a core module did not import: ${line}`);
  return failed;
}

function isRuntimeFailure(err) {
  // A Python exception surfaces as a PythonError; anything else (a wasm trap,
  // an out-of-memory abort, a fatal error) means the interpreter is unusable.
  return !(err && err.constructor && err.constructor.name === "PythonError");
}

/** One request's answer; throws only when the runtime itself failed (then `broken` is set). */
function handleOne(json) {
  try {
    return handle(json);
  } catch (err) {
    if (isRuntimeFailure(err)) {
      broken = `the Python runtime failed: ${err && err.message ? err.message : err}`;
      throw err;
    }
    // tamis.api.handle never raises for bad input; if Python raised anyway,
    // answer with a normal error response in the JSON contract's shape.
    const message = String(err.message || err).split("\n").filter(Boolean).pop() || "Python error";
    return JSON.stringify({
      schema: 1, id: null, ok: false,
      error: { code: "worker_exception", message: `The Python core raised: ${message}`, field: "" },
    });
  }
}

function answer(n, json, batch = false) {
  if (!broken) {
    try {
      post({ type: "response", n, json: batch ? json.map(handleOne) : handleOne(json) });
      return;
    } catch {
      post({ type: "fatal", error: broken });
    }
  }
  post({ type: "response", n, json: null, fatal: broken });
}

self.addEventListener("message", (event) => {
  const msg = event.data;
  if (!msg || (msg.type !== "request" && msg.type !== "batch")) return;
  const item = { n: msg.n, json: msg.type === "batch" ? msg.jsons : msg.json, batch: msg.type === "batch" };
  lastRequestAt = performance.now();
  if (handle || broken) answer(item.n, item.json, item.batch);
  else queue.push(item);
});

// ---- downloads: each file of the build once, with the bytes counted -------------------------------
// The runtime files go through self.tamisFetchOnce (src/fetch_once.js) into the
// service worker's cache for this build ("tamis-" + version): on a first visit
// the precache and this boot share one download of each file (whoever starts it,
// the other waits for it), and a boot of a page the service worker does not
// control (a forced reload) still reads them from the cache. The boot's progress
// follows the bytes received of these files, whoever downloads them.
const BOOT_FILES = ["vendor/pyodide/pyodide.asm.mjs", "vendor/pyodide/pyodide.asm.wasm", "vendor/pyodide/python_stdlib.zip"];
let filesByPath = null;   // manifest path -> entry, once the manifest is read
const routed = new Set();  // the paths answered through fetchOnce: BOOT_FILES and the tamis wheel
let cacheName = null;
const started = new Map(); // path -> Promise<Response> started ahead of the runtime's own request
const received = new Map(); // boot file path -> bytes received (its size once it is at hand)
let onReceived = () => {};
let bootPct = 0.02;        // progress of the "runtime" stage so far (never goes back)

function noteBytes(path, bytes) {
  if (!received.has(path)) return;
  received.set(path, Math.max(received.get(path), bytes));
  onReceived();
}

if (typeof BroadcastChannel === "function") {
  // bytes the service worker's precache receives of a file this boot waits for
  new BroadcastChannel(self.tamisDownloadChannel).onmessage = (event) => {
    const m = event.data || {};
    if (m.type === "bytes" && m.cache === cacheName) noteBytes(m.path, m.received);
  };
}

function fetchOnce(path, nativeFetch) {
  const file = filesByPath.get(path);
  return self.tamisFetchOnce(new URL(path, SITE).href, file, cacheName, {
    fetchImpl: nativeFetch,
    onBytes: (bytes) => noteBytes(path, bytes),
    onCacheError: (err) => { console.warn(`tamis: the offline cache cannot be used (${err.message}); downloading`); return true; },
  }).then((response) => { if (response.ok) noteBytes(path, file.size); return response; });
}

// The Python code run before a memory snapshot is taken (role=snapshot): every tamis module that imports
// here is imported (the office-only ones, e.g. those needing multiprocessing, do not, and are not needed:
// they fail the same way in a plain boot), so a restored boot imports nothing; then the garbage is collected.
// Only strings pass between JavaScript and Python here, so the snapshot holds no JavaScript object.
// The emulated file system is not in a snapshot either: the wheel's files that a restored boot may still
// read (package data such as the demo records, the metadata, the code of modules not imported) are kept
// in the snapshot as bytes (module _tamis_boot), to be written back after a restore (AFTER_RESTORE).
const BEFORE_SNAPSHOT = `
import gc, importlib, os, pkgutil, sys, types, tamis
_skipped = []
for _info in sorted(pkgutil.walk_packages(tamis.__path__, "tamis.", onerror=_skipped.append), key=lambda m: m.name):
    if _info.name != "tamis.__main__":
        try:
            importlib.import_module(_info.name)
        except Exception:
            _skipped.append(_info.name)

def _module_of(rel):
    parts = rel.split("/")
    if not parts[-1].endswith((".py", ".pyc")):
        return None
    if parts[-2:-1] == ["__pycache__"]:
        parts = parts[:-2] + [parts[-1].split(".")[0]]
    else:
        parts[-1] = parts[-1].rsplit(".", 1)[0]
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)

_site = os.path.dirname(os.path.dirname(tamis.__file__))
_files = {}
for _top in sorted(os.listdir(_site)):
    if _top != "tamis" and not (_top.startswith("tamis-") and _top.endswith(".dist-info")):
        continue
    for _dir, _subdirs, _names in os.walk(os.path.join(_site, _top)):
        for _name in _names:
            _rel = os.path.relpath(os.path.join(_dir, _name), _site).replace(os.sep, "/")
            if _rel.startswith("tamis/") and _module_of(_rel) in sys.modules:
                continue
            with open(os.path.join(_dir, _name), "rb") as _fh:
                _files[_rel] = _fh.read()
_boot = types.ModuleType("_tamis_boot")
_boot.site = _site
_boot.files = _files
sys.modules["_tamis_boot"] = _boot
del _info, _skipped, _module_of, _site, _files, _top, _dir, _subdirs, _names, _name, _rel, _fh, _boot
gc.collect()
`;

// After a restore: randomness is reseeded (a snapshot freezes the random module's state, so every boot
// would repeat one sequence), and the emulated file system, which is new, gets back the wheel's files kept
// in the snapshot (BEFORE_SNAPSHOT), so package data and any module not imported before the snapshot are
// found on disk as after a plain boot.
const AFTER_RESTORE = `
import os, random, sys
random.seed()
_boot = sys.modules.pop("_tamis_boot")
for _rel, _data in _boot.files.items():
    _path = os.path.join(_boot.site, *_rel.split("/"))
    os.makedirs(os.path.dirname(_path), exist_ok=True)
    with open(_path, "wb") as _fh:
        _fh.write(_data)
del _boot, _rel, _data, _path, _fh
`;

async function boot() {
  // loadPyodide fetches the wasm runtime and the stdlib zip in parallel; once
  // both have arrived, CPython starts and imports its modules from the zip.
  const pending = new Set(["pyodide.asm.wasm", "python_stdlib.zip"]);
  // Pyodide does not always reject when a runtime file is missing (a failed
  // wasm compile leaves loadPyodide pending), so a failed download of a file
  // listed in the build manifest ends the boot at once, loudly.
  let abortBoot;
  const aborted = new Promise((_, reject) => { abortBoot = reject; });
  const { nativeFetch } = prepareFetchGuard(self, SITE.origin, {
    // A file of the build (once the manifest is read): one shared download, see fetchOnce.
    route(url) {
      const path = url.pathname.slice(SITE.pathname.length);
      if (!routed.has(path) || url.search) return null;
      const ahead = started.get(path);
      started.delete(path);
      return ahead || fetchOnce(path, nativeFetch);
    },
    onFailed(url, why) {
      const path = url.pathname.slice(SITE.pathname.length);
      if (handle || broken) return;  // after boot, a failed fetch is the caller's business
      broken = `${path} could not be loaded`;
      abortBoot(new Error(`${path} could not be loaded (${why}): the app's files on this device are ` +
        "incomplete; open the app once with the network on, or rebuild it (make build)"));
    },
    onFetched(url) {
      const name = url.pathname.split("/").pop();
      if (!pending.delete(name)) return;
      mark(`${name}_fetched_ms`);
      if (pending.size === 0) status("stdlib", "starting Python from its standard library", 0.4);
      else status("runtime", `loaded ${name}`, bootPct = Math.max(bootPct, 0.25));
    },
  });
  status("runtime", "loading the Python runtime", 0.02);
  // The stored snapshot (if any) is read from Cache Storage from now on, while the manifest and the
  // runtime's scripts load; whether it can be used is decided once the manifest is read.
  const snapshotAhead = ROLE === "main" && !SNAPSHOT_OFF ? snapshots.readAhead(SITE) : null;
  const [manifest, pyodideModule] = await Promise.race([aborted, Promise.all([
    loadManifest(),
    import(new URL("pyodide.mjs", PYODIDE_DIR).href).catch((err) => {
      throw new Error(`the Python runtime (vendor/pyodide/pyodide.mjs) could not be loaded: ${err.message}; ` +
        "rebuild the app (make build)");
    }),
  ])]);
  mark("manifest_ms");
  if (manifest.selftest) readGoldenCase(manifest).catch(() => {});  // a failure is reported by the self-test
  filesByPath = new Map(manifest.files.map((f) => [f.path, f]));
  cacheName = `tamis-${manifest.version}`;
  const key = snapshots.snapshotKey(manifest);
  // The stored snapshot's headers are looked up now; its body is read while the runtime loads.
  const lookedUp = snapshotAhead && manifest.pyodide_build_id
    ? snapshots.lookUp(SITE, key, snapshotAhead) : Promise.resolve({ found: false, reason: SNAPSHOT_OFF ? "disabled" : "unsupported" });
  const boots = CONTROLLED ? [] : BOOT_FILES.filter((p) => filesByPath.has(p));
  for (const p of CONTROLLED ? [] : [...boots, manifest.wheel]) if (filesByPath.has(p)) routed.add(p);
  const bootBytes = boots.reduce((sum, p) => sum + filesByPath.get(p).size, 0) || 1;
  for (const p of boots) received.set(p, 0);
  let lastGot = 0;
  onReceived = () => {
    if (!pending.size || broken) return;  // the stage moved on
    const got = [...received.values()].reduce((a, b) => a + b, 0);
    const pct = 0.02 + 0.36 * (got / bootBytes);
    if (got === lastGot || (pct < bootPct + 0.005 && got < bootBytes)) return;
    lastGot = got;
    bootPct = Math.max(bootPct, pct);
    status("runtime", `downloading the Python runtime: ${(got / 1e6).toFixed(1)} of ${(bootBytes / 1e6).toFixed(1)} MB`, pct,
      { bytes: got, total_bytes: bootBytes });
  };
  // All three downloads start now; the runtime's own requests for the wasm file and the stdlib pick up
  // theirs, and pyodide.asm.mjs (a module import, which no fetch wrapper sees) is in the cache before it is
  // imported, so the import is answered by the HTTP cache or a 304.
  for (const p of boots) {
    const ahead = fetchOnce(p, nativeFetch);
    ahead.catch(() => {});  // a failure is reported where the runtime asks for the file
    started.set(p, ahead);
  }
  const asmMjs = started.get("vendor/pyodide/pyodide.asm.mjs");
  started.delete("vendor/pyodide/pyodide.asm.mjs");
  if (asmMjs) {
    const response = await Promise.race([aborted, asmMjs]);
    if (!response.ok) throw new Error(`vendor/pyodide/pyodide.asm.mjs could not be loaded (HTTP ${response.status}); rebuild the app (make build)`);
  }
  const startPython = (extra = {}) => Promise.race([aborted, pyodideModule.loadPyodide({
    indexURL: PYODIDE_DIR.href,
    lockFileURL: new URL("pyodide-lock.json", PYODIDE_DIR).href,
    packageBaseUrl: PYODIDE_DIR.href,
    ...(ROLE === "snapshot" ? {} : {  // the snapshot must hold no JavaScript function of this worker
      stdout: () => {},
      stderr: (line) => console.warn("python:", line),
    }),
    ...extra,
  })]);

  if (ROLE === "snapshot") return makeSnapshot(manifest, key, startPython);

  // ---- the snapshot boot, when this device holds a usable snapshot of this build ----
  const found = await lookedUp;
  mark("snapshot_looked_up_ms");
  let fallback = found.found ? null : found.reason;
  let fallbackDetail = found.found ? null : found.detail || null;
  let py = null;
  let candidate = null;
  let coreVersion = null;
  let goldenName = null;
  let bootPath = "plain";
  const refuse = async (detail) => {
    fallback = "refused";
    fallbackDetail = detail;
    console.info(`tamis: the saved Python state was refused (${detail}); starting plainly`);
    await snapshots.discard(SITE);
    const state = await snapshots.readState(SITE);
    await snapshots.writeState(SITE, { key, refused: (state.key === key ? state.refused || 0 : 0) + 1 });
  };
  if (found.found && SNAPSHOT_DISCARD) {
    await refuse("the restore did not reach ready in time; the page restarted the worker");
  } else if (found.found && found.buildId !== manifest.pyodide_build_id) {
    // made by another runtime build: Pyodide would only find out after instantiating the wasm
    await snapshots.discard(SITE);
    fallback = "stale";
    fallbackDetail = `snapshot of runtime ${found.buildId}, this runtime is ${manifest.pyodide_build_id}`;
  } else if (found.found) {
    status("core", "restoring the saved Python state", 0.5, { restoring: true });
    try {
      const bytes = found.body().then((snapshot) => {
        mark("snapshot_read_ms");
        if (snapshots.headerBuildId(snapshot) !== manifest.pyodide_build_id) {
          throw new Error("the snapshot's header names another runtime build");
        }
        return snapshot;
      });
      bytes.catch(() => {});
      py = await startPython({ _loadSnapshot: bytes });
      py._api.config._loadSnapshot = null;  // else the whole snapshot stays referenced
      mark("python_started_ms");
      const namespace = py.globals.get("dict")();
      try {
        py.runPython(AFTER_RESTORE, { globals: namespace });
      } finally {
        namespace.destroy();
      }
      candidate = py.pyimport("tamis.api").handle;
      mark("core_installed_ms");
      status("selftest", "checking the core", 0.9);
      coreVersion = selfTestVersion(candidate, manifest);
      goldenName = await selfTestGolden(candidate, manifest);
      bootPath = "snapshot";
    } catch (err) {
      if (broken) throw err;  // a runtime file is missing: a plain boot would fail the same way
      py = null;
      candidate = null;
      await refuse(String(err && err.message ? err.message : err).slice(0, 300));
      for (const k of Object.keys(timings)) if (k !== "manifest_ms" && !k.endsWith("_fetched_ms")) delete timings[k];
    }
  }

  // ---- the plain boot: start CPython, install the wheel ----
  if (!py) {
    py = await startPython();
    mark("python_started_ms");
    status("core", `installing the tamis core (${INSTALL_MODE})`, 0.7);
    await Promise.race([aborted, installCore(py, manifest)]);
    candidate = py.pyimport("tamis.api").handle;
    mark("core_installed_ms");
    status("selftest", "checking the core", 0.9);
    coreVersion = selfTestVersion(candidate, manifest);
    goldenName = await selfTestGolden(candidate, manifest);
  }
  handle = candidate;  // requests are answered only once the self-test passed
  mark("selftest_ms");
  timings.total_ms = timings.selftest_ms;
  post({
    type: "status", stage: "ready", progress: 1, ready: true, error: null,
    detail: `Pyodide ${py.version} ready${bootPath === "snapshot" ? " (from its saved state)" : ""}, ` +
      `tamis core ${coreVersion}` + (goldenName ? `, self-test ${goldenName} passed` : ""),
    timings, install: bootPath === "snapshot" ? "snapshot" : INSTALL_MODE, core_version: coreVersion,
    build_version: manifest.version, worker_time_origin: performance.timeOrigin, worker_script_ms: Math.round(t0),
    boot: bootPath, snapshot_fallback: fallback, snapshot_fallback_detail: fallbackDetail,
  });
  while (queue.length) {
    const msg = queue.shift();
    answer(msg.n, msg.json, msg.batch);
  }
  setTimeout(() => {
    try {
      warmUp(py);
    } catch (err) {
      console.warn(`tamis: warming up the core failed: ${err && err.message ? err.message : err}`);
    }
    if (bootPath === "plain" && !SNAPSHOT_OFF && manifest.pyodide_build_id) makeSnapshotLater(key);
  }, 0);
}

// ---- making the snapshot (after a plain boot), in a second, short-lived worker ----------------------
// Messages to the page: {type: "snapshot", state: "waiting"|"making"|"saved"|"failed"|"skipped", reason?,
// detail?, stored_bytes?, raw_bytes?, ms?}. Nothing of it is shown to the user: a snapshot that cannot be
// made or kept only means the next boot is plain again.
const IDLE_BEFORE_MAKING_MS = 1000;  // no request for this long before the second worker starts

function tellSnapshot(state, extra = {}) {
  post({ type: "snapshot", state, ...extra });
}

async function makeSnapshotLater(key) {
  if (typeof Worker !== "function") { tellSnapshot("skipped", { reason: "no nested workers here" }); return; }
  const state = await snapshots.readState(SITE);
  if (state.key === key && state.refused >= 2) {
    tellSnapshot("skipped", { reason: "refused twice on this device for this build" });
    return;
  }
  tellSnapshot("waiting");
  while (performance.now() - lastRequestAt < IDLE_BEFORE_MAKING_MS) {
    await new Promise((resolve) => setTimeout(resolve, IDLE_BEFORE_MAKING_MS - (performance.now() - lastRequestAt) + 10));
  }
  const run = async () => {
    const again = await snapshots.lookUp(SITE, key);  // another tab may have made it meanwhile
    if (again.found) { tellSnapshot("saved", { reason: "made by another page", stored_bytes: again.storedBytes }); return; }
    tellSnapshot("making");
    const url = new URL(import.meta.url);
    url.searchParams.set("role", "snapshot");
    url.searchParams.delete("sw");  // whether a service worker controls it or not, it reads this build's cache
    const maker = new Worker(url, { type: "module", name: "tamis-snapshot" });
    const outcome = await new Promise((resolve) => {
      maker.addEventListener("message", (event) => {
        const m = event.data || {};
        if (m.type === "snapshot") resolve(m);
      });
      maker.addEventListener("error", (event) => {
        event.preventDefault();
        resolve({ type: "snapshot", state: "failed", reason: "worker", detail: event.message || "the snapshot worker failed" });
      });
    });
    maker.terminate();
    post(outcome);
  };
  try {
    const locks = self.navigator && navigator.locks;
    if (locks) {
      await locks.request("tamis-snapshot-make", { ifAvailable: true }, (lock) =>
        lock ? run() : tellSnapshot("skipped", { reason: "another page is making it" }));
    } else {
      await run();
    }
  } catch (err) {
    tellSnapshot("failed", { reason: "worker", detail: String(err && err.message ? err.message : err) });
  }
}

// role=snapshot: boots with _makeSnapshot, installs the wheel, imports every module, runs the same
// self-test (strings only), then stores makeMemorySnapshot() under `key`.
async function makeSnapshot(manifest, key, startPython) {
  const t = performance.now();
  let reason = "boot";
  try {
    const py = await startPython({ _makeSnapshot: true });
    const { bytes: wheel } = await fetchWheel(manifest);
    py.unpackArchive(wheel, "wheel");
    reason = "import";
    py.runPython(BEFORE_SNAPSHOT);
    reason = "selftest";
    const candidate = py.pyimport("tamis.api").handle;
    try {
      selfTestVersion(candidate, manifest);
      await selfTestGolden(candidate, manifest);
    } finally {
      candidate.destroy();
    }
    py.runPython("import gc; gc.collect()");
    reason = "snapshot";
    const snapshot = py.makeMemorySnapshot();
    if (snapshots.headerBuildId(snapshot) !== manifest.pyodide_build_id) {
      throw new Error("the snapshot's header names another runtime build than the manifest");
    }
    reason = "storage";
    const stored = await snapshots.store(SITE, key, snapshot).catch((err) => {
      if (err && err.name === "QuotaExceededError") reason = "quota";
      throw err;
    });
    tellSnapshot("saved", { stored_bytes: stored, raw_bytes: snapshot.byteLength, ms: Math.round(performance.now() - t) });
  } catch (err) {
    tellSnapshot("failed", { reason, detail: String(err && err.message ? err.message : err).trim().split("\n").pop().slice(0, 300),
      ms: Math.round(performance.now() - t) });
  }
}

boot().catch((err) => {
  broken = String(err && err.message ? err.message : err);
  if (ROLE === "snapshot") { tellSnapshot("failed", { reason: "boot", detail: broken }); return; }
  post({ type: "status", stage: "failed", detail: broken, progress: 0, ready: false, error: broken });
  post({ type: "fatal", error: broken });
  while (queue.length) answer(queue.shift().n, null);
});
