// The trend chart of a lot: one measure (fines, D15, D85, Cu, passing at a band
// sieve) test by test in sampling order, against its limits, drawn as plain SVG
// from the core's numbers (lot_summary). Failed tests (verdict reject) are drawn
// as large filled squares with a cross, the others as circles; each point is
// numbered as in the table under it, so the chart reads without colour.
import { h, fill } from "./dom.js";

const W = 360;
const H = 230;
const M = { left: 44, right: 12, top: 22, bottom: 40 };

/** The measures a lot can be charted by: [{id, label, unit, value(test), limits: [{value, name}]}]. */
export function trendMeasures(lot) {
  const lim = lot.limits || {};
  const out = [
    { id: "fines_pct", label: "Fines (passing 0.075 mm)", unit: "%", value: (t) => t.fines_pct,
      limits: [lim.fines_max_pct != null && { value: lim.fines_max_pct, name: `fines limit ${show(lim.fines_max_pct)} %` }] },
    { id: "d15_mm", label: "D15", unit: "mm", value: (t) => t.d15_mm,
      limits: [lim.d15_max_mm != null && { value: lim.d15_max_mm, name: `D15F max ${show(lim.d15_max_mm)} mm` },
        lim.d15_min_mm != null && { value: lim.d15_min_mm, name: `D15F min ${show(lim.d15_min_mm)} mm` }] },
    { id: "d85_mm", label: "D85", unit: "mm", value: (t) => t.d85_mm, limits: [] },
    { id: "cu", label: "Cu", unit: "", value: (t) => t.cu, limits: [] },
  ];
  (lot.band_limits || []).forEach((b, i) => {
    out.push({ id: `passing@${b.opening_mm}`, label: `Passing ${show(b.opening_mm)} mm`, unit: "%",
      value: (t) => t.passing?.[i]?.passing_pct ?? null,
      limits: [b.min_pct != null && { value: b.min_pct, name: `band min ${show(b.min_pct)} %` },
        b.max_pct != null && { value: b.max_pct, name: `band max ${show(b.max_pct)} %` }] });
  });
  for (const m of out) m.limits = m.limits.filter(Boolean);
  return out;
}

/** A number for an axis or a label: 3 significant digits, no exponent. */
export function show(v) {
  if (v === null || v === undefined) return "—";
  return String(Number(v.toPrecision(3)));
}

/** Draw measure `m` of `lot.tests` into `box`. */
export function renderTrend(box, lot, m) {
  const tests = lot.tests.filter((t) => typeof m.value(t) === "number");
  if (tests.length === 0) {
    fill(box, h("p", { class: "muted", text: `No ${m.label} yet: no test of this lot has a result.` }));
    return;
  }
  const vals = tests.map(m.value);
  const all = [...vals, ...m.limits.map((l) => l.value)];
  let lo = Math.min(...all);
  let hi = Math.max(...all);
  if (hi === lo) { hi += 1; lo = Math.max(0, lo - 1); }
  // Round ticks: a step of 1, 2 or 5 times a power of ten, about four of them.
  const raw = (hi - lo) / 4;
  const p10 = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((k) => k * p10).find((k) => k >= raw);
  lo = Math.max(0, Math.floor(lo / step) * step); hi = Math.ceil(hi / step) * step;
  if (hi - m.limits.reduce((a, l) => Math.max(a, l.value), -Infinity) < step / 4) hi += step; // room for a limit's tag
  const pw = W - M.left - M.right;
  const ph = H - M.top - M.bottom;
  const n = tests.length;
  const x = (i) => M.left + (n === 1 ? pw / 2 : (i / (n - 1)) * pw);
  const y = (v) => M.top + (1 - (v - lo) / (hi - lo)) * ph;
  const svg = h("svg:svg", { viewBox: `0 0 ${W} ${H}`, class: "chart trend-chart", role: "img", "aria-labelledby": "trend-title trend-desc" });
  svg.append(h("svg:title", { id: "trend-title", text: `${m.label} of lot ${lot.lot}, test by test` }));
  const failed = tests.filter((t) => t.failed).map((t) => t.sample_id);
  svg.append(h("svg:desc", { id: "trend-desc", text: `${m.label}${m.unit ? ` (${m.unit})` : ""} of ${n} tests in sampling order${m.limits.length ? `, against ${m.limits.map((l) => l.name).join(" and ")}` : ""}. ${failed.length ? `Failed: ${failed.join(", ")}.` : "No test failed."} The same numbers are in the table below.` }));
  const grid = h("svg:g", { class: "grid" });
  for (let k = 0; lo + k * step <= hi + step / 1e6; k += 1) {
    const v = lo + k * step;
    grid.append(h("svg:line", { x1: M.left, x2: W - M.right, y1: y(v), y2: y(v) }));
    grid.append(h("svg:text", { x: M.left - 4, y: y(v) + 4, class: "tick ytick", text: show(v) }));
  }
  tests.forEach((t, i) => grid.append(h("svg:text", { x: x(i), y: H - M.bottom + 15, class: "tick xtick", text: String(i + 1) })));
  grid.append(h("svg:text", { x: M.left + pw / 2, y: H - 6, class: "axis-label", text: "Test (sampling order, numbered as in the table)" }));
  grid.append(h("svg:text", { x: 11, y: M.top + ph / 2, class: "axis-label", transform: `rotate(-90 11 ${M.top + ph / 2})`, text: `${m.label.replace(/ \(.*\)$/, "")}${m.unit ? ` (${m.unit})` : ""}` }));
  svg.append(grid);
  for (const l of m.limits) {
    const g = h("svg:g", { class: "trend-limit" });
    g.append(h("svg:line", { x1: M.left, x2: W - M.right, y1: y(l.value), y2: y(l.value) }));
    g.append(h("svg:text", { x: W - M.right - 2, y: y(l.value) - 4, "text-anchor": "end", class: "tag", text: l.name }));
    svg.append(g);
  }
  const pts = tests.map((t, i) => [x(i), y(m.value(t))]);
  svg.append(h("svg:polyline", { class: "trend-line", points: pts.map(([px, py]) => `${px.toFixed(1)},${py.toFixed(1)}`).join(" ") }));
  tests.forEach((t, i) => {
    const [px, py] = pts[i];
    const g = h("svg:g", { class: t.failed ? "trend-point failed" : "trend-point", dataset: { sample: t.sample_id, failed: t.failed ? "1" : "0" } });
    if (t.failed) {
      g.append(h("svg:rect", { x: px - 6, y: py - 6, width: 12, height: 12 }));
      g.append(h("svg:path", { d: `M${px - 4},${py - 4}L${px + 4},${py + 4}M${px + 4},${py - 4}L${px - 4},${py + 4}`, class: "cross" }));
    } else {
      g.append(h("svg:circle", { cx: px, cy: py, r: 4.5 }));
    }
    svg.append(g);
  });
  const legend = h("ul", { class: "legend" },
    h("li", { text: "Round mark: test passed or under review; square with a cross: test rejected by its checks" }),
    m.limits.length ? h("li", { text: `Dashed lines: ${m.limits.map((l) => l.name).join("; ")}` }) : null);
  fill(box, svg, legend);
}
