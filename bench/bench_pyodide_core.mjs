// The core alone in Pyodide under Node beside CPython, on the golden evaluate requests: what the wasm
// interpreter costs, without a browser, a worker or a bridge (printed, never asserted; issue 17).
//
//   node bench/bench_pyodide_core.mjs [--rounds 7] [--python .venv/bin/python]
//
// Boots Pyodide from the built site (webapp/vendor: the runtime, .pyc stdlib and tamis wheel the browser
// gets; run `make build` first, and again after a change of the core) as tests/pyodide/replay_golden.mjs
// does, and runs one Python timing script in Pyodide and in CPython on the same wheel: per golden
// evaluate request, tamis.api.handle and its parts (json.loads of the request, the op, json.dumps of the
// answer) and a few operations the core is made of (the core's exp, float formatting, small dicts, calls),
// the fastest of --rounds passes each. It also times handle called from JavaScript (the string crossing
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
       "1000 x Python call": best(lambda: [f(x) for x in xs])}
print(json.dumps(out))
`;

function cpython() {
  const prelude = `import sys, json; sys.path.insert(0, ${JSON.stringify(wheelPath)}); ` +
    `REQS = json.loads(sys.stdin.read()); ROUNDS = ${ROUNDS}\n`;
  const r = spawnSync(PYTHON, ["-I", "-S", "-c", prelude + SCRIPT], { input: JSON.stringify(requests),
    encoding: "utf8" });
  if (r.status !== 0) throw new Error(`CPython failed: ${r.stderr}`);
  return { version: spawnSync(PYTHON, ["-c", "import sys; print(sys.version.split()[0])"], { encoding: "utf8" })
    .stdout.trim(), figures: JSON.parse(r.stdout.trim().split("\n").pop()) };
}

const pyodideDir = join(VENDOR, "pyodide");
const { loadPyodide } = await import(pathToFileURL(join(pyodideDir, "pyodide.mjs")).href);
let printed = "";
const py = await loadPyodide({ indexURL: pyodideDir + "/", stdout: (l) => { printed += l + "\n"; },
  stderr: (l) => console.error(l) });
py.unpackArchive(new Uint8Array(readFileSync(wheelPath)), "wheel");
py.globals.set("REQS", py.toPy(requests));
py.globals.set("ROUNDS", ROUNDS);
py.runPython(SCRIPT);
const pyo = JSON.parse(printed.trim().split("\n").pop());
const pyVersion = py.runPython("import sys; sys.version.split()[0]");

// handle called from JavaScript, as the worker calls it (a JS string in, a JS string out)
const handle = py.pyimport("tamis.api").handle;
for (const r of requests) handle(r);
let fromJs = Infinity;
for (let i = 0; i < ROUNDS; i += 1) {
  const t = performance.now();
  for (const r of requests) handle(r);
  fromJs = Math.min(fromJs, (performance.now() - t) / 1000);
}
pyo["handle called from JavaScript"] = fromJs / requests.length;

const cp = cpython();
console.log(`bench_pyodide_core: ${requests.length} golden evaluate requests, fastest of ${ROUNDS} passes; ` +
  `Pyodide ${py.version} (Python ${pyVersion}) under Node ${process.version} vs CPython ${cp.version}; ` +
  `load average ${(await import("node:os")).loadavg()[0].toFixed(1)}`);
for (const [name, p] of Object.entries(pyo)) {
  const c = name === "handle called from JavaScript" ? cp.figures.handle : cp.figures[name];
  const perReq = !name.startsWith("1000 x");
  const show = (s) => (perReq ? `${(s * 1e3).toFixed(3)} ms (${Math.round(1 / s).toLocaleString("en")}/s)`
    : `${(s * 1e3).toFixed(3)} ms`);
  console.log(`  ${name}: Pyodide ${show(p)}, CPython ${show(c)}` +
    `${name === "handle called from JavaScript" ? " (CPython: handle)" : ""}; ratio ${(p / c).toFixed(2)}`);
}
