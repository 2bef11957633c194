// The only way screens reach the Python core: requests through the bridge.
// Every number shown in the app comes from one of these responses.
import { call } from "../bridge.js";

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

/** Evaluate a stored test record with the band and base records it names. */
export async function evaluateRecord(rec, byId, settings, key) {
  const band = rec.meta?.band_id ? byId.get(rec.meta.band_id) : null;
  const base = rec.meta?.base_id ? byId.get(rec.meta.base_id) : null;
  const rules = rec.meta?.rules || { criteria: settings.rules };
  return ask("evaluate", evaluateFields(rec.test, {
    band: band && !band.deleted ? band.band : null,
    base: base && !base.deleted ? base.test : null,
    rules,
  }), key);
}

/** Human wording of a core error, for a banner when no field can hold it. */
export function errorText(resp) {
  if (!resp || resp.ok) return "";
  const e = resp.error || {};
  return e.field ? `${e.message} (${e.field})` : e.message || "The core could not answer.";
}
