// The only way screens reach the Python core: requests through the bridge.
// Every number shown in the app comes from one of these responses.
import { call, callBatch } from "../bridge.js";

/** Call an op; resolves with the response object ({ok, result|error, ...} or {superseded: true}). */
export function ask(op, fields = {}, key = undefined) {
  return call(op, fields, key ? { key } : {});
}

/** The request fields of `evaluate` for a test record and its references. */
export function evaluateFields(test, { band = null, base = null, rules = null } = {}) {
  const fields = { sample: test };
  if (band) fields.band = band;
  if (base) fields.base = base;
  if (rules) fields.rules = rules;
  return fields;
}

/** The `evaluate` request fields of a stored test record with the band and base records it names. */
function recordFields(rec, byId, settings) {
  const band = rec.meta?.band_id ? byId.get(rec.meta.band_id) : null;
  const base = rec.meta?.base_id ? byId.get(rec.meta.base_id) : null;
  const rules = rec.meta?.rules || { criteria: settings.rules };
  return evaluateFields(rec.test, {
    band: band && !band.deleted ? band.band : null,
    base: base && !base.deleted ? base.test : null,
    rules,
  });
}

/** Evaluate a stored test record with the band and base records it names. */
export async function evaluateRecord(rec, byId, settings, key) {
  return ask("evaluate", recordFields(rec, byId, settings), key);
}

/** Evaluate many stored test records in one message to the worker; resolves with their responses, in order. */
export async function evaluateRecords(recs, byId, settings) {
  const texts = recs.map((rec, i) => JSON.stringify({ schema: 1, op: "evaluate", id: i, ...recordFields(rec, byId, settings) }));
  return (await callBatch(texts)).map((t) => JSON.parse(t));
}

/** Human wording of a core error, for a banner when no field can hold it. */
export function errorText(resp) {
  if (!resp || resp.ok) return "";
  const e = resp.error || {};
  return e.field ? `${e.message} (${e.field})` : e.message || "The core could not answer.";
}
