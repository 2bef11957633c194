// The Python memory snapshot kept on this device (docs/webapp.md "Boot paths").
//
// A snapshot is Pyodide's makeMemorySnapshot(): a 48-byte header (magic, offset of
// the heap, length of a JSON block, padding, the runtime's 32-byte BUILD_ID at
// bytes 16-48), the JSON block, then the whole wasm heap (30 MiB). It is made on
// the device, after a plain boot, by a second Python worker (worker.js?role=snapshot),
// and kept in Cache Storage, in a cache of its own ("tamis.snapshot": not "tamis-",
// so the service worker's clean-up of old builds leaves it alone; its key says
// which build it belongs to).
//
// Stored sparse: most of the heap is zero pages, so only the non-zero 4 KiB pages
// are written, with their page numbers:
//   [u32 magic "TSP1", u32 raw length, u32 page size, u32 pages kept] [u32 page number] x kept [pages]
// The entry's headers carry the key (format, runtime BUILD_ID, build version) and the
// snapshot's own BUILD_ID, so a boot decides from the headers alone, before the body
// is read, whether the entry can be used.

export const SNAPSHOT_FORMAT = 1;
export const SNAPSHOT_CACHE = "tamis.snapshot";
const PAGE = 4096;
const MAGIC = 0x31505354; // "TSP1" little-endian
const PYODIDE_MAGIC = 0x706e7300; // the first word of Pyodide's own snapshot
const KEY_HEADER = "x-tamis-snapshot-key";
const BUILD_ID_HEADER = "x-tamis-snapshot-build-id";
const RAW_HEADER = "x-tamis-snapshot-raw-bytes";

/** The key a snapshot is kept under: what must be equal for it to be used. */
export function snapshotKey(manifest) {
  return `${SNAPSHOT_FORMAT}|${manifest.pyodide_build_id}|${manifest.version}`;
}

function entryUrl(site) {
  return new URL("__tamis_snapshot__/python.bin", site).href;
}

function stateUrl(site) {
  return new URL("__tamis_snapshot__/state.json", site).href;
}

/** The BUILD_ID written in a Pyodide snapshot's header (bytes 16-48), as Pyodide spells it. */
export function headerBuildId(snapshot) {
  if (snapshot.byteLength < 48) return null;
  const words = new Uint32Array(snapshot.buffer.slice(snapshot.byteOffset + 16, snapshot.byteOffset + 48));
  return Array.from(words, (n) => n.toString(16).padStart(8, "0")).join("");
}

/** Pyodide's snapshot -> the stored bytes (non-zero pages only). */
export function encodeSparse(snapshot) {
  const raw = snapshot.byteLength;
  const pages = Math.ceil(raw / PAGE);
  const kept = [];
  const whole = Math.floor(raw / PAGE);
  const words = new Uint32Array(snapshot.buffer, snapshot.byteOffset, Math.floor(raw / 4));
  for (let p = 0; p < pages; p += 1) {
    let nonzero = false;
    if (p < whole && snapshot.byteOffset % 4 === 0) {
      for (let i = p * (PAGE / 4), end = i + PAGE / 4; i < end; i += 1) if (words[i] !== 0) { nonzero = true; break; }
    } else {
      for (let i = p * PAGE, end = Math.min(raw, i + PAGE); i < end; i += 1) if (snapshot[i] !== 0) { nonzero = true; break; }
    }
    if (nonzero) kept.push(p);
  }
  const head = 16 + 4 * kept.length;
  const out = new Uint8Array(head + kept.length * PAGE);
  const view = new DataView(out.buffer);
  view.setUint32(0, MAGIC, true);
  view.setUint32(4, raw, true);
  view.setUint32(8, PAGE, true);
  view.setUint32(12, kept.length, true);
  kept.forEach((p, i) => {
    view.setUint32(16 + 4 * i, p, true);
    out.set(snapshot.subarray(p * PAGE, Math.min(raw, (p + 1) * PAGE)), head + i * PAGE);
  });
  return out;
}

/** The stored bytes -> Pyodide's snapshot (a snapshot stored whole is answered as it is). Throws on a malformed entry. */
export function decodeSparse(stored) {
  const view = new DataView(stored.buffer, stored.byteOffset, stored.byteLength);
  if (stored.byteLength >= 48 && view.getUint32(0, true) === PYODIDE_MAGIC) return stored;
  if (stored.byteLength < 16 || view.getUint32(0, true) !== MAGIC) throw new Error("not a stored tamis snapshot");
  const raw = view.getUint32(4, true);
  const page = view.getUint32(8, true);
  const kept = view.getUint32(12, true);
  const head = 16 + 4 * kept;
  if (page !== PAGE || stored.byteLength !== head + kept * PAGE) throw new Error("the stored snapshot is truncated");
  const out = new Uint8Array(raw);
  for (let i = 0; i < kept; i += 1) {
    const p = view.getUint32(16 + 4 * i, true);
    const at = p * PAGE;
    if (at >= raw) throw new Error("the stored snapshot has a page out of range");
    out.set(stored.subarray(head + i * PAGE, head + i * PAGE + Math.min(PAGE, raw - at)), at);
  }
  return out;
}

async function openCache() {
  if (!self.caches) throw new Error("Cache Storage is not available");
  return caches.open(SNAPSHOT_CACHE);
}

/**
 * Starts reading the stored entry at once (before the build manifest, and so the key, is known); resolves
 * with {hit, body} (body: a promise of the stored bytes, already being read) or {error}.
 */
export function readAhead(site) {
  return openCache().then((cache) => cache.match(entryUrl(site))).then((hit) => {
    if (!hit) return { hit: null };
    const body = hit.arrayBuffer();
    body.catch(() => {});
    return { hit, body };
  }, (err) => ({ error: err }));
}

/**
 * Looks up the stored snapshot for `key` (from readAhead's answer). Answers {found: false, reason} (missing,
 * stale, unreadable; a stale entry is deleted) or {found: true, buildId, rawBytes, storedBytes,
 * body: () => Promise<Uint8Array>}.
 */
export async function lookUp(site, key, ahead = readAhead(site)) {
  const { hit, body, error } = await ahead;
  if (error) return { found: false, reason: "unreadable", detail: String(error && error.message ? error.message : error) };
  if (!hit) return { found: false, reason: "missing" };
  if (hit.headers.get(KEY_HEADER) !== key) {
    await discard(site);
    return { found: false, reason: "stale", detail: `stored for ${hit.headers.get(KEY_HEADER)}` };
  }
  return {
    found: true,
    buildId: hit.headers.get(BUILD_ID_HEADER),
    rawBytes: Number(hit.headers.get(RAW_HEADER)) || null,
    storedBytes: Number(hit.headers.get("content-length")) || null,
    body: async () => decodeSparse(new Uint8Array(await body)),
  };
}

/** Stores Pyodide's snapshot under `key`; resolves with the bytes stored. Rejects (e.g. quota) with the error. */
export async function store(site, key, snapshot) {
  const stored = encodeSparse(snapshot);
  const cache = await openCache();
  await cache.put(entryUrl(site), new Response(stored, {
    headers: {
      "content-type": "application/octet-stream",
      "content-length": String(stored.byteLength),
      [KEY_HEADER]: key,
      [BUILD_ID_HEADER]: headerBuildId(snapshot),
      [RAW_HEADER]: String(snapshot.byteLength),
    },
  }));
  return stored.byteLength;
}

/** Deletes the stored snapshot (a refused one); never throws. */
export async function discard(site) {
  try {
    await (await openCache()).delete(entryUrl(site));
  } catch {
    // nothing stored, or no Cache Storage: nothing to delete
  }
}

/** {key, refused}: how many times a snapshot of this key was refused on this device. */
export async function readState(site) {
  try {
    const hit = await (await openCache()).match(stateUrl(site));
    return hit ? await hit.json() : {};
  } catch {
    return {};
  }
}

export async function writeState(site, state) {
  try {
    await (await openCache()).put(stateUrl(site), new Response(JSON.stringify(state),
      { headers: { "content-type": "application/json" } }));
  } catch {
    // the count is a courtesy (it stops remaking a snapshot this device refuses); losing it is harmless
  }
}
