// tamis service worker: the whole site, Python runtime included, is precached
// at install from the build manifest, so the app opens and computes with no
// network. Cache-first for same-origin GETs; nothing is ever fetched from
// another origin.
//
// vendor/build.js (written by scripts/build_webapp.py) defines
// self.TAMIS_BUILD = {version, files: [{path, sha256, size}], ...}. Because it
// is imported here, a new build changes a byte the browser's update check
// compares, and a new worker installs beside the old one. It then waits until
// the page sends {type: "tamis-skip-waiting"} (the user chose to update).
//
// Messages to pages: {type: "tamis-precache", version, total, done, bytes,
// total_bytes, complete, error}. A page may ask {type: "tamis-status"}; the
// answer (same shape) checks that every manifest file is in the cache; the page
// knows which worker sent a message from event.source.
// vendor/manifest.json is answered from TAMIS_BUILD, the build this worker serves.

/* global TAMIS_BUILD */
importScripts("./vendor/build.js", "./src/fetch_once.js");

const BUILD = self.TAMIS_BUILD;
const CACHE_PREFIX = "tamis-";
const CACHE = CACHE_PREFIX + BUILD.version;
const SCOPE = new URL(self.registration.scope);
const FILES = BUILD.files;
const TOTAL_BYTES = FILES.reduce((sum, f) => sum + f.size, 0);
const PARALLEL = 4;

function urlOf(path) {
  return new URL(path, SCOPE).href;
}

async function tell(message) {
  const pages = await self.clients.matchAll({ type: "window", includeUncontrolled: true });
  for (const page of pages) page.postMessage({ type: "tamis-precache", version: BUILD.version, ...message });
}

// Each file through tamisFetchOnce (src/fetch_once.js): a file the Python worker's
// boot already downloaded (and checked) into this cache is taken from there, and
// one it is downloading is waited for, so no file is downloaded twice; the others
// are downloaded with "no-cache" (the HTTP cache may serve a file only after the
// server confirmed it, 304, so an update downloads only the files that changed)
// and checked against the manifest's size and sha256 before they are cached.
async function precacheOne(file, onBytes) {
  const response = await self.tamisFetchOnce(urlOf(file.path), file, CACHE, { onBytes });
  if (!response.ok) throw new Error(`${file.path}: HTTP ${response.status}`);
  if (response.body) await response.body.cancel();
  return file.size;
}

async function precache() {
  await caches.open(CACHE);
  const todo = [...FILES];
  let done = 0;
  let bytes = 0;            // of the files done
  const partial = new Map(); // path -> bytes received so far of a file being downloaded
  let lastTold = 0;
  const progress = () => bytes + [...partial.values()].reduce((a, b) => a + b, 0);
  const tellNow = () => tell({ total: FILES.length, done, bytes: progress(), total_bytes: TOTAL_BYTES,
    complete: false, error: null });
  await tellNow();
  // bytes of a file the Python worker's boot is downloading, which a lane waits for
  const heard = typeof BroadcastChannel === "function" ? new BroadcastChannel(self.tamisDownloadChannel) : null;
  const waitingFor = new Set();
  if (heard) {
    heard.onmessage = (event) => {
      const m = event.data || {};
      if (m.type !== "bytes" || m.cache !== CACHE || !waitingFor.has(m.path)) return;
      partial.set(m.path, m.received);
      const now = Date.now();
      if (now - lastTold > 100) { lastTold = now; tellNow(); }
    };
  }
  async function lane() {
    while (todo.length) {
      const file = todo.shift();
      waitingFor.add(file.path);
      bytes += await precacheOne(file, (received) => {
        partial.set(file.path, received);
        const now = Date.now();
        if (now - lastTold > 100) { lastTold = now; tellNow(); }
      });
      partial.delete(file.path);
      waitingFor.delete(file.path);
      done += 1;
      const now = Date.now();
      if (now - lastTold > 100 || done === FILES.length) {
        lastTold = now;
        await tellNow();
      }
    }
  }
  try {
    await Promise.all(Array.from({ length: PARALLEL }, lane));
    if (heard) heard.close();
  } catch (err) {
    if (heard) heard.close();
    await caches.delete(CACHE);
    await tell({ total: FILES.length, done, bytes, total_bytes: TOTAL_BYTES, complete: false,
      error: `saving the app for offline use failed: ${err.message}` });
    throw err;
  }
  await tell({ total: FILES.length, done, bytes, total_bytes: TOTAL_BYTES, complete: true, error: null });
}

async function cacheStatus() {
  const cache = await caches.open(CACHE);
  let done = 0;
  let bytes = 0;
  for (const file of FILES) {
    if (await cache.match(urlOf(file.path))) { done += 1; bytes += file.size; }
  }
  return { total: FILES.length, done, bytes, total_bytes: TOTAL_BYTES, complete: done === FILES.length,
    error: null };
}

self.addEventListener("install", (event) => {
  event.waitUntil(precache());
});

self.addEventListener("activate", (event) => {
  event.waitUntil((async () => {
    const names = await caches.keys();
    await Promise.all(names.filter((n) => n.startsWith(CACHE_PREFIX) && n !== CACHE).map((n) => caches.delete(n)));
    await self.clients.claim();
  })());
});

self.addEventListener("message", (event) => {
  const msg = event.data || {};
  if (msg.type === "tamis-skip-waiting") {
    self.skipWaiting();
  } else if (msg.type === "tamis-status" && event.source) {
    // The page tells whether this answer is about its own version by comparing
    // event.source with its controller (Firefox has no self.serviceWorker here).
    event.waitUntil(cacheStatus().then((s) => event.source.postMessage(
      { type: "tamis-precache", version: BUILD.version, ...s })));
  }
});

self.addEventListener("fetch", (event) => {
  const request = event.request;
  if (request.method !== "GET") return;
  const url = new URL(request.url);
  if (url.origin !== SCOPE.origin) {
    // The page's CSP already forbids this; never fetch another origin for it.
    event.respondWith(Response.error());
    return;
  }
  if (url.pathname === new URL("vendor/manifest.json", SCOPE).pathname) {
    // The manifest of the build this worker serves, so pages and the Python
    // worker always see the file list that matches the cached files.
    event.respondWith(new Response(JSON.stringify(BUILD), { headers: { "Content-Type": "application/json" } }));
    return;
  }
  event.respondWith((async () => {
    const cache = await caches.open(CACHE);
    const key = url.pathname === SCOPE.pathname ? urlOf("index.html") : request;
    const hit = await cache.match(key, { ignoreSearch: true });
    if (hit) return hit;
    try {
      return await fetch(request);
    } catch (err) {
      if (request.mode === "navigate") {
        const shell = await cache.match(urlOf("index.html"));
        if (shell) return shell;
      }
      throw err;
    }
  })());
});
