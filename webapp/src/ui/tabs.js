// Tabs of the app on one device tell each other which record they have open
// and when they save it (a BroadcastChannel; docs/records.md, "Saving in the
// app"). Nothing here decides a save: the revision check in saveRecord does.
const CHANNEL = "tamis-records";

let channel = null;
function chan() {
  if (!channel && typeof BroadcastChannel === "function") channel = new BroadcastChannel(CHANNEL);
  return channel;
}

/**
 * Watch record `id` (a record_id, or "new:<id>" for an unsaved test) from tab `tab`.
 * onPeers(n): how many other tabs have it open; onSaved(msg): another tab saved
 * it ({rev, by, fields}). Returns {saved(record, fields), close()}.
 */
export function watchRecord(id, tab, { onPeers = () => {}, onSaved = () => {} } = {}) {
  const c = chan();
  const peers = new Set();
  const post = (msg) => { try { c?.postMessage({ ...msg, id, tab }); } catch { /* channel closed */ } };
  const listener = (ev) => {
    const m = ev.data || {};
    if (m.id !== id || m.tab === tab) return;
    if (m.type === "open" || m.type === "here") {
      const fresh = !peers.has(m.tab);
      peers.add(m.tab);
      if (m.type === "open") post({ type: "here" });
      if (fresh) onPeers(peers.size);
    } else if (m.type === "closed") {
      if (peers.delete(m.tab)) onPeers(peers.size);
    } else if (m.type === "saved") {
      peers.add(m.tab);
      onSaved(m);
    }
  };
  c?.addEventListener("message", listener);
  const onHide = () => post({ type: "closed" });
  window.addEventListener("pagehide", onHide);
  post({ type: "open" });
  return {
    saved(record, fields = []) { post({ type: "saved", rev: record.rev, by: record.updated_by || "", fields }); },
    close() {
      post({ type: "closed" });
      c?.removeEventListener("message", listener);
      window.removeEventListener("pagehide", onHide);
    },
  };
}
