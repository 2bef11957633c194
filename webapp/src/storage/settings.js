// Settings kept on the device (IndexedDB store "settings", one key each).
//
// A setting is first written to localStorage, synchronously, and then to
// IndexedDB: a page closed or reloaded the moment after a change (before the
// IndexedDB write completes) keeps it. The next load moves any such pending
// value into IndexedDB and clears it.
import { db } from "./db.js";

const PENDING = "tamis.setting.pending.";

function pendingGet(key) {
  try {
    const text = localStorage.getItem(PENDING + key);
    return text === null ? undefined : JSON.parse(text);
  } catch { return undefined; }
}

function pendingSet(key, value) {
  try { localStorage.setItem(PENDING + key, JSON.stringify(value)); } catch { /* storage off: IndexedDB only */ }
}

function pendingClear(key, value) {
  try {
    if (localStorage.getItem(PENDING + key) === JSON.stringify(value)) localStorage.removeItem(PENDING + key);
  } catch { /* ignore */ }
}

export const DEFAULTS = Object.freeze({
  axis: "coarse-left", // "coarse-left" | "fine-left": direction of the size axis
  theme: "standard", // "standard" | "sunlight"
  tester: "",
  rules: "nrcs-1994", // default criteria set sent in `rules.criteria`
});

export async function loadSettings() {
  const d = await db();
  const tx = d.transaction("settings");
  const out = { ...DEFAULTS };
  for (const key of Object.keys(DEFAULTS)) {
    const v = await tx.store.get(key);
    if (v !== undefined) out[key] = v;
  }
  await tx.done;
  for (const key of Object.keys(DEFAULTS)) {
    const v = pendingGet(key);
    if (v === undefined) continue;
    out[key] = v;
    await saveSetting(key, v);
  }
  return out;
}

export async function saveSetting(key, value) {
  if (!(key in DEFAULTS)) throw new Error(`unknown setting ${key}`);
  pendingSet(key, value); // before any await: done within the event that changed it
  const d = await db();
  await d.put("settings", value, key);
  pendingClear(key, value);
}
