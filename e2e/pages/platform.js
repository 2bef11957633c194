// Test page of the e2e suite: exposes the bridge and the offline state to
// Playwright as window.tamisTest. The page itself computes nothing.
import * as bridge from "/src/bridge.js";
import { startOffline } from "/src/offline.js";

const statuses = [];
const offlineStates = [];
const violations = [];
const snapshots = [];
let applyUpdate = null;

document.addEventListener("securitypolicyviolation", (e) => {
  violations.push({ directive: e.violatedDirective, blocked: e.blockedURI, source: e.sourceFile });
});

bridge.onStatus((s) => {
  statuses.push({ ...s, at_ms: performance.now() });
  document.getElementById("py-status").textContent = s.error ? `failed: ${s.error}` : `${s.stage}: ${s.detail}`;
});

// (a bridge from before the snapshot boot, e.g. a benchmark's baseline build, has no onSnapshot)
if (bridge.onSnapshot) bridge.onSnapshot((s) => snapshots.push({ ...s, at_ms: performance.now() }));

const offline = startOffline({
  onState(s) {
    offlineStates.push({ ...s, at_ms: performance.now() });
    document.getElementById("offline-status").textContent =
      s.error ? `error: ${s.error}` : s.precached ? `ready offline (${s.version})` : `saving ${s.done}/${s.total}`;
  },
  onUpdate(apply) {
    applyUpdate = apply;
    document.getElementById("update-notice").hidden = false;
  },
});

document.getElementById("apply-update").addEventListener("click", () => applyUpdate && applyUpdate());

window.tamisTest = {
  bridge,
  offline,
  statuses,
  offlineStates,
  violations,
  snapshots,
  get updateOffered() { return applyUpdate !== null; },
};
