// The form being typed is kept on the device as it is typed, so a reload (an
// app update, a crash, a flat battery) never loses it. The rules are in
// docs/records.md ("Saving in the app"):
//
// - A draft belongs to one tab and one form ("new" or "edit:<record_id>"):
//   IndexedDB key `draft:<name>@<tab>`. Two tabs never write the same draft.
// - The tab's id lives in sessionStorage (it survives a reload of that tab) and
//   is held as a Web Lock while the tab lives, so a duplicated tab (which copies
//   sessionStorage) takes a new id, and a draft whose tab is gone is known to be
//   an orphan: the next tab opening that form adopts it.
// - Every write goes to sessionStorage at once (synchronous, survives a reload
//   started in the same breath) and to IndexedDB (survives closing the tab);
//   `trackDraft` flushes both on pagehide and when the page is hidden.
import { db } from "./db.js";

const TAB_KEY = "tamis-tab";
const LOCK_PREFIX = "tamis-tab:";
const PREFIX = "draft:";
const hasLocks = () => typeof navigator !== "undefined" && navigator.locks && typeof navigator.locks.request === "function";

let tabPromise = null;
let tabNow = null;

function holdTabLock(id) {
  return new Promise((resolve) => {
    navigator.locks.request(LOCK_PREFIX + id, { ifAvailable: true }, (lock) => {
      resolve(Boolean(lock));
      return lock ? new Promise(() => {}) : undefined; // held for the life of the page
    }).catch(() => resolve(false));
  });
}

async function claimTab() {
  let id = null;
  try { id = sessionStorage.getItem(TAB_KEY); } catch { /* storage off: a new id per page */ }
  if (hasLocks()) {
    // After a reload the old page may release its lock a moment late; a
    // duplicated tab's original keeps it, so that copy takes a new id.
    let held = false;
    for (let i = 0; id && !held && i < 5; i += 1) {
      held = await holdTabLock(id);
      if (!held) await new Promise((r) => setTimeout(r, 150));
    }
    if (!held) { id = crypto.randomUUID(); await holdTabLock(id); }
  } else if (!id) {
    id = crypto.randomUUID();
  }
  try { sessionStorage.setItem(TAB_KEY, id); } catch { /* ignore */ }
  tabNow = id;
  return id;
}

/** This tab's id (claimed once per page). */
export function tabId() {
  if (!tabPromise) tabPromise = claimTab();
  return tabPromise;
}

/** The IndexedDB key of this tab's draft of form `name` (after tabId() resolved). */
export function draftKey(name) {
  if (!tabNow) throw new Error("draftKey before tabId() resolved");
  return `${PREFIX}${name}@${tabNow}`;
}

const sessionKey = (name) => `tamis-draft:${name}`;
let seq = 0;
const stamp = () => ({ at: Date.now(), seq: ++seq });
const newer = (a, b) => (!a ? b : !b ? a : (a.at - b.at || a.seq - b.seq) >= 0 ? a : b);

function readSession(name) {
  try {
    const text = sessionStorage.getItem(sessionKey(name));
    return text ? JSON.parse(text) : null;
  } catch { return null; }
}

function writeSession(name, entry) {
  try { sessionStorage.setItem(sessionKey(name), JSON.stringify(entry)); } catch { /* full or off: IndexedDB still has it */ }
}

async function liveTabs() {
  if (!hasLocks() || !navigator.locks.query) return null;
  const state = await navigator.locks.query();
  return new Set((state.held || []).map((l) => l.name).filter((n) => n.startsWith(LOCK_PREFIX)).map((n) => n.slice(LOCK_PREFIX.length)));
}

/** Drafts of form `name` left by tabs that are gone (or by the one-draft layout of older versions). */
async function adoptOrphan(name, own) {
  const live = await liveTabs();
  if (!live) return null; // no way to tell a live tab from a dead one: adopt nothing
  const d = await db();
  const tx = d.transaction("settings", "readwrite");
  const range = IDBKeyRange.bound(`${PREFIX}${name}`, `${PREFIX}${name}\uffff`);
  const keys = await tx.store.getAllKeys(range);
  let best = null;
  for (const key of keys) {
    const rest = key.slice(PREFIX.length + name.length);
    if (rest !== "" && !rest.startsWith("@")) continue; // another form whose name starts the same
    const tab = rest.slice(1);
    if (tab && live.has(tab)) continue;
    const raw = await tx.store.get(key);
    // Older versions stored the record itself under `draft:<name>`.
    const entry = raw && "value" in raw && "at" in raw ? raw : { value: { record: raw }, at: 0, seq: 0 };
    if (!best || newer(entry, best.entry) === entry) best = { key, entry };
  }
  if (best) {
    tx.store.delete(best.key);
    tx.store.put(best.entry, own);
  }
  await tx.done;
  return best ? best.entry : null;
}

/**
 * This tab's draft of form `name` ({record, base} as the screen saved it), the
 * newer of its sessionStorage and IndexedDB copies; else a draft a closed tab
 * left for the same form (it is moved to this tab). undefined when none.
 */
export async function loadDraft(name) {
  await tabId();
  const own = draftKey(name);
  const fromIdb = await (await db()).get("settings", own);
  let entry = newer(readSession(name), fromIdb || null);
  if (!entry) {
    const adopt = () => adoptOrphan(name, own);
    entry = hasLocks() ? await navigator.locks.request("tamis-drafts", adopt) : await adopt();
  }
  if (entry) seq = Math.max(seq, entry.seq || 0);
  return entry ? entry.value : undefined;
}

/** Keep `value` as this tab's draft of `name`: sessionStorage now, IndexedDB soon. */
export function saveDraft(name, value) {
  const entry = { value, ...stamp() };
  writeSession(name, entry);
  return db().then((d) => d.put("settings", entry, draftKey(name)));
}

/** Forget this tab's draft of `name` (both copies). */
export async function clearDraft(name) {
  await tabId();
  forgetSessionDraft(name);
  await (await db()).delete("settings", draftKey(name));
}

/** Drop the sessionStorage copy only (the IndexedDB copy goes with the save's transaction). */
export function forgetSessionDraft(name) {
  try { sessionStorage.removeItem(sessionKey(name)); } catch { /* ignore */ }
}

/**
 * Flush `read()` (the form's current draft, or null to skip) as the draft of
 * `name` when the page is hidden or left. Returns a function that stops it.
 */
export function trackDraft(name, read) {
  const flush = () => {
    const value = read();
    if (value) saveDraft(name, value).catch(() => {});
  };
  const onVisibility = () => { if (document.visibilityState === "hidden") flush(); };
  window.addEventListener("pagehide", flush);
  document.addEventListener("visibilitychange", onVisibility);
  return () => {
    window.removeEventListener("pagehide", flush);
    document.removeEventListener("visibilitychange", onVisibility);
  };
}
