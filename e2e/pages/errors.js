// e2e only (served at /__e2e__/, never part of the app). The engine suite puts
// this classic script first in index.html. It gathers, into the page, the
// errors of the page, of the Python worker and of the service worker, because
// WebKit's driver has no console: window.tamisE2E.errors, one line each.
// It also notes when the app says its calculator is ready and when it says
// "ready offline" (ms since navigation start): window.tamisE2E.marks.
(function () {
  const errors = [];
  const marks = {};
  const describe = (v) => {
    if (v instanceof Error) return `${v.name}: ${v.message}`;
    if (typeof v === "string") return v;
    try { return JSON.stringify(v); } catch (err) { return String(v); }
  };
  const add = (where, text) => { errors.push(`${where}: ${text}`); };

  addEventListener("error", (e) => {
    if (e.target && e.target !== window && e.target.tagName) {
      add("page", `failed to load <${e.target.tagName.toLowerCase()}> ${e.target.src || e.target.href || ""}`);
    } else {
      add("page", `uncaught ${e.message || describe(e.error)} (${e.filename || "?"}:${e.lineno || 0})`);
    }
  }, true);
  addEventListener("unhandledrejection", (e) => add("page", `unhandled rejection: ${describe(e.reason)}`));
  document.addEventListener("securitypolicyviolation",
    (e) => add("page", `CSP ${e.violatedDirective} blocked ${e.blockedURI}`));
  const consoleError = console.error;
  console.error = function (...args) {
    add("page", `console.error: ${args.map(describe).join(" ")}`);
    return consoleError.apply(this, args);
  };

  // The Python worker and the service worker load errors_scope.js, which
  // reports on this channel.
  const channel = new BroadcastChannel("tamis-e2e-errors");
  channel.onmessage = (e) => add(e.data.where, e.data.text);

  // The Python worker starts through worker_entry.js: the same module, with the
  // collector imported before it.
  const NativeWorker = window.Worker;
  function Worker(url, options) {
    const asked = new URL(url, location.href);
    const target = asked.pathname.endsWith("/src/worker/worker.js") && options && options.type === "module"
      ? new URL("/__e2e__/worker_entry.js", location.href) : asked;
    const worker = new NativeWorker(target, options);
    worker.addEventListener("error", (e) => add("worker", `uncaught ${e.message || "(the script failed to load)"}`));
    worker.addEventListener("messageerror", () => add("worker", "a message could not be deserialized"));
    return worker;
  }
  Worker.prototype = NativeWorker.prototype;
  window.Worker = Worker;

  // When the app shows its two ready states.
  const watch = () => {
    const body = document.body;
    const offline = document.getElementById("offline-status");
    if (!("core_ready_ms" in marks) && body && body.dataset.coreReady) marks.core_ready_ms = performance.now();
    if (!("offline_ready_ms" in marks) && offline && offline.dataset.state === "ready") {
      marks.offline_ready_ms = performance.now();
    }
  };
  new MutationObserver(watch).observe(document, { subtree: true, attributes: true, childList: true });

  window.tamisE2E = { errors, marks, take: () => errors.splice(0, errors.length) };
})();
