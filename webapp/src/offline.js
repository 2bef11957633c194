// Offline support for the page: registers the service worker (../sw.js), reports
// whether the whole site is saved on this device, and tells the page when a new
// version is waiting so the user chooses when to switch.
//
//   startOffline({onState, onUpdate}) -> {ready: Promise<registration|null>, checkForUpdate(), state()}
//   onState({precached, total, done, error, version, updating, bytes, total_bytes})
//       bytes: received so far (files done and parts of those downloading), null when unknown
//       precached is true only once the active worker's cache holds every file
//       of its build manifest (checked file by file by the worker).
//   onUpdate(applyFn)
//       a new version finished precaching and waits; applyFn() activates it and
//       reloads the page. Save what the user typed before calling it.

const SW_URL = new URL("../sw.js", import.meta.url);

export function startOffline({ onState = () => {}, onUpdate = () => {} } = {}) {
  let state = { precached: false, total: 0, done: 0, error: null, version: null, updating: false, bytes: null,
    total_bytes: null };
  let offeredWorker = null;
  let applying = false;

  const emit = (patch) => {
    state = { ...state, ...patch };
    try { onState({ ...state }); } catch (err) { console.error(err); }
  };

  if (!("serviceWorker" in navigator)) {
    emit({ error: "this browser cannot keep the app for offline use (no service worker support)" });
    return { ready: Promise.resolve(null), checkForUpdate: async () => false, state: () => ({ ...state }) };
  }
  const sw = navigator.serviceWorker;

  sw.addEventListener("message", (event) => {
    const msg = event.data || {};
    if (msg.type !== "tamis-precache") return;
    if (aboutThisPage(event.source)) {
      emit({ precached: Boolean(msg.complete), total: msg.total, done: msg.done, error: msg.error || null,
        version: msg.version, updating: false, bytes: msg.bytes ?? null, total_bytes: msg.total_bytes ?? null });
    } else {
      // A new version installing beside the active one: the current version
      // stays available offline meanwhile.
      emit({ updating: !msg.complete && !msg.error, error: msg.error || state.error });
    }
  });

  sw.addEventListener("controllerchange", () => {
    if (applying) window.location.reload();
    else askStatus();
  });

  let registered = null;
  // A message is about the version this page runs on when it comes from the
  // controlling worker; with no controller (first visit, or a forced reload that
  // bypassed it), from the active worker, or from the first worker installing
  // while there is no active one. Any other worker is a new version installing.
  // The worker itself cannot tell: Firefox has no `self.serviceWorker` inside a
  // service worker, so a worker cannot compare itself with registration.active;
  // the page compares `event.source` with its own controller, which holds in
  // Chromium, Firefox and WebKit (e2e/engines).
  function aboutThisPage(source) {
    if (sw.controller) return source === sw.controller;
    const active = registered && registered.active;
    return !active || source === active;
  }

  function askStatus() {
    // The controlling worker, or the active one when a forced reload bypassed it.
    const target = sw.controller || (registered && registered.active);
    if (target) target.postMessage({ type: "tamis-status" });
  }

  function offer(registration) {
    const waiting = registration.waiting;
    if (!waiting || !sw.controller || waiting === offeredWorker) return;
    offeredWorker = waiting;
    onUpdate(() => {
      applying = true;
      waiting.postMessage({ type: "tamis-skip-waiting" });
    });
  }

  function watch(registration) {
    offer(registration);
    registration.addEventListener("updatefound", () => {
      const installing = registration.installing;
      if (!installing) return;
      installing.addEventListener("statechange", () => {
        if (installing.state === "installed") offer(registration);
        if (installing.state === "activated" && !state.precached) askStatus();
        if (installing.state === "redundant" && !registration.waiting && !registration.active) {
          // The worker's own message names the file that failed; it may arrive
          // just after this event, so the generic text waits for it briefly.
          setTimeout(() => {
            if (!state.error) emit({ precached: false, error: "saving the app for offline use failed" });
          }, 1000);
        }
      });
    });
  }

  const ready = sw.register(SW_URL, { updateViaCache: "none" }).then((registration) => {
    registered = registration;
    watch(registration);
    askStatus();
    return registration;
  }).catch((err) => {
    emit({ precached: false, error: `the offline service worker could not be registered: ${err.message}` });
    return null;
  });

  async function checkForUpdate() {
    const registration = await ready;
    if (!registration) return false;
    try {
      await registration.update();
    } catch (err) {
      return false;  // offline: nothing to compare against
    }
    offer(registration);
    return Boolean(registration.installing || registration.waiting);
  }

  return { ready, checkForUpdate, state: () => ({ ...state }) };
}
