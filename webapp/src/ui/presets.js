// Sieve stacks and sieve names from the core (`sieve_presets`), fetched once.
import { ask } from "./core.js";

let loading = null;

/** [{id, name, sieves: [{opening_mm, label}]}]; `.labelsOnly` lists every sieve the core names. */
export function sievePresets() {
  if (!loading) {
    loading = ask("sieve_presets").then((resp) => {
      if (!resp.ok) { loading = null; return []; }
      const out = (resp.result.presets || []).map((p) => ({
        id: p.id,
        name: p.name,
        sieves: (p.openings_mm || []).map((d, i) => ({ opening_mm: d, label: (p.labels || [])[i] || "" })),
      }));
      out.labelsOnly = (resp.result.sieves || []).map((s) => ({ opening_mm: s.opening_mm, label: s.label }));
      return out;
    }).catch(() => { loading = null; return []; });
  }
  return loading;
}

export const RULE_SETS = [
  { id: "nrcs-1994", name: "NRCS 1994 (base soil categories)" },
  { id: "usbr-2011", name: "USBR 2011" },
  { id: "fema-2011", name: "FEMA 2011" },
  { id: "terzaghi", name: "Terzaghi ratios" },
];

export const SAMPLING_POINTS = [
  { id: "stockpile", name: "Stockpile or source" },
  { id: "delivery", name: "On delivery" },
  { id: "loose_in_lift", name: "Loose in the lift" },
  { id: "compacted", name: "After compaction" },
];
