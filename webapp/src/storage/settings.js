// Settings kept on the device (IndexedDB store "settings", one key each).
import { db } from "./db.js";

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
  return out;
}

export async function saveSetting(key, value) {
  if (!(key in DEFAULTS)) throw new Error(`unknown setting ${key}`);
  const d = await db();
  await d.put("settings", value, key);
}
