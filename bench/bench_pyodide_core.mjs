// The core alone in Pyodide under Node beside CPython, on the golden evaluate requests: what the wasm
// interpreter costs, without a browser, a worker or a bridge (printed, never asserted; issue 17).
//
//   node bench/bench_pyodide_core.mjs [--rounds 7] [--python .venv/bin/python]
//
// Boots Pyodide from the built site (webapp/vendor: the runtime, .pyc stdlib and tamis wheel the browser
// gets; run `make build` first, and again after a change of the core) as tests/pyodide/replay_golden.mjs
// does, and runs one Python timing script in Pyodide and in CPython on the same wheel: per golden
// evaluate request, tamis.api.handle and its parts (json.loads of the request, the op, json.dumps of the
// answer) and a few operations the core is made of (the core's exp, float formatting, small dicts, calls,
// decimals), the fastest of --rounds passes each, and then the time of handle by part (wrappers put on the
// core's functions, in both engines alike). It also times handle called from JavaScript (the string crossing
// into Python and back, as the worker calls it). Prints ms per request, requests/s, and the ratio
// Pyodide/CPython of each part.

import { readFileSync, readdirSync, existsSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import { spawnSync } from "node:child_process";

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), "..");
const WEBAPP = join(ROOT, "webapp");
const VENDOR = join(WEBAPP, "vendor");
const args = process.argv.slice(2);
const opt = (name, dflt) => (args.includes(name) ? args[args.indexOf(name) + 1] : dflt);
const ROUNDS = Number(opt("--rounds", "7"));
const PYTHON = resolve(ROOT, opt("--python", ".venv/bin/python"));

const manifestPath = join(VENDOR, "manifest.json");
if (!existsSync(manifestPath)) {
  console.error("bench_pyodide_core: webapp/vendor/manifest.json is missing: run `make build` first");
  process.exit(2);
}
const manifest = JSON.parse(readFileSync(manifestPath, "utf8"));
const wheelPath = join(WEBAPP, manifest.wheel);
const GOLDEN = join(ROOT, "tests", "golden");
const requests = readdirSync(GOLDEN).filter((f) => f.startsWith("evaluate") && f.endsWith(".request.json")).sort()
  .map((f) => readFileSync(join(GOLDEN, f), "utf8"));

// One script for both engines: REQS and ROUNDS are set before it runs; it prints one JSON line.
const SCRIPT = String.raw`
import json, time
import tamis.api as a
from tamis.project.evaluate import op_evaluate
from tamis.lab.curve import exp
from decimal import Decimal
seven = Decimal(7)

def best(f):
    b = float("inf")
    for _ in range(ROUNDS):
        t = time.perf_counter()
        f()
        b = min(b, time.perf_counter() - t)
    return b

def ops():
    for r in REQS:
        try:
            op_evaluate(json.loads(r))
        except Exception:
            pass

for r in REQS:
    a.handle(r)
n = len(REQS)
answers = [json.loads(a.handle(r)) for r in REQS]
xs = [0.001 * (i + 1) for i in range(1000)]
def f(x):
    return x
loads = best(lambda: [json.loads(r) for r in REQS]) / n
out = {"handle": best(lambda: [a.handle(r) for r in REQS]) / n,
       "json.loads of the request": loads,
       "op (parse, reduce, criteria)": best(ops) / n - loads,
       "json.dumps of the answer": best(lambda: [a._dumps(x) for x in answers]) / n,
       "1000 x curve.exp": best(lambda: [exp(-x) for x in xs]),
       "1000 x f'{x:.4g}'": best(lambda: [f"{x:.4g}" for x in xs]),
       "1000 x two-key dict": best(lambda: [{"a": x, "b": x} for x in xs]),
       "1000 x Python call": best(lambda: [f(x) for x in xs]),
       "1000 x Decimal(repr(x)) * 100 / 7": best(lambda: [Decimal(repr(x)) * 100 / seven for x in xs]),
       "1000 x repr(x)": best(lambda: [repr(x) for x in xs])}
print(json.dumps(out))
`;

// Run once per engine, after SCRIPT; prints the parts as one JSON line.
const PARTS = String.raw`
# Where the time of handle goes, by part: each part's own time (its callees that are parts excluded), from
# wrappers put on the functions after the figures above were taken (the wrappers' own cost included), the
# fastest pass of each part.
import tamis.lab.reduction as R, tamis.project.evaluate as E, tamis.criteria as C
acc, stack = {}, []
def wrap(mod, name, label):
    fn = getattr(mod, name)
    def timed(*a, **k):
        t = time.perf_counter()
        stack.append(0.0)
        try:
            return fn(*a, **k)
        finally:
            dt = time.perf_counter() - t
            acc[label] = acc.get(label, 0.0) + dt - stack.pop()
            if stack:
                stack[-1] += dt
    setattr(mod, name, timed)
for mod, name, label in [
        (R, "parse_test", "parse the sieves or passing points"), (R, "parse_props", "parse the plasticity"),
        (R, "gradation_of", "gradation: D-values, Cu, Cc, fractions, USCS, FM"), (R, "combine", "sedimentation"),
        (E, "parse_band", "band: parse and checks"), (E, "band_checks", "band: parse and checks"),
        (C, "material_checks", "criteria: filter material, retention, permeability"),
        (C, "analyse_base", "criteria: filter material, retention, permeability"),
        (C, "retention_check", "criteria: filter material, retention, permeability"),
        (C, "permeability_check", "criteria: filter material, retention, permeability"),
        (C, "stability_checks", "criteria: internal stability"),
        (C, "hazen_estimate", "criteria: k estimates"), (C, "kozeny_carman_estimate", "criteria: k estimates"),
        (E, "run_filter_checks", "criteria: the rest (rules, limits, flags)"),
        (E, "reduce_test", "the rest of reduce_test, evaluate_reduced and op_evaluate (rows, tags, to_dict)"),
        (E, "evaluate_reduced", "the rest of reduce_test, evaluate_reduced and op_evaluate (rows, tags, to_dict)"),
        (E, "op_evaluate", "the rest of reduce_test, evaluate_reduced and op_evaluate (rows, tags, to_dict)"),
        (a, "_dumps", "json.dumps of the answer"), (a, "handle", "the rest of handle (json.loads, findings)")]:
    wrap(mod, name, label)
for r in REQS:
    a.handle(r)
parts = {}
for _ in range(ROUNDS * 5):      # each part's fastest pass over the requests is kept
    acc.clear()
    for r in REQS:
        a.handle(r)
    for k, v in acc.items():
        parts[k] = min(parts.get(k, float("inf")), v / n)
print(json.dumps(parts))
`;

function cpython(withParts) {
  const prelude = `import sys, json; sys.path.insert(0, ${JSON.stringify(wheelPath)}); ` +
    `REQS = json.loads(sys.stdin.read()); ROUNDS = ${ROUNDS}\n`;
  const r = spawnSync(PYTHON, ["-I", "-S", "-c", prelude + SCRIPT + (withParts ? PARTS : "")],
    { input: JSON.stringify(requests), encoding: "utf8" });
  if (r.status !== 0) throw new Error(`CPython failed: ${r.stderr}`);
  const lines = r.stdout.trim().split("\n").map((l) => JSON.parse(l));
  return { figures: lines[0], parts: withParts ? lines[1] : null };
}

const pyodideDir = join(VENDOR, "pyodide");
const { loadPyodide } = await import(pathToFileURL(join(pyodideDir, "pyodide.mjs")).href);
let printed = "";
const py = await loadPyodide({ indexURL: pyodideDir + "/", stdout: (l) => { printed += l + "\n"; },
  stderr: (l) => console.error(l) });
py.unpackArchive(new Uint8Array(readFileSync(wheelPath)), "wheel");
py.globals.set("REQS", py.toPy(requests));
py.globals.set("ROUNDS", ROUNDS);
function pyodide(code) {
  printed = "";
  py.runPython(code);
  return JSON.parse(printed.trim().split("\n").pop());
}
const handle = py.pyimport("tamis.api").handle;
function fromJs() {             // handle called from JavaScript, as the worker calls it (a JS string in and out)
  for (const r of requests) handle(r);
  let best = Infinity;
  for (let i = 0; i < ROUNDS; i += 1) {
    const t = performance.now();
    for (const r of requests) handle(r);
    best = Math.min(best, (performance.now() - t) / 1000);
  }
  return best / requests.length;
}
const minOf = (a, b) => Object.fromEntries(Object.keys(a).map((k) => [k, Math.min(a[k], b[k])]));
// the engines alternate, twice, and each figure keeps its fastest (a machine loaded by other work slows both
// alike); the wrappers of the parts go on last
const runs = [];
for (let i = 0; i < 2; i += 1) {
  const p = { ...pyodide(SCRIPT), "handle called from JavaScript": fromJs() };
  runs.push([p, cpython(i === 1)]);
}
const pyo = minOf(runs[0][0], runs[1][0]);
const cp = { figures: minOf(runs[0][1].figures, runs[1][1].figures), parts: runs[1][1].parts };
const parts = pyodide(PARTS);
const pyVersion = py.runPython("import sys; sys.version.split()[0]");
const cpVersion = spawnSync(PYTHON, ["-c", "import sys; print(sys.version.split()[0])"], { encoding: "utf8" })
  .stdout.trim();

console.log(`bench_pyodide_core: ${requests.length} golden evaluate requests, fastest of ${ROUNDS} passes, engines alternating twice; ` +
  `Pyodide ${py.version} (Python ${pyVersion}) under Node ${process.version} vs CPython ${cpVersion}; ` +
  `load average ${(await import("node:os")).loadavg()[0].toFixed(1)}`);
for (const [name, p] of Object.entries(pyo)) {
  const c = name === "handle called from JavaScript" ? cp.figures.handle : cp.figures[name];
  const perReq = !name.startsWith("1000 x");
  const show = (s) => (perReq ? `${(s * 1e3).toFixed(3)} ms (${Math.round(1 / s).toLocaleString("en")}/s)`
    : `${(s * 1e3).toFixed(3)} ms`);
  console.log(`  ${name}: Pyodide ${show(p)}, CPython ${show(c)}` +
    `${name === "handle called from JavaScript" ? " (CPython: handle)" : ""}; ratio ${(p / c).toFixed(2)}`);
}
const total = { p: 0, c: 0 };
for (const [name, p] of Object.entries(parts)) { total.p += p; total.c += cp.parts[name] || 0; }
console.log("  by part (own time per request, the fastest pass of each; wrappers included): Pyodide ms, CPython ms, " +
  "ratio, share of the Pyodide - CPython difference");
for (const [name, p] of Object.entries(parts).sort((x, y) => y[1] - x[1])) {
  const c = cp.parts[name];
  console.log(`    ${(p * 1e3).toFixed(3)}  ${(c * 1e3).toFixed(3)}  x${(p / c).toFixed(2)}  ` +
    `${(100 * (p - c) / (total.p - total.c)).toFixed(0)} %  ${name}`);
}
console.log(`    ${(total.p * 1e3).toFixed(3)}  ${(total.c * 1e3).toFixed(3)}  x${(total.p / total.c).toFixed(2)}  ` +
  "100 %  all");
