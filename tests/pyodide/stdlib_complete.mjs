// The app's trimmed stdlib (webapp/vendor/pyodide/python_stdlib.zip: bytecode only,
// without scripts/pyodide_bytecode.py STDLIB_LEFT_OUT) holds every module the core,
// its self-test, Pyodide's own start and micropip import; and no module it keeps lost
// an import it needs.
//
//   node tests/pyodide/stdlib_complete.mjs        (after `make build`)
//
// 1. The workload (every op module imported, as the worker's warm-up does; every
//    golden request and the self-test request answered; micropip loaded and
//    imported) runs in Pyodide with the stock stdlib of node_modules/pyodide; every
//    module it imports must be in the trimmed zip (as .pyc), in the tamis wheel or
//    micropip's wheels, or built into the runtime. This catches an import that the
//    trimmed zip would answer with an ImportError, and a fallback import
//    (try/except ImportError) that would silently take another path.
// 2. The same workload runs on the trimmed zip (the files the browser gets) and
//    imports exactly the same modules, with the same answers as the golden files.
// 3. Every top-level module of the trimmed zip is imported there; each one that
//    imports with the stock stdlib must import with the trimmed one too.
// Closing line: stdlib-complete: N passed, M failed

import { readFileSync, readdirSync, existsSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), "..", "..");
const VENDOR = join(ROOT, "webapp", "vendor");
const TRIMMED = join(VENDOR, "pyodide");
const STOCK = join(ROOT, "node_modules", "pyodide");
let passed = 0;
let failed = 0;

function check(ok, what, detail = "") {
  if (ok) passed += 1;
  else { failed += 1; console.error(`stdlib-complete: FAILED ${what}${detail ? `: ${detail}` : ""}`); }
}

if (!existsSync(join(VENDOR, "manifest.json"))) {
  console.error("stdlib-complete: webapp/vendor/manifest.json is missing: run `make build` first");
  console.log("stdlib-complete: 0 passed, 1 failed");
  process.exit(1);
}
const manifest = JSON.parse(readFileSync(join(VENDOR, "manifest.json"), "utf8"));
const wheel = new Uint8Array(readFileSync(join(ROOT, "webapp", manifest.wheel)));
const golden = join(ROOT, "tests", "golden");
const requests = readdirSync(golden).filter((f) => f.endsWith(".request.json")).sort()
  .map((f) => [f, readFileSync(join(golden, f), "utf8"), readFileSync(join(golden, f.replace(".request.", ".response.")), "utf8")]);
const selftest = JSON.parse(readFileSync(join(VENDOR, "selftest.json"), "utf8"));
requests.push(["selftest", selftest.request, selftest.response]);

const WORKLOAD = `
import importlib, json, sys
import tamis.api
for _m in sorted({t.split(":")[0] for t in tamis.api.OPS.values()}):
    importlib.import_module(_m)
_answers = [tamis.api.handle(_r) for _r in _requests]
import micropip
def _origin(m):
    s = getattr(m, "__spec__", None)
    return None if s is None else s.origin
json.dumps({"answers": _answers, "modules": {k: _origin(v) for k, v in sorted(sys.modules.items())}})
`;

async function runtime(dir) {
  const { loadPyodide } = await import(pathToFileURL(join(dir, "pyodide.mjs")).href);
  // micropip comes from the app's own wheels (vendor/pyodide) in both runs
  const py = await loadPyodide({ indexURL: dir + "/", lockFileURL: join(TRIMMED, "pyodide-lock.json"),
    packageBaseUrl: TRIMMED + "/", stdout: () => {}, stderr: () => {} });
  py.unpackArchive(wheel, "wheel");
  await py.loadPackage("micropip", { messageCallback: () => {}, errorCallback: () => {} });
  return py;
}

async function workload(py) {
  py.globals.set("_requests", py.toPy(requests.map(([, r]) => r)));
  return JSON.parse(py.runPython(WORKLOAD));
}

const IMPORT_ALL = `
import json, sys, zipfile
_zip = "/home/pyodide/app_stdlib.zip"   # the app's trimmed zip, copied into the stock runtime's file system
_names = sorted({n.split("/")[0].removesuffix(".pyc") for n in zipfile.ZipFile(_zip).namelist()
                 if n.endswith(".pyc") and not n.startswith("site-packages")})
json.dumps(_names)
`;

function importEach(py, names) {
  // each in a fresh copy of sys.modules, so one module's failure or side effects do not hide another's
  py.globals.set("_names", py.toPy(names));
  return JSON.parse(py.runPython(`
import importlib, json, sys
_ok = {}
for _n in _names:
    _before = dict(sys.modules)
    try:
        importlib.import_module(_n)
        _ok[_n] = ""
    except BaseException as _e:
        _ok[_n] = "%s: %s" % (type(_e).__name__, _e)
    for _k in set(sys.modules) - set(_before):
        del sys.modules[_k]
json.dumps(_ok)
`));
}

const stock = await runtime(STOCK);
stock.FS.writeFile("/home/pyodide/app_stdlib.zip", new Uint8Array(readFileSync(join(TRIMMED, "python_stdlib.zip"))));
const stockRun = await workload(stock);
let trimmed = null;
let trimmedRun;
try {
  trimmed = await runtime(TRIMMED);
  trimmedRun = await workload(trimmed);
} catch (err) {
  check(false, "the workload runs on the trimmed stdlib", String(err && err.message || err).trim().split("\n").slice(-2).join(" "));
  trimmedRun = { answers: [], modules: {} };
}
const trimmedZip = JSON.parse(stock.runPython(`
import json, zipfile
json.dumps(zipfile.ZipFile("/home/pyodide/app_stdlib.zip").namelist())`));
const inZip = new Set(trimmedZip);

// 1. every module the stock run imported is in the trimmed zip, a wheel, or built in
const missing = [];
for (const [name, origin] of Object.entries(stockRun.modules)) {
  if (!origin || !origin.includes(".zip/")) continue;  // built in, frozen, a namespace, or a wheel's (site-packages)
  const inside = origin.split(".zip/")[1].replace(/\.py$/, ".pyc");
  if (!inZip.has(inside)) missing.push(`${name} (${inside})`);
}
check(missing.length === 0, "every stdlib module the workload imports is in the trimmed zip", missing.join(", "));
check(Object.keys(stockRun.modules).length > 100, "the workload imported the core, its ops and micropip",
  `${Object.keys(stockRun.modules).length} modules`);
check("tamis.project.evaluate" in stockRun.modules && "micropip" in stockRun.modules, "the workload reached the core and micropip");

// 2. the trimmed run imports the same modules and gives the golden answers
const a = Object.keys(stockRun.modules).sort().join(" ");
const b = Object.keys(trimmedRun.modules).sort().join(" ");
const onlyStock = Object.keys(stockRun.modules).filter((m) => !(m in trimmedRun.modules));
const onlyTrimmed = Object.keys(trimmedRun.modules).filter((m) => !(m in stockRun.modules));
check(a === b, "the trimmed stdlib imports the same modules", `only with the stock one: ${onlyStock}; only trimmed: ${onlyTrimmed}`);
const wrong = requests.filter(([, , want], i) => trimmedRun.answers[i] !== want).map(([name]) => name);
check(wrong.length === 0, `the ${requests.length} golden and self-test answers on the trimmed stdlib`, wrong.join(", "));

// 3. no module kept in the trimmed zip lost an import it needs
const names = JSON.parse(stock.runPython(IMPORT_ALL));
const withTrimmed = trimmed ? importEach(trimmed, names) : Object.fromEntries(names.map((n) => [n, "no trimmed runtime"]));
const withStock = importEach(stock, names);
const broken = names.filter((n) => withStock[n] === "" && withTrimmed[n] !== "").map((n) => `${n} (${withTrimmed[n]})`);
check(broken.length === 0, `each of the ${names.length} top-level modules kept imports as with the stock stdlib`, broken.join("; "));

console.log(`stdlib-complete: trimmed zip ${trimmedZip.length} entries; workload imported ${Object.keys(trimmedRun.modules).length} modules`);
console.log(`stdlib-complete: ${passed} passed, ${failed} failed`);
process.exit(failed ? 1 : 0);
