// How often do math functions give a different last bit in Pyodide (musl libm
// compiled to wasm) and in host CPython (the platform libm)? Prints one line per
// function: how many of N seeded random inputs differ, and the first example.
// A diagnostic for the golden files' byte-for-byte rule; it asserts nothing.
//
//   node tests/pyodide/libm_drift.mjs [--python .venv/bin/python] [--n 100000]

import { execFileSync } from "node:child_process";
import { readFileSync, existsSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), "..", "..");
const args = process.argv.slice(2);
const opt = (name, fallback) => (args.includes(name) ? args[args.indexOf(name) + 1] : fallback);
const python = opt("--python", existsSync(join(ROOT, ".venv/bin/python")) ? join(ROOT, ".venv/bin/python") : "python3");
const n = Number(opt("--n", "100000"));

// The same program runs on both sides; it prints repr() of every result as JSON.
const PROGRAM = `
import json, math, random
random.seed(7)
xs = [random.uniform(0.001, 100.0) for _ in range(${n})]
out = {f: [repr(getattr(math, f)(x)) for x in xs] for f in ("log10", "log", "log2", "exp", "sqrt")}
out["x ** 0.37"] = [repr(x ** 0.37) for x in xs]
json.dumps(out)
`;

const host = JSON.parse(execFileSync(python, ["-c", `${PROGRAM.trim().replace(/\njson\.dumps\(out\)$/, "\nprint(json.dumps(out))")}`],
  { maxBuffer: 1 << 30 }).toString());
const hostVersion = execFileSync(python, ["-c", "import sys, platform; print(sys.version.split()[0], platform.libc_ver())"]).toString().trim();

const dir = existsSync(join(ROOT, "webapp/vendor/pyodide/pyodide.mjs"))
  ? join(ROOT, "webapp/vendor/pyodide") : join(ROOT, "node_modules/pyodide");
const { loadPyodide } = await import(pathToFileURL(join(dir, "pyodide.mjs")).href);
const py = await loadPyodide({ indexURL: dir + "/" });
const wasm = JSON.parse(py.runPython(PROGRAM));

console.log(`libm drift: host CPython ${hostVersion} against Pyodide ${py.version}, ${n} inputs in [0.001, 100]`);
for (const name of Object.keys(host)) {
  const diff = host[name].map((v, i) => (v === wasm[name][i] ? -1 : i)).filter((i) => i >= 0);
  const example = diff.length ? `  e.g. host ${host[name][diff[0]]}, Pyodide ${wasm[name][diff[0]]}` : "";
  console.log(`  ${name.padEnd(9)} ${String(diff.length).padStart(6)} differ${example}`);
}
