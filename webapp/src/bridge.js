// The one bridge between the page and the Python worker.
//
//   call(op, fields, {key})  -> Promise<response object>   (the tamis.api JSON contract)
//   callJSON(text, {key})    -> Promise<response string>   (the exact string tamis.api.handle returned)
//   callBatch(texts)         -> Promise<response strings>  (many requests in one message, answered in order)
//   onStatus(cb)             -> unsubscribe function; cb({stage, detail, progress, ready, error, ...})
//   whenReady()              -> Promise<ready status>; rejects if the worker cannot boot
//   startWorker()            -> starts the worker now (src/boot.js, before the screens' modules load)
//   onSnapshot(cb)           -> unsubscribe function; cb({state, reason, ...}) as the worker makes its memory
//                               snapshot in the background (docs/webapp.md "Boot paths"); shown to nobody
//
// A newer call with the same key supersedes an older one: the older promise
// resolves with {superseded: true}, and if it has not reached the worker yet it
// is never sent. The worker is never terminated to cancel (Pyodide boots slowly).
// Requests go to the worker one at a time, so a burst of edits costs one
// computation for the last edit, not one per keystroke.
//
// If the runtime itself fails (the files are missing, a wasm trap), pending and
// later calls reject with an Error whose message says so; status.error is set.

const WORKER_URL = new URL("./worker/worker.js", import.meta.url);

let worker = null;
let nextN = 1;
let status = { stage: "idle", detail: "the Python worker has not started", progress: 0, ready: false, error: null };
const listeners = new Set();
const waiting = [];        // jobs not yet sent to the worker
let inFlight = null;       // the job the worker is computing
const latestByKey = new Map();
const snapshotListeners = new Set();
let snapshotState = null;
// A snapshot boot that has not reached ready this long after its restore began is taken for hung (a damaged
// snapshot that loops instead of failing): the worker is replaced by one that refuses the snapshot and boots
// plainly (docs/webapp.md "Boot paths"). Requests wait in the bridge until ready, so none is lost.
// ?snapshot_restore_limit_ms=N on the page URL sets another limit (the e2e test of this path).
const RESTORE_LIMIT_MS = Number(new URLSearchParams(self.location.search).get("snapshot_restore_limit_ms")) || 15000;
let restoreTimer = null;
let restoredOnce = false;

/** Calls each listener of `set` with `value`; a listener that throws is logged, the others still run. */
function notify(set, value) {
  for (const cb of set) {
    try { cb(value); } catch (err) { console.error(err); }
  }
}

function setStatus(next) {
  status = { ...next };
  notify(listeners, status);
}

function fail(message) {
  setStatus({ stage: "failed", detail: message, progress: status.progress, ready: false, error: message });
  const jobs = inFlight ? [inFlight, ...waiting] : [...waiting];
  inFlight = null;
  waiting.length = 0;
  for (const job of jobs) job.reject(new Error(message));
}

function pump() {
  if (inFlight || !status.ready || !waiting.length) return;
  inFlight = waiting.shift();
  if (inFlight.batch) worker.postMessage({ type: "batch", n: inFlight.n, jsons: inFlight.json });
  else worker.postMessage({ type: "request", n: inFlight.n, json: inFlight.json });
}

function onMessage(event) {
  if (event.target !== worker) return;  // a worker replaced after a hung restore
  const msg = event.data || {};
  if (msg.type === "status") {
    if (status.error) return;  // a failed boot stays failed
    if (msg.restoring && !restoreTimer && !restoredOnce) {
      restoreTimer = setTimeout(() => {
        restoreTimer = null;
        restoredOnce = true;
        console.info(`tamis: the saved Python state did not reach ready in ${RESTORE_LIMIT_MS} ms; restarting plainly`);
        worker.terminate();
        worker = null;
        start("discard");
      }, RESTORE_LIMIT_MS);
    }
    if ((msg.ready || msg.error) && restoreTimer) {
      clearTimeout(restoreTimer);
      restoreTimer = null;
    }
    if (msg.error) fail(msg.error);
    else setStatus(msg);
    pump();
  } else if (msg.type === "response") {
    const job = inFlight && inFlight.n === msg.n ? inFlight : null;
    inFlight = null;
    if (job) {
      if (job.key !== undefined && latestByKey.get(job.key) === job.n) latestByKey.delete(job.key);
      if (msg.json === null) job.reject(new Error(msg.fatal || "the Python worker failed"));
      else if (!job.superseded) job.resolve(msg.json);
    }
    pump();
  } else if (msg.type === "fatal") {
    fail(msg.error);
  } else if (msg.type === "snapshot") {
    snapshotState = { ...msg };
    for (const cb of snapshotListeners) notify([cb], { ...snapshotState });
  }
}

function start(snapshotMode = null) {
  if (worker) return;
  const pageInstall = new URLSearchParams(self.location.search).get("install");
  const url = new URL(WORKER_URL);
  if (pageInstall === "micropip" || pageInstall === "unpack") url.searchParams.set("install", pageInstall);
  if (new URLSearchParams(self.location.search).get("snapshot") === "off") url.searchParams.set("snapshot", "off");
  else if (snapshotMode) url.searchParams.set("snapshot", snapshotMode);
  // A page a service worker controls: the worker's fetches go through it (its cache, and the browser's
  // compiled-code cache of the wasm runtime served from there), so the worker routes nothing itself.
  if (self.navigator && navigator.serviceWorker && navigator.serviceWorker.controller) url.searchParams.set("sw", "1");
  setStatus({ stage: "starting", detail: "starting the Python worker", progress: 0, ready: false, error: null });
  try {
    worker = new Worker(url, { type: "module", name: "tamis-python" });
  } catch (err) {
    fail(`the Python worker could not start: ${err.message}`);
    return;
  }
  worker.addEventListener("message", onMessage);
  worker.addEventListener("error", (event) => {
    event.preventDefault();
    if (event.target !== worker) return;
    fail(`the Python worker script failed to load${event.message ? `: ${event.message}` : ""}; ` +
      "the app's files may be missing (rebuild with make build)");
  });
  worker.addEventListener("messageerror", () => fail("the Python worker sent a message that could not be read"));
}

/** Start the Python worker now (every other export starts it on first use too). */
export function startWorker() {
  start();
}

/** Send one request string; resolves with the response string (or {superseded: true}). */
export function callJSON(json, { key, batch = false } = {}) {
  start();
  if (status.error) return Promise.reject(new Error(status.error));
  return new Promise((resolve, reject) => {
    const job = { n: nextN++, json, key, batch, resolve, reject, superseded: false };
    if (key !== undefined && key !== null) {
      const olderN = latestByKey.get(key);
      if (olderN !== undefined) supersede(olderN);
      latestByKey.set(key, job.n);
    }
    waiting.push(job);
    pump();
  });
}

function supersede(n) {
  const i = waiting.findIndex((job) => job.n === n);
  const job = i >= 0 ? waiting.splice(i, 1)[0] : inFlight && inFlight.n === n ? inFlight : null;
  if (!job) return;
  job.superseded = true;
  job.resolve({ superseded: true });
}

/**
 * Send many request strings in one message: the worker answers them in order,
 * one after the other, in one reply (an array of response strings). Other
 * calls wait until the whole batch is answered, so keep batches short.
 */
export function callBatch(jsons) {
  return jsons.length ? callJSON(jsons, { batch: true }) : Promise.resolve([]);
}

/** Send {"schema": 1, "op": op, "id": n, ...fields}; resolves with the parsed response. */
export async function call(op, fields = {}, { key } = {}) {
  start();
  const n = nextN;  // the id the request will carry, unless fields override it
  const text = await callJSON(JSON.stringify({ schema: 1, op, id: n, ...fields }), { key });
  return typeof text === "string" ? JSON.parse(text) : text;
}

/** Subscribe to boot stages; cb is called at once with the current status. Returns an unsubscribe function. */
export function onStatus(cb) {
  listeners.add(cb);
  start();
  notify([cb], status);
  return () => listeners.delete(cb);
}

/** Resolves with the ready status once the self-test passed; rejects if the worker cannot boot. */
export function whenReady() {
  start();
  return new Promise((resolve, reject) => {
    const check = (s) => {
      if (s.ready) { off(); resolve(s); } else if (s.error) { off(); reject(new Error(s.error)); }
    };
    const off = onStatus((s) => queueMicrotask(() => check(s)));
  });
}

/** Subscribe to the background memory snapshot's progress; cb is called at once if there is news. */
export function onSnapshot(cb) {
  snapshotListeners.add(cb);
  start();
  if (snapshotState) notify([cb], { ...snapshotState });
  return () => snapshotListeners.delete(cb);
}

/** The current status (a copy). */
export function currentStatus() {
  return { ...status };
}
