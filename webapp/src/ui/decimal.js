// Reading what a person typed into a decimal field. Phone keypads type a
// comma or a point depending on the locale, so both are accepted as the
// decimal mark; a string holding both is refused (it may be a thousands
// separator and we will not guess). This only turns text into the number the
// person typed: every engineering figure is computed by the Python core.

/**
 * Parse a typed decimal. Returns {ok: true, value: number|null} (null for an
 * empty field) or {ok: false, message}.
 */
export function parseDecimal(text) {
  const s = String(text ?? "").trim();
  if (s === "") return { ok: true, value: null };
  if (s.includes(",") && s.includes(".")) {
    return { ok: false, message: "Use either a comma or a point as the decimal mark, not both." };
  }
  const normal = s.replace(",", ".");
  if (!/^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/.test(normal)) {
    return { ok: false, message: "Type a number, for example 12.4 or 12,4." };
  }
  const value = Number(normal);
  if (!Number.isFinite(value)) return { ok: false, message: "This number is too large." };
  return { ok: true, value };
}

/** The text to put back in a field for a stored number (a point as the mark). */
export function showDecimal(value) {
  return value === null || value === undefined ? "" : String(value);
}
