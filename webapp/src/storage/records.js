// Records on the device: the Record of docs/records.md, stored whole in the
// "records" store. Every save is one IndexedDB transaction (read the stored
// revision, write the next one); nothing but IndexedDB is awaited inside it.
// Edits never overwrite silently: each revision adds a history entry saying
// who, when and which fields changed (old and new values). Deleting is soft:
// the record is flagged and kept until it has been exported.
import { db } from "./db.js";

export const KINDS = ["test", "band", "base", "lot"];

/** Current time as ISO 8601 UTC without milliseconds. */
export function nowIso() {
  return new Date().toISOString().replace(/\.\d{3}Z$/, "Z");
}

/** Flatten a value into {"path": leaf} pairs, paths as in the core's errors. */
export function flatten(value, path = "", out = {}) {
  if (Array.isArray(value)) {
    if (value.length === 0) out[path] = [];
    value.forEach((v, i) => flatten(v, `${path}[${i}]`, out));
  } else if (value && typeof value === "object") {
    const keys = Object.keys(value);
    if (keys.length === 0 && path) out[path] = {};
    for (const k of keys) flatten(value[k], path ? `${path}.${k}` : k, out);
  } else {
    out[path] = value === undefined ? null : value;
  }
  return out;
}

/** The field-level changes between two records' content (meta, test, band, kind). */
export function diffContent(oldRec, newRec) {
  const pick = (r) => ({ kind: r.kind, meta: r.meta ?? {}, test: r.test ?? null, band: r.band ?? null });
  const a = flatten(pick(oldRec));
  const b = flatten(pick(newRec));
  const changes = [];
  const keys = new Set([...Object.keys(a), ...Object.keys(b)]);
  for (const k of [...keys].sort()) {
    const av = k in a ? a[k] : null;
    const bv = k in b ? b[k] : null;
    if (JSON.stringify(av) !== JSON.stringify(bv)) changes.push({ field: k, old: av, new: bv });
  }
  return changes;
}

/** A new, unsaved record. */
export function blankRecord(kind, { meta = {}, test = null, band = null } = {}) {
  if (!KINDS.includes(kind)) throw new Error(`unknown record kind ${kind}`);
  return {
    record_id: crypto.randomUUID(),
    kind,
    rev: 0,
    updated_at: null,
    updated_by: "",
    deleted: false,
    exported_at: null,
    meta: { ...meta },
    test,
    band,
    history: [],
  };
}

function nextRevision(stored, draft, by, summary, at) {
  if (!stored) {
    return {
      ...draft,
      rev: 1,
      updated_at: at,
      updated_by: by,
      deleted: Boolean(draft.deleted),
      history: [{ rev: 1, at, by, summary: summary || "created", changes: [] }],
    };
  }
  const changes = diffContent(stored, draft);
  const deletedChanged = Boolean(draft.deleted) !== Boolean(stored.deleted);
  if (changes.length === 0 && !deletedChanged) return null;
  if (deletedChanged) changes.push({ field: "deleted", old: Boolean(stored.deleted), new: Boolean(draft.deleted) });
  const rev = stored.rev + 1;
  return {
    ...stored,
    kind: draft.kind,
    meta: draft.meta,
    test: draft.test,
    band: draft.band,
    deleted: Boolean(draft.deleted),
    rev,
    updated_at: at,
    updated_by: by,
    history: [...(stored.history || []), { rev, at, by, summary: summary || "edited", changes }],
  };
}

/**
 * Run `work(records, results, settings)` in one read-write transaction over
 * the stores and wait for it to commit. `work` may await only IndexedDB requests.
 */
async function inWriteTx(work, stores = ["records", "results"]) {
  const d = await db();
  const tx = d.transaction(stores, "readwrite");
  const out = await work(...stores.map((s) => tx.objectStore(s)));
  await tx.done;
  return out;
}

/** True when two records have the same content (docs/records.md: every field but history and exported_at). */
export function sameContent(a, b) {
  return diffContent(a, b).length === 0 && Boolean(a.deleted) === Boolean(b.deleted);
}

/**
 * Save a record atomically. Returns {record, changed} or, when refused,
 * {conflict: true, stored}. When nothing changed the stored record is
 * returned untouched (no empty revision is written).
 *
 * basisRev: the revision the form started from (0 for a new record). When
 * given, the save is refused if the stored record is at another revision;
 * a new record whose id is already stored with the same content is the same
 * save again and writes nothing (a save is idempotent on its draft's id).
 * draftKey: a "settings" key (the form's draft) deleted in the same
 * transaction, so a committed save never leaves its draft behind.
 */
export function saveRecord(draft, { by = "", summary = "", basisRev, draftKey = null } = {}) {
  return inWriteTx(async (records, results, settings) => {
    const stored = await records.get(draft.record_id);
    if (basisRev !== undefined && stored && stored.rev !== basisRev) {
      if (basisRev === 0 && sameContent(stored, draft)) {
        if (draftKey) settings.delete(draftKey);
        return { record: stored, changed: false };
      }
      return { conflict: true, stored };
    }
    const next = nextRevision(stored, draft, by, summary, nowIso());
    if (next) {
      records.put(next);
      results.delete(next.record_id);
    }
    if (draftKey) settings.delete(draftKey);
    return { record: next || stored, changed: Boolean(next) };
  }, ["records", "results", "settings"]);
}

export async function getRecord(id) {
  return (await db()).get("records", id);
}

/** All records, optionally of one kind, newest first. */
export async function listRecords({ kind = null, includeDeleted = false } = {}) {
  const d = await db();
  const all = kind ? await d.getAllFromIndex("records", "kind", kind) : await d.getAll("records");
  return all
    .filter((r) => includeDeleted || !r.deleted)
    .sort((a, b) => String(b.updated_at).localeCompare(String(a.updated_at)));
}

/** True when a record changed since it last left the device (or never did). */
export function notExported(rec) {
  return !rec.exported_at || String(rec.updated_at) > String(rec.exported_at);
}

export async function softDelete(id, by) {
  const stored = await getRecord(id);
  if (!stored) return null;
  return (await saveRecord({ ...stored, deleted: true }, { by, summary: "deleted" })).record;
}

export async function restore(id, by) {
  const stored = await getRecord(id);
  if (!stored) return null;
  return (await saveRecord({ ...stored, deleted: false }, { by, summary: "restored" })).record;
}

/**
 * Mark records as exported at `at`, in one transaction. A record deleted
 * before this export has now left the device, so it is removed for good.
 */
export function markExported(ids, at) {
  return inWriteTx(async (records, results) => {
    for (const id of ids) {
      const rec = await records.get(id);
      if (!rec) continue;
      if (rec.deleted) {
        records.delete(id);
        results.delete(id);
      } else {
        records.put({ ...rec, exported_at: at });
      }
    }
  });
}

/** Write many records (an import) in one transaction: all or nothing. */
export function putRecords(list) {
  return inWriteTx(async (records, results) => {
    for (const rec of list) {
      records.put(rec);
      results.delete(rec.record_id);
    }
  });
}

/** Remove records for good (used only by "remove the demo"). */
export function purgeRecords(ids) {
  return inWriteTx(async (records, results) => {
    for (const id of ids) {
      records.delete(id);
      results.delete(id);
    }
  });
}

// ---- computed-result cache -------------------------------------------------

/** A cached result, or undefined when missing or made by another core version or revision. */
export async function cachedResult(rec, coreVersion) {
  const hit = await (await db()).get("results", rec.record_id);
  if (!hit || hit.core_version !== coreVersion || hit.rev !== rec.rev) return undefined;
  return hit;
}

export async function storeResult(rec, coreVersion, summary) {
  await (await db()).put("results", { record_id: rec.record_id, rev: rec.rev, core_version: coreVersion, ...summary });
}

/** Cached results of many records at once (one read of the whole cache): record_id -> hit, valid ones only. */
export async function cachedResults(recs, coreVersion) {
  const all = await (await db()).getAll("results");
  const byId = new Map(all.map((hit) => [hit.record_id, hit]));
  const out = new Map();
  for (const rec of recs) {
    const hit = byId.get(rec.record_id);
    if (hit && hit.core_version === coreVersion && hit.rev === rec.rev) out.set(rec.record_id, hit);
  }
  return out;
}

/** Store many results in one transaction: [[record, summary], ...]. */
export async function storeResults(pairs, coreVersion) {
  const d = await db();
  const tx = d.transaction("results", "readwrite");
  for (const [rec, summary] of pairs) tx.store.put({ record_id: rec.record_id, rev: rec.rev, core_version: coreVersion, ...summary });
  await tx.done;
}
