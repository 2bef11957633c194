// The one IndexedDB database of the app, opened through the idb wrapper.
// Schema versions are cumulative: a device at version n runs every step
// `oldVersion < k` for k > n, in order, inside the upgrade transaction.
import { openDB } from "../../vendor/idb/index.js";

export const DB_NAME = "tamis";
export const DB_VERSION = 2;

function upgrade(db, oldVersion) {
  if (oldVersion < 1) {
    // Records: the stored unit shared with the CSV codec (docs/records.md).
    const records = db.createObjectStore("records", { keyPath: "record_id" });
    records.createIndex("kind", "kind");
    records.createIndex("updated_at", "updated_at");
    db.createObjectStore("settings");
  }
  if (oldVersion < 2) {
    // Computed results: a cache keyed by record id, tagged with the core
    // version and record revision that produced it; never a source of truth.
    db.createObjectStore("results", { keyPath: "record_id" });
  }
}

let opening = null;

/** The open database (opened once per page). */
export function db() {
  if (!opening) {
    opening = openDB(DB_NAME, DB_VERSION, {
      upgrade,
      blocking() {
        // A newer tab wants to upgrade: let it, this page reloads on next use.
        opening?.then((d) => d.close());
        opening = null;
      },
    });
  }
  return opening;
}
