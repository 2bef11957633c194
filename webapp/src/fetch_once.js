// One download per file of a build, whoever asks first: the service worker's
// precache (sw.js, through importScripts) or the Python worker's boot
// (worker/worker.js, as a module import). On a first visit both run at once,
// and each big runtime file used to be downloaded by both.
//
//   self.tamisFetchOnce(url, file, cacheName, {onBytes, fetchImpl, onCacheError}) -> Promise<Response>
//
// `file` is the build manifest's entry {path, size, sha256}. Under the Web Lock
// "tamis-download <cacheName> <path>" it answers from the cache `cacheName` when
// the file is there (only checked bytes are ever put there); otherwise it
// downloads the file once, counting the bytes as they arrive (onBytes(received,
// size), and a message {type: "bytes", cache, path, received, size} on the
// BroadcastChannel "tamis-download", so whoever waits on the lock can show them
// too), checks size and sha256 against the manifest, puts it in the cache and
// answers with those bytes. Whoever comes second waits for the lock and then
// finds the file in the cache. A download that fails or differs from the
// manifest caches nothing (an error status is answered as it is, for the caller
// to report). Where Web Locks are missing it simply downloads.
//
// A plain script (no import or export), so that it runs both as a classic
// script and as a module.

(function () {
  const CHANNEL = "tamis-download";
  const channel = typeof BroadcastChannel === "function" ? new BroadcastChannel(CHANNEL) : null;

  async function sha256Hex(buffer) {
    const digest = new Uint8Array(await crypto.subtle.digest("SHA-256", buffer));
    return Array.from(digest, (b) => b.toString(16).padStart(2, "0")).join("");
  }

  async function download(url, file, cacheName, onBytes, fetchImpl, onCacheError) {
    const response = await fetchImpl(url, { cache: "no-cache", credentials: "same-origin" });
    if (!response.ok) return response;
    const chunks = [];
    let received = 0;
    let told = 0;
    const tellBytes = () => {
      onBytes(received, file.size);
      if (channel) channel.postMessage({ type: "bytes", cache: cacheName, path: file.path, received, size: file.size });
    };
    if (response.body && response.body.getReader) {
      const reader = response.body.getReader();
      for (;;) {
        const { done, value } = await reader.read();
        if (done) break;
        chunks.push(value);
        received += value.byteLength;
        const now = Date.now();
        if (now - told >= 100) { told = now; tellBytes(); }
      }
    } else {
      const all = new Uint8Array(await response.arrayBuffer());
      chunks.push(all);
      received = all.byteLength;
    }
    tellBytes();
    const body = new Uint8Array(received);
    let at = 0;
    for (const c of chunks) { body.set(c, at); at += c.byteLength; }
    if (body.byteLength !== file.size || (await sha256Hex(body)) !== file.sha256) {
      throw new Error(`${file.path} differs from the build manifest (the files changed after the build; run make build)`);
    }
    const headers = new Headers(response.headers);
    if (cacheName && self.caches) {
      await caches.open(cacheName).then((cache) => cache.put(url, new Response(body, { status: 200, statusText: "OK", headers })))
        .catch((err) => { if (!onCacheError(err)) throw err; });
    }
    return new Response(body, { status: 200, statusText: "OK", headers });
  }

  // A cached entry was checked against the manifest before it was put (here or by the service worker's
  // precache), and the service worker serves its entries unchecked too: it is answered as it is, streaming.
  async function fromCache(url, cacheName, onCacheError) {
    if (!cacheName || !self.caches) return null;
    try {
      return (await (await caches.open(cacheName)).match(url)) || null;
    } catch (err) {
      if (!onCacheError(err)) throw err;
      return null;
    }
  }

  // onCacheError(err) -> true when the caller can do without the cache (the Python worker: Cache Storage
  // may be refused, e.g. in a private window, and the boot then simply downloads); the service worker's
  // precache needs the cache, so there an error rejects.
  self.tamisFetchOnce = function (url, file, cacheName,
    { onBytes = () => {}, fetchImpl = self.fetch.bind(self), onCacheError = () => false } = {}) {
    const run = async () => (await fromCache(url, cacheName, onCacheError)) ||
      download(url, file, cacheName, onBytes, fetchImpl, onCacheError);
    const locks = self.navigator && self.navigator.locks;
    if (!locks || !cacheName) return run();
    return locks.request(`${CHANNEL} ${cacheName} ${file.path}`, run);
  };
  self.tamisDownloadChannel = CHANNEL;
})();
