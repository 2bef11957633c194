// Replays every tests/golden/*.request.json through tamis.api.handle inside
// Pyodide (Node) and compares the answer with the .response.json file byte
// for byte (the file is the exact string CPython's tamis.api.handle returns).
//
//   node tests/pyodide/replay_golden.mjs [--only SUBSTRING] [--golden DIR] [--dump FILE] [--verbose]
//
// --dump FILE writes {case name: Pyodide's response string} as JSON, to compare
// with CPython on the same wheel when a golden file is suspected to be stale.
//
// Uses the built site (webapp/vendor/: the same runtime, .pyc stdlib and tamis
// wheel the browser gets); run `make build` first. Closing line:
//   golden-pyodide: N passed, M failed
// Exit status 1 on any failure or when no case is found.

import { readFileSync, readdirSync, existsSync, writeFileSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), "..", "..");
const WEBAPP = join(ROOT, "webapp");
const VENDOR = join(WEBAPP, "vendor");
const args = process.argv.slice(2);
const GOLDEN = args.includes("--golden") ? resolve(args[args.indexOf("--golden") + 1]) : join(ROOT, "tests", "golden");
const only = args.includes("--only") ? args[args.indexOf("--only") + 1] : null;
const verbose = args.includes("--verbose");
const dumpPath = args.includes("--dump") ? resolve(args[args.indexOf("--dump") + 1]) : null;
const dumped = {};

function die(message) {
  console.error(`golden-pyodide: ${message}`);
  console.log("golden-pyodide: 0 passed, 1 failed");
  process.exit(1);
}

function diffHint(got, want) {
  let i = 0;
  while (i < got.length && i < want.length && got[i] === want[i]) i += 1;
  const from = Math.max(0, i - 60);
  return `first difference at character ${i} (lengths ${got.length} vs ${want.length})\n` +
    `      got:      …${got.slice(from, i + 60)}…\n` +
    `      expected: …${want.slice(from, i + 60)}…`;
}

const manifestPath = join(VENDOR, "manifest.json");
if (!existsSync(manifestPath)) die("webapp/vendor/manifest.json is missing: run `make build` first");
const manifest = JSON.parse(readFileSync(manifestPath, "utf8"));
const wheelPath = join(WEBAPP, manifest.wheel);
if (!existsSync(wheelPath)) die(`${manifest.wheel} is missing: run \`make build\``);

const cases = existsSync(GOLDEN)
  ? readdirSync(GOLDEN).filter((f) => f.endsWith(".request.json")).sort()
      .map((f) => f.slice(0, -".request.json".length)).filter((name) => !only || name.includes(only))
  : [];
if (cases.length === 0) die(`no golden cases found in ${GOLDEN}${only ? ` matching ${only}` : ""}`);

const pyodideDir = join(VENDOR, "pyodide");
const { loadPyodide } = await import(pathToFileURL(join(pyodideDir, "pyodide.mjs")).href);
const t0 = performance.now();
const py = await loadPyodide({ indexURL: pyodideDir + "/", stdout: () => {}, stderr: (l) => console.error(l) });
py.unpackArchive(new Uint8Array(readFileSync(wheelPath)), "wheel");
const handle = py.pyimport("tamis.api").handle;
const coreVersion = JSON.parse(handle('{"schema":1,"op":"version","id":0}')).result.core_version;
console.log(`golden-pyodide: Pyodide ${py.version} (Python ${py.runPython("import sys; sys.version.split()[0]")}), ` +
  `tamis ${coreVersion}, booted in ${Math.round(performance.now() - t0)} ms; ${cases.length} cases`);

let passed = 0;
const failed = [];
for (const name of cases) {
  const respPath = join(GOLDEN, `${name}.response.json`);
  if (!existsSync(respPath)) {
    failed.push(name);
    console.log(`FAIL ${name}: ${name}.response.json is missing`);
    continue;
  }
  const request = readFileSync(join(GOLDEN, `${name}.request.json`), "utf8");
  const want = readFileSync(respPath, "utf8");
  let got;
  try {
    got = handle(request);
    dumped[name] = got;
  } catch (err) {
    failed.push(name);
    console.log(`FAIL ${name}: tamis.api.handle raised ${String(err.message || err).split("\n").slice(-2).join(" ")}`);
    continue;
  }
  if (got === want) {
    passed += 1;
    if (verbose) console.log(`ok   ${name}`);
  } else {
    failed.push(name);
    console.log(`FAIL ${name}: ${diffHint(got, want)}`);
  }
}
if (dumpPath) writeFileSync(dumpPath, JSON.stringify(dumped, null, 1));
console.log(`golden-pyodide: ${passed} passed, ${failed.length} failed`);
process.exit(failed.length ? 1 : 0);
