#!/usr/bin/env python3
"""Serve the built tamis web app (the folder ``webapp/``) on 127.0.0.1.

    python scripts/serve.py [--host 127.0.0.1] [--port 8765]

Static files only, with the headers the app relies on:

- MIME types: ``.wasm`` application/wasm (streaming compile), ``.js``/``.mjs``
  text/javascript (module workers), ``.webmanifest`` application/manifest+json;
- ``Cache-Control: no-cache`` on ``sw.js`` and ``vendor/build.js`` so the
  browser's update check always sees a new build;
- a Content-Security-Policy that allows the app's own origin only, plus
  ``'wasm-unsafe-eval'`` for Pyodide's WebAssembly.

Also a small library for the e2e tests and benchmarks::

    server = StaticServer(port=0).start()   # a free port
    server.url, server.requests             # request log: (method, path)
    server.statuses                         # response log: (path, status)
    server.stop()

    StaticServer(port=0, link=SlowLink(5e6 / 8, 0.1))   # every response through one slow link (benchmarks)
"""

from __future__ import annotations

import argparse
import http.server
import posixpath
import sys
import threading
import time
import urllib.parse
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
WEBAPP = ROOT / "webapp"

CSP = "; ".join([
    "default-src 'self'",
    "script-src 'self' 'wasm-unsafe-eval'",
    "worker-src 'self'",
    "connect-src 'self'",
    "img-src 'self'",
    # the hashes: the style blocks of the printable report (tamis.exchange.report_html.style_hashes)
    "style-src 'self' 'sha256-f6mNWspuxaW6wbGWwpZ2cnf7P45djtgYo5hKDvvpJbU=' 'sha256-l2R2w+yXNCglWCd27nArmQgp1akMfhVkP16FTxqKZsc=' 'sha256-FvfXMega31BajUskvpPuqTdv3sWbwNM463/ZS5MKsfc=' 'sha256-yJLqHTzskVQHnY37TyVr8ZYNbq3QaaxJfuEPAhj4/Xc='",
    "font-src 'self'",
    "manifest-src 'self'",
    "object-src 'none'",
    "base-uri 'none'",
    "form-action 'self'",
    "frame-ancestors 'none'",
])

MIME = {
    ".wasm": "application/wasm",
    ".js": "text/javascript",
    ".mjs": "text/javascript",
    ".json": "application/json",
    ".webmanifest": "application/manifest+json",
    ".html": "text/html; charset=utf-8",
    ".css": "text/css; charset=utf-8",
    ".svg": "image/svg+xml",
    ".png": "image/png",
    ".csv": "text/csv; charset=utf-8",
    ".whl": "application/zip",
    ".zip": "application/zip",
    ".txt": "text/plain; charset=utf-8",
}

NO_CACHE = {"/sw.js", "/vendor/build.js", "/vendor/manifest.json"}


class SlowLink:
    """One slow link shared by every response of a server (benchmarks): ``latency_s`` before each response
    (a round trip), then the bodies of all responses under way share ``bytes_per_s``, sent in 16 KiB pieces
    in the order they are ready. It stands for the phone's link as a whole, so the page, its workers and the
    service worker's precache all wait on it (a browser's own network emulation covers some of them only)."""

    PIECE = 16 * 1024

    def __init__(self, bytes_per_s: float, latency_s: float):
        self.bytes_per_s = float(bytes_per_s)
        self.latency_s = float(latency_s)
        self._lock = threading.Lock()
        self._free_at = 0.0   # when the link has sent everything handed to it so far (time.monotonic)

    def wait_latency(self) -> None:
        time.sleep(self.latency_s)

    def send(self, out, data: bytes) -> None:
        view = memoryview(data)
        for i in range(0, len(view), self.PIECE):
            piece = view[i:i + self.PIECE]
            with self._lock:
                start = max(time.monotonic(), self._free_at)
                self._free_at = start + len(piece) / self.bytes_per_s
                done = self._free_at
            time.sleep(max(0.0, done - time.monotonic()))
            out.write(piece)


def make_handler(root: Path, mounts: dict[str, Path], overrides: dict[str, tuple],
                 requests: list, quiet: bool, statuses: list | None = None, link: SlowLink | None = None):
    """A request handler class bound to one server's folders, overrides and log
    (``statuses``: (path, HTTP status) of each response, when given; ``link``: every response sent
    through that :class:`SlowLink`)."""

    class Handler(http.server.SimpleHTTPRequestHandler):
        extensions_map = {**http.server.SimpleHTTPRequestHandler.extensions_map, **MIME}
        def version_string(self) -> str:
            return "tamis-static"

        def __init__(self, *args, **kwargs):
            super().__init__(*args, directory=str(root), **kwargs)

        def translate_path(self, path: str) -> str:
            clean = posixpath.normpath(urllib.parse.unquote(urllib.parse.urlsplit(path).path))
            for prefix, folder in mounts.items():
                if clean == prefix.rstrip("/") or clean.startswith(prefix):
                    rel = clean[len(prefix):].lstrip("/")
                    base = folder.resolve()
                    target = (base / rel).resolve()
                    return str(target if target == base or base in target.parents else base / "__outside__")
            return super().translate_path(path)

        def send_response(self, code, message=None):
            if link is not None:
                link.wait_latency()
            if statuses is not None and getattr(self, "path", None) is not None:
                statuses.append((self._path_only(), code))
            super().send_response(code, message)

        def _path_only(self) -> str:
            return posixpath.normpath(urllib.parse.unquote(urllib.parse.urlsplit(self.path).path))

        def do_GET(self):
            requests.append((self.command, self.path))
            override = overrides.get(self._path_only())
            if override is not None:
                body, ctype, code = (*override, 200)[:3]
                self.send_response(code)
                self.send_header("Content-Type", ctype)
                self.send_header("Content-Length", str(len(body)))
                self.end_headers()
                if link is not None:
                    link.send(self.wfile, body)
                else:
                    self.wfile.write(body)
                return
            super().do_GET()

        def copyfile(self, source, outputfile):
            if link is None:
                return super().copyfile(source, outputfile)
            link.send(outputfile, source.read())

        def do_HEAD(self):
            requests.append((self.command, self.path))
            super().do_HEAD()

        def end_headers(self):
            path = self._path_only()
            self.send_header("Content-Security-Policy", CSP)
            self.send_header("X-Content-Type-Options", "nosniff")
            self.send_header("Referrer-Policy", "no-referrer")
            if path in NO_CACHE:
                self.send_header("Cache-Control", "no-cache")
            super().end_headers()

        def log_message(self, format, *args):  # noqa: A002 (stdlib signature)
            if not quiet:
                sys.stderr.write("%s - %s\n" % (self.address_string(), format % args))

    return Handler


class StaticServer:
    """The static server as a library: start on a port (0 = free), log requests, stop.

    ``mounts`` maps a URL prefix ("/__e2e__/") to another folder (tests only);
    ``overrides`` maps a URL path to ``(body_bytes, content_type[, status])``
    served instead of the file (tests only: a build manifest with a new
    version, a missing runtime file).
    """

    def __init__(self, root: Path = WEBAPP, host: str = "127.0.0.1", port: int = 0,
                 mounts: dict[str, Path] | None = None, quiet: bool = True, link: SlowLink | None = None):
        self.root = Path(root)
        self.host = host
        self.requests: list[tuple[str, str]] = []
        #: (path, status) of each response: a 200 is a download, a 304 a confirmation of the HTTP cache
        self.statuses: list[tuple[str, int]] = []
        self.overrides: dict[str, tuple] = {}
        handler = make_handler(self.root, dict(mounts or {}), self.overrides, self.requests, quiet, self.statuses,
                               link)
        self.httpd = http.server.ThreadingHTTPServer((host, port), handler)
        self.httpd.daemon_threads = True
        self.port = self.httpd.server_address[1]
        self._thread: threading.Thread | None = None

    @property
    def url(self) -> str:
        return f"http://{self.host}:{self.port}/"

    def start(self) -> "StaticServer":
        self._thread = threading.Thread(target=self.httpd.serve_forever, name="tamis-static", daemon=True)
        self._thread.start()
        return self

    def stop(self) -> None:
        self.httpd.shutdown()
        self.httpd.server_close()
        if self._thread is not None:
            self._thread.join(timeout=5)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Serve the built tamis web app (webapp/).")
    parser.add_argument("--host", default="127.0.0.1", help="address to bind (default 127.0.0.1)")
    parser.add_argument("--port", type=int, default=8765, help="port (default 8765; 0 picks a free one)")
    parser.add_argument("--quiet", action="store_true", help="do not log each request")
    args = parser.parse_args(argv)
    if not (WEBAPP / "vendor" / "manifest.json").is_file():
        print("webapp/vendor/manifest.json is missing: run `make build` first", file=sys.stderr)
        return 1
    try:
        server = StaticServer(WEBAPP, args.host, args.port, quiet=args.quiet)
    except OSError as err:
        print(f"cannot listen on {args.host}:{args.port}: {err}", file=sys.stderr)
        return 1
    print(f"tamis is served at {server.url}  (Ctrl-C to stop)", flush=True)
    if args.host not in ("127.0.0.1", "localhost", "::1"):
        print("note: service workers need a secure context; over plain http only 127.0.0.1/localhost work",
              file=sys.stderr)
    try:
        server.httpd.serve_forever()
    except KeyboardInterrupt:
        pass
    finally:
        server.httpd.server_close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
