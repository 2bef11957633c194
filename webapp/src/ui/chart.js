// The gradation chart: percent passing against particle size on a log axis,
// drawn as plain SVG from the core's numbers (sample points, base points,
// band limits, the D15 window of `limits`). The only arithmetic here maps
// sizes and percentages to pixels; nothing is interpolated or computed.
import { h, fill, fmt, fmtPct, table } from "./dom.js";

const W = 360;
const H = 250;
// The top margin holds the D15 window's tag, above the curves (never over them).
const M = { left: 40, right: 18, top: 26, bottom: 44 };

function sizesOf({ sample, base, band, limits }) {
  const s = [];
  for (const p of sample?.points || []) s.push(p.opening_mm);
  for (const p of base?.points || []) s.push(p.opening_mm);
  for (const l of band?.limits || []) s.push(l.opening_mm);
  for (const k of ["d15_min_mm", "d15_max_mm"]) if (limits && limits[k]) s.push(limits[k]);
  return s.filter((v) => typeof v === "number" && v > 0);
}

function line(points, cls) {
  if (points.length < 2) return null;
  return h("svg:polyline", { class: cls, points: points.map(([x, y]) => `${x.toFixed(1)},${y.toFixed(1)}`).join(" ") });
}

/**
 * Draw into `box`. data: {sample, base, band, limits} where sample and base
 * are gradation dicts from the core and band is {name, limits}.
 * axis: "coarse-left" | "fine-left".
 */
export function renderChart(box, data, axis = "coarse-left", title = "Gradation chart") {
  const sizes = sizesOf(data);
  if (sizes.length === 0) {
    fill(box, h("p", { class: "muted", text: "The chart appears once the core has a curve." }));
    return;
  }
  const lo = Math.floor(Math.log10(Math.min(...sizes)));
  let hi = Math.ceil(Math.log10(Math.max(...sizes)));
  if (hi === lo) hi = lo + 1;
  const pw = W - M.left - M.right;
  const ph = H - M.top - M.bottom;
  const frac = (d) => (Math.log10(d) - lo) / (hi - lo);
  const x = (d) => M.left + (axis === "fine-left" ? frac(d) : 1 - frac(d)) * pw;
  const y = (p) => M.top + (1 - p / 100) * ph;

  const svg = h("svg:svg", { viewBox: `0 0 ${W} ${H}`, class: "chart", role: "img", "aria-labelledby": "chart-title chart-desc" });
  svg.append(h("svg:title", { id: "chart-title", text: title }));
  svg.append(h("svg:desc", { id: "chart-desc", text: `Percent passing against particle size in mm, log scale, ${axis === "fine-left" ? "fine sizes on the left" : "coarse sizes on the left"}. The same numbers are in the table below.` }));

  // Grid and axes.
  const grid = h("svg:g", { class: "grid" });
  for (let p = 0; p <= 100; p += 20) {
    grid.append(h("svg:line", { x1: M.left, x2: W - M.right, y1: y(p), y2: y(p) }));
    grid.append(h("svg:text", { x: M.left - 4, y: y(p) + 4, class: "tick ytick", text: String(p) }));
  }
  for (let k = lo; k <= hi; k += 1) {
    for (const m of [1, 2, 5]) {
      const d = m * 10 ** k;
      if (Math.log10(d) > hi + 1e-9) continue;
      grid.append(h("svg:line", { x1: x(d), x2: x(d), y1: M.top, y2: H - M.bottom, class: m === 1 ? "major" : "minor" }));
      if (m === 1) grid.append(h("svg:text", { x: x(d), y: H - M.bottom + 14, class: "tick xtick", text: String(Number(d.toPrecision(3))) }));
    }
  }
  grid.append(h("svg:text", { x: M.left + pw / 2, y: H - 10, class: "axis-label", text: "Particle size (mm), log scale" }));
  grid.append(h("svg:text", { x: 10, y: M.top + ph / 2, class: "axis-label", transform: `rotate(-90 10 ${M.top + ph / 2})`, text: "Passing (%)" }));
  svg.append(grid);

  // D15 window of the filter (from the core's limits).
  const lim = data.limits || {};
  if (lim.d15_max_mm || lim.d15_min_mm) {
    const a = lim.d15_min_mm ? x(lim.d15_min_mm) : null;
    const b = lim.d15_max_mm ? x(lim.d15_max_mm) : null;
    const g = h("svg:g", { class: "d15-window" });
    if (a !== null && b !== null) {
      g.append(h("svg:rect", { x: Math.min(a, b), y: M.top, width: Math.abs(b - a), height: ph }));
    }
    for (const v of [a, b]) if (v !== null) g.append(h("svg:line", { x1: v, x2: v, y1: M.top, y2: H - M.bottom }));
    g.append(h("svg:line", { class: "d15-level", x1: M.left, x2: W - M.right, y1: y(15), y2: y(15) }));
    const lx = b !== null ? b : a;
    // Above the plot, anchored so it stays inside the drawing.
    const anchor = lx > W - M.right - 60 ? "end" : lx < M.left + 60 ? "start" : "middle";
    g.append(h("svg:text", { x: lx, y: M.top - 8, class: "tag", "text-anchor": anchor, text: "D15 window" }));
    svg.append(g);
  }

  // Band: upper limits along the sizes, lower limits back.
  const limits = (data.band?.limits || []).slice().sort((p, q) => q.opening_mm - p.opening_mm);
  const upper = limits.filter((l) => typeof l.max_pct === "number").map((l) => [x(l.opening_mm), y(l.max_pct)]);
  const lower = limits.filter((l) => typeof l.min_pct === "number").map((l) => [x(l.opening_mm), y(l.min_pct)]);
  if (upper.length >= 2 && lower.length >= 2) {
    svg.append(h("svg:polygon", { class: "band-area", points: [...upper, ...lower.reverse()].map(([px, py]) => `${px.toFixed(1)},${py.toFixed(1)}`).join(" ") }));
    lower.reverse();
  }
  svg.append(line(upper, "band-line") || "");
  svg.append(line(lower, "band-line") || "");

  // A point from the hydrometer (the core's `source`) is an open triangle on
  // either curve, so a sieve point and a sedimentation point differ in shape.
  const curve = (grad, cls, marker) => {
    const all = grad?.points || [];
    const pts = all.map((p) => [x(p.opening_mm), y(p.passing_pct)]);
    const g = h("svg:g", { class: cls });
    const l = line(pts, "curve");
    if (l) g.append(l);
    pts.forEach(([px, py], i) => {
      const src = all[i].source || "sieve";
      g.append(src === "sedimentation"
        ? h("svg:polygon", { class: "sed-mark", dataset: { source: src }, points: `${px.toFixed(1)},${(py - 4.5).toFixed(1)} ${(px + 4).toFixed(1)},${(py + 3).toFixed(1)} ${(px - 4).toFixed(1)},${(py + 3).toFixed(1)}` })
        : marker === "circle"
          ? h("svg:circle", { cx: px, cy: py, r: 3.5, dataset: { source: src } })
          : h("svg:rect", { x: px - 3, y: py - 3, width: 6, height: 6, dataset: { source: src } }));
    });
    return g;
  };
  const hydro = [data.sample, data.base].some((gr) => (gr?.points || []).some((p) => p.source === "sedimentation"));
  if (data.base) svg.append(curve(data.base, "base-curve", "square"));
  if (data.sample) svg.append(curve(data.sample, "sample-curve", "circle"));

  const legend = h("ul", { class: "legend" },
    data.sample ? h("li", { class: "lg-sample", text: "Sample: solid line, round marks" }) : null,
    data.base ? h("li", { class: "lg-base", text: "Base soil: dashed line, square marks" }) : null,
    hydro ? h("li", { class: "lg-sed", text: "Hydrometer points: open triangles (the others are sieve points)" }) : null,
    data.band ? h("li", { class: "lg-band", text: `Band ${data.band.name || ""}: shaded area`.trim() }) : null,
    lim.d15_max_mm || lim.d15_min_mm ? h("li", { class: "lg-d15", text: d15Words(lim) }) : null);

  fill(box, svg, legend, chartTable(data));
}

/** "D15 window of the filter: 0.1 to 0.586 mm", or its one bound when the other is not known. */
function d15Words(lim) {
  const lo = lim.d15_min_mm; const hi = lim.d15_max_mm;
  if (lo && hi) return `D15 window of the filter: ${fmt(lo)} to ${fmt(hi)} mm`;
  return hi ? `D15 of the filter at most ${fmt(hi)} mm (dashed line)` : `D15 of the filter at least ${fmt(lo)} mm (dashed line)`;
}

/** The chart's numbers as a table (its text alternative). No value is interpolated. */
export function chartTable({ sample, base, band }) {
  const rows = new Map();
  const row = (d) => {
    const k = Number(d).toPrecision(12);
    if (!rows.has(k)) rows.set(k, { d });
    return rows.get(k);
  };
  for (const p of sample?.points || []) Object.assign(row(p.opening_mm), { sample: p.passing_pct, sed: p.source === "sedimentation" || row(p.opening_mm).sed });
  for (const p of base?.points || []) Object.assign(row(p.opening_mm), { base: p.passing_pct, sed: p.source === "sedimentation" || row(p.opening_mm).sed });
  for (const l of band?.limits || []) Object.assign(row(l.opening_mm), { min: l.min_pct, max: l.max_pct });
  const sorted = [...rows.values()].sort((a, b) => b.d - a.d);
  const cell = (v) => h("td", { text: typeof v === "number" ? fmtPct(v) : "" });
  return h("details", { class: "chart-table" },
    h("summary", { text: "The chart as a table" }),
    table({}, "Percent passing by sieve opening", ["Size (mm)", "Sample (%)", "Band min (%)", "Band max (%)", "Base (%)"],
      h("tbody", {}, sorted.map((r) => h("tr", {},
        h("th", { scope: "row", dataset: r.sed ? { source: "sedimentation" } : {} }, fmt(r.d, 4),
          r.sed ? h("span", { class: "src", text: "hydrometer" }) : null), cell(r.sample), cell(r.min), cell(r.max), cell(r.base))))));
}
