// Runs scripts/pyodide_bytecode.py inside Pyodide (so the bytecode magic matches
// the runtime's CPython) and writes the zip it makes.
//
//   node scripts/pyodide_bytecode.mjs PYODIDE_DIR stdlib OUT_ZIP
//   node scripts/pyodide_bytecode.mjs PYODIDE_DIR wheel IN_WHEEL OUT_WHEEL
import { pathToFileURL } from "node:url";
import { readFileSync, writeFileSync } from "node:fs";

const [dir, mode, ...files] = process.argv.slice(2);
const { loadPyodide } = await import(pathToFileURL(dir + "/pyodide.mjs").href);
const py = await loadPyodide({ indexURL: dir + "/" });
py.runPython(readFileSync(new URL("./pyodide_bytecode.py", import.meta.url), "utf8"));
const out = "/home/pyodide/out.zip";
if (mode === "stdlib") {
  py.globals.get("add_stdlib_pyc")(out);
  writeFileSync(files[0], py.FS.readFile(out));
} else if (mode === "wheel") {
  py.FS.writeFile("/home/pyodide/in.whl", new Uint8Array(readFileSync(files[0])));
  py.globals.get("add_wheel_pyc")("/home/pyodide/in.whl", out);
  writeFileSync(files[1], py.FS.readFile(out));
} else {
  throw new Error(`unknown mode ${mode}: stdlib or wheel`);
}
