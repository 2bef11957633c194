// e2e only: the error collector of a worker scope (the Python worker imports
// it as a module through worker_entry.js; the service worker imports it as a
// classic script through the e2e vendor/build.js). No import or export, so it
// is valid as both. Errors go to the page on a BroadcastChannel (errors.js).
(function () {
  const where = typeof ServiceWorkerGlobalScope !== "undefined" && self instanceof ServiceWorkerGlobalScope
    ? "service worker" : "worker";
  const channel = new BroadcastChannel("tamis-e2e-errors");
  const describe = (v) => (v instanceof Error ? `${v.name}: ${v.message}` : typeof v === "string" ? v : String(v));
  const send = (text) => { try { channel.postMessage({ where, text }); } catch (err) { /* nothing to tell it to */ } };
  self.addEventListener("error", (e) => send(`uncaught ${e.message || describe(e.error)}`));
  self.addEventListener("unhandledrejection", (e) => send(`unhandled rejection: ${describe(e.reason)}`));
  const consoleError = console.error;
  console.error = function (...args) {
    send(`console.error: ${args.map(describe).join(" ")}`);
    return consoleError.apply(this, args);
  };
})();
