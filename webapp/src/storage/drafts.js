// The form being typed is kept on the device as it is typed, so a reload (an
// app update, a crash, a flat battery) never loses it. One draft per screen.
import { db } from "./db.js";

const key = (name) => `draft:${name}`;

export async function loadDraft(name) {
  return (await db()).get("settings", key(name));
}

export async function saveDraft(name, value) {
  await (await db()).put("settings", value, key(name));
}

export async function clearDraft(name) {
  await (await db()).delete("settings", key(name));
}
