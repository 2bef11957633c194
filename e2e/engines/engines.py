"""One small browser interface for the engine suite, and its three engines.

A scenario is written once against ``Engine`` and runs in:

- ``chromium``: Debian's chromium through Playwright (``executable_path``);
- ``firefox``: Debian's firefox-esr, started with ``--remote-debugging-port``
  and driven over WebDriver BiDi (a websocket; no geckodriver);
- ``webkit``: WebKitGTK's MiniBrowser through ``WebKitWebDriver`` (classic
  WebDriver over HTTP), on an Xvfb display started with ``-noreset``.

The interface: ``open(url)``, ``run(js, *args)`` (the body of an async function;
its arguments are ``args``; it returns a JSON value), ``wait(js, *args)``,
``type(css, text)``, ``click(css)``, ``click_text(text)``, ``select(css, value)``,
``text(css)``, ``attr(css, name)``, ``go_offline()``, ``go_online()``, ``reload()``,
``console_errors()``. Typing and clicking are the engine's own input events
(Playwright, BiDi ``input.performActions``, WebDriver element commands);
choosing an option of a ``<select>`` is done by script in every engine (a
native drop-down is not driven the same way by the three).

Errors: ``console_errors()`` gives what the engine's own channel reported
(Playwright's console and page errors, BiDi's ``log.entryAdded``; WebKit's
driver has none) plus what the e2e collector gathered inside the page from
the page, the Python worker and the service worker (``e2e/pages/errors.js``).

A missing browser or driver is an error naming the Debian package to install,
never a skip.
"""

from __future__ import annotations

import json
import os
import shutil
import socket
import subprocess
import tempfile
import threading
import time
import urllib.error
import urllib.request
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
CHROMIUM = os.environ.get("CHROMIUM", "/usr/bin/chromium")
FIREFOX = os.environ.get("FIREFOX", "/usr/bin/firefox-esr")
WEBKIT_DRIVER = os.environ.get("WEBKIT_DRIVER", "/usr/bin/WebKitWebDriver")
MINIBROWSER = os.environ.get("MINIBROWSER", "/usr/lib/x86_64-linux-gnu/webkit2gtk-4.1/MiniBrowser")
XVFB = os.environ.get("XVFB", "/usr/bin/Xvfb")
ENGINES = ("chromium", "firefox", "webkit")
TIMEOUT_S = 120.0
#: (engine, visit) -> {"core_ready_ms": ..., "offline_ready_ms": ...}, filled by the tests, printed by conftest.
BOOT: dict[tuple[str, str], dict] = {}
#: engine -> seconds spent (browser start and stop included), filled by conftest.
SPENT: dict[str, float] = {}
INSTALL_HINT = "run `make setup` as root (scripts/system-deps.sh installs it) or `apt-get install {pkg}`"


class EngineMissing(RuntimeError):
    """A browser or driver of the engine suite is not installed."""


class EngineError(RuntimeError):
    """The driver answered with an error."""


def require(path: str, package: str, what: str) -> str:
    if not (Path(path).is_file() and os.access(path, os.X_OK)):
        raise EngineMissing(f"{what} not found at {path}: {INSTALL_HINT.format(pkg=package)}")
    return path


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def stop_process(proc: subprocess.Popen, terminate: bool = True) -> None:
    """End a process this suite started (by its own handle): terminate, then kill after 10 s."""
    if terminate:
        proc.terminate()
    try:
        proc.wait(timeout=10)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait()


# The script helpers every engine runs in the page: find an element, report
# values as JSON so the three drivers' value encodings never matter.
_FIND = """
const find = (css) => {
  const el = document.querySelector(css);
  if (!el) throw new Error('no element matches ' + css);
  return el;
};
"""


class Engine:
    """What a scenario may ask of a browser. Subclasses implement the ``_`` methods."""

    name = "?"

    def __init__(self):
        self.native_errors: list[str] = []
        self.page_errors: list[str] = []
        self._pick = 0

    # -- to implement ---------------------------------------------------------------------------
    def _call(self, body: str, args: list):
        """Run ``async (...args) => { body }`` in the page and return its JSON-decoded result."""
        raise NotImplementedError

    def open(self, url: str) -> None:
        raise NotImplementedError

    def _reload(self) -> None:
        raise NotImplementedError

    def type(self, css: str, text: str) -> None:
        raise NotImplementedError

    def click(self, css: str) -> None:
        raise NotImplementedError

    def go_offline(self) -> bool:
        """Tell the engine to be offline if its driver can; True if it did. The caller stops the server too."""
        return False

    def go_online(self) -> None:
        pass

    def close(self) -> None:
        raise NotImplementedError

    # -- shared ---------------------------------------------------------------------------------
    def run(self, body: str, *args):
        """The body of an async function with ``args`` as its arguments; returns its result (JSON)."""
        return self._call(body, list(args))

    def wait(self, body: str, *args, timeout: float = TIMEOUT_S, what: str | None = None):
        """Poll ``body`` (async function body) until it returns something truthy; returns it."""
        deadline = time.monotonic() + timeout
        last_error = None
        while True:
            try:
                value = self._call(body, list(args))
                if value:
                    return value
            except EngineError as err:  # the page may be navigating
                last_error = err
            if time.monotonic() > deadline:
                raise TimeoutError(f"{self.name}: waited {timeout:.0f} s for {what or body!r}"
                                   + (f" (last error: {last_error})" if last_error else ""))
            time.sleep(0.1)

    def wait_for(self, css: str, timeout: float = TIMEOUT_S) -> None:
        self.wait("return document.querySelector(arguments[0]) !== null;", css,
                  timeout=timeout, what=f"an element matching {css}")

    def text(self, css: str) -> str:
        return self.run(_FIND + "return find(arguments[0]).textContent;", css)

    def attr(self, css: str, name: str):
        return self.run(_FIND + "return find(arguments[0]).getAttribute(arguments[1]);", css, name)

    def value(self, css: str) -> str:
        return self.run(_FIND + "return find(arguments[0]).value;", css)

    def select(self, css: str, value: str) -> None:
        self.run(_FIND + """
            const el = find(arguments[0]);
            if (![...el.options].some((o) => o.value === arguments[1])) throw new Error('no option ' + arguments[1]);
            el.value = arguments[1];
            el.dispatchEvent(new Event('input', {bubbles: true}));
            el.dispatchEvent(new Event('change', {bubbles: true}));
            return true;""", css, value)

    def click_text(self, text: str, tags: str = "button, a") -> None:
        """Click the first visible button or link whose text is ``text`` (trimmed)."""
        self._pick += 1
        mark = f"e2e-{self._pick}"
        found = self.run("""
            const el = [...document.querySelectorAll(arguments[0])].find((e) =>
                e.textContent.trim() === arguments[1] && e.getClientRects().length > 0);
            if (!el) return false;
            el.setAttribute('data-e2e-pick', arguments[2]);
            return true;""", tags, text, mark)
        if not found:
            raise EngineError(f"{self.name}: no visible {tags} with the text {text!r}")
        self.click(f"[data-e2e-pick='{mark}']")

    def harvest(self) -> None:
        """Move the in-page collector's errors into ``page_errors`` (before the page goes away)."""
        try:
            got = self.run("return window.tamisE2E ? window.tamisE2E.take() : [];")
        except EngineError:
            return
        self.page_errors.extend(got or [])

    def reload(self) -> None:
        self.harvest()
        self._reload()

    def console_errors(self) -> list[str]:
        self.harvest()
        return [f"{self.name} console: {e}" for e in self.native_errors] + \
               [f"{self.name} in page: {e}" for e in self.page_errors]

    def clear_errors(self) -> None:
        self.harvest()
        self.native_errors.clear()
        self.page_errors.clear()


# ---- chromium: Playwright ----------------------------------------------------------------------------


class Chromium(Engine):
    name = "chromium"

    def __init__(self):
        super().__init__()
        require(CHROMIUM, "chromium", "chromium")
        from playwright.sync_api import sync_playwright

        self._pw = sync_playwright().start()
        self.browser = self._pw.chromium.launch(executable_path=CHROMIUM, headless=True)
        self.context = self.browser.new_context(viewport={"width": 390, "height": 844})
        self.page = self.context.new_page()
        self.page.set_default_timeout(TIMEOUT_S * 1000)
        self.page.on("pageerror", lambda err: self.native_errors.append(f"pageerror: {err}"))
        self.page.on("console", lambda m: m.type == "error" and self.native_errors.append(m.text))

    def _call(self, body, args):
        from playwright.sync_api import Error

        try:
            return self.page.evaluate("async (args) => { const f = async function () {" + body +
                                      "}; return f.apply(null, args); }", args)
        except Error as err:
            raise EngineError(str(err)) from None

    def open(self, url):
        self.harvest()
        self.page.goto(url)

    def _reload(self):
        self.page.reload()

    def type(self, css, text):
        self.page.fill(css, text)

    def click(self, css):
        self.page.click(css)

    def go_offline(self):
        self.context.set_offline(True)
        return True

    def go_online(self):
        self.context.set_offline(False)

    def close(self):
        self.context.close()
        self.browser.close()
        self._pw.stop()


# ---- firefox: WebDriver BiDi over a websocket --------------------------------------------------------

#: Firefox preferences for a quiet test profile: no first-run pages, no update
#: or telemetry traffic. (The remote agent adds its own recommended set.)
FIREFOX_PREFS = {
    "browser.shell.checkDefaultBrowser": False,
    "browser.startup.homepage_override.mstone": "ignore",
    "browser.aboutwelcome.enabled": False,
    "datareporting.policy.dataSubmissionEnabled": False,
    "datareporting.healthreport.uploadEnabled": False,
    "toolkit.telemetry.reportingpolicy.firstRun": False,
    "app.update.disabledForTesting": True,
    "app.normandy.enabled": False,
    "browser.safebrowsing.malware.enabled": False,
    "browser.safebrowsing.phishing.enabled": False,
    "browser.safebrowsing.downloads.enabled": False,
    "network.captive-portal-service.enabled": False,
    "network.connectivity-service.enabled": False,
    "extensions.update.enabled": False,
    "extensions.getAddons.cache.enabled": False,
    "services.settings.server": "data:,#remote-settings-dummy/v1",
    "messaging-system.rsexperimentloader.enabled": False,
    "browser.newtabpage.enabled": False,
}


class BiDi:
    """A minimal WebDriver BiDi client: commands by id, events to a callback."""

    def __init__(self, url: str, on_event):
        import websocket  # websocket-client, pinned in pyproject's test extra

        self.ws = websocket.create_connection(url, timeout=10, suppress_origin=True)
        self.ws.settimeout(None)
        self.on_event = on_event
        self._next = 0
        self._lock = threading.Lock()
        self._waiting: dict[int, dict] = {}
        self._done = threading.Condition()
        self._closed = False
        self._reader = threading.Thread(target=self._read, name="bidi-reader", daemon=True)
        self._reader.start()

    def _read(self):
        while True:
            try:
                raw = self.ws.recv()
                if not raw:
                    raise EOFError("closed")
            except Exception:  # closed
                with self._done:
                    self._closed = True
                    self._done.notify_all()
                return
            msg = json.loads(raw)
            if "id" in msg and msg.get("type") in ("success", "error"):
                with self._done:
                    self._waiting[msg["id"]] = msg
                    self._done.notify_all()
            elif msg.get("type") == "event":
                try:
                    self.on_event(msg["method"], msg["params"])
                except Exception:  # a callback error must not stop the reader
                    pass

    def send(self, method: str, params: dict, timeout: float = TIMEOUT_S) -> dict:
        with self._lock:
            self._next += 1
            cid = self._next
        self.ws.send(json.dumps({"id": cid, "method": method, "params": params}))
        deadline = time.monotonic() + timeout
        with self._done:
            while cid not in self._waiting:
                if self._closed:
                    raise EngineError(f"firefox closed the BiDi connection during {method}")
                left = deadline - time.monotonic()
                if left <= 0:
                    raise TimeoutError(f"firefox: no answer to {method} in {timeout:.0f} s")
                self._done.wait(left)
            msg = self._waiting.pop(cid)
        if msg["type"] == "error":
            raise EngineError(f"{method}: {msg.get('error')}: {msg.get('message')}")
        return msg["result"]

    def close(self):
        try:
            self.ws.close()
        except Exception:
            pass


class Firefox(Engine):
    name = "firefox"

    def __init__(self):
        super().__init__()
        require(FIREFOX, "firefox-esr", "firefox-esr")
        self.profile = Path(tempfile.mkdtemp(prefix="tamis-firefox-"))
        (self.profile / "user.js").write_text(
            "".join(f'user_pref("{k}", {json.dumps(v)});\n' for k, v in FIREFOX_PREFS.items()), encoding="utf-8")
        self.log = open(self.profile / "firefox.log", "w+", encoding="utf-8", errors="replace")
        self.proc = subprocess.Popen(
            [FIREFOX, "--headless", "--no-remote", "--profile", str(self.profile), "--remote-debugging-port", "0",
             "about:blank"],
            stdout=self.log, stderr=subprocess.STDOUT, env={**os.environ, "MOZ_CRASHREPORTER_DISABLE": "1"})
        url = self._wait_listening()
        self.bidi = BiDi(url + "/session", self._event)
        self.bidi.send("session.new", {"capabilities": {"alwaysMatch": {"acceptInsecureCerts": False}}})
        self.bidi.send("session.subscribe", {"events": ["log.entryAdded"]})
        self.context_id = self.bidi.send("browsingContext.getTree", {})["contexts"][0]["context"]
        self.bidi.send("browsingContext.setViewport",
                       {"context": self.context_id, "viewport": {"width": 390, "height": 844}})
        self.version = self.proc_version()

    def proc_version(self) -> str:
        out = subprocess.run([FIREFOX, "--version"], capture_output=True, text=True, check=False).stdout
        return out.strip()

    def _wait_listening(self) -> str:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            self.log.seek(0)
            for line in self.log.read().splitlines():
                if "WebDriver BiDi listening on " in line:
                    return line.split("WebDriver BiDi listening on ", 1)[1].strip()
            if self.proc.poll() is not None:
                break
            time.sleep(0.1)
        self.log.seek(0)
        raise EngineError(f"firefox did not open its BiDi port: {self.log.read()[-2000:]}")

    def _event(self, method, params):
        if method == "log.entryAdded" and params.get("level") == "error":
            self.native_errors.append(f"{params.get('type')}: {params.get('text')}")

    def _call(self, body, args):
        fn = ("async (argsJson) => { const f = async function () {" + body +
              "}; return JSON.stringify(await f.apply(null, JSON.parse(argsJson)) ?? null); }")
        res = self.bidi.send("script.callFunction", {
            "functionDeclaration": fn, "awaitPromise": True, "target": {"context": self.context_id},
            "arguments": [{"type": "string", "value": json.dumps(args)}], "resultOwnership": "none"})
        if res.get("type") == "exception":
            details = res.get("exceptionDetails", {})
            raise EngineError(f"firefox: {details.get('text')}")
        return json.loads(res["result"]["value"])

    def open(self, url):
        self.harvest()
        self.bidi.send("browsingContext.navigate", {"context": self.context_id, "url": url, "wait": "complete"})

    def _reload(self):
        self.bidi.send("browsingContext.reload", {"context": self.context_id, "wait": "complete"})

    def _node(self, css):
        self.run(_FIND + "find(arguments[0]).scrollIntoView({block: 'center'}); return true;", css)
        nodes = self.bidi.send("browsingContext.locateNodes", {
            "context": self.context_id, "locator": {"type": "css", "value": css}, "maxNodeCount": 1})["nodes"]
        if not nodes:
            raise EngineError(f"firefox: no element matches {css}")
        return {"sharedId": nodes[0]["sharedId"]}

    def click(self, css):
        node = self._node(css)
        self.bidi.send("input.performActions", {"context": self.context_id, "actions": [{
            "type": "pointer", "id": "mouse", "parameters": {"pointerType": "mouse"}, "actions": [
                {"type": "pointerMove", "x": 0, "y": 0, "origin": {"type": "element", "element": node}},
                {"type": "pointerDown", "button": 0}, {"type": "pointerUp", "button": 0}]}]})

    def type(self, css, text):
        self.click(css)
        self.run(_FIND + "const el = find(arguments[0]); el.focus(); el.select(); return true;", css)
        keys = [{"type": "keyDown", "value": "\ue003"}, {"type": "keyUp", "value": "\ue003"}]  # Backspace
        for ch in text:
            keys += [{"type": "keyDown", "value": ch}, {"type": "keyUp", "value": ch}]
        self.bidi.send("input.performActions", {"context": self.context_id,
                                                "actions": [{"type": "key", "id": "keyboard", "actions": keys}]})

    def go_offline(self):
        try:
            self.bidi.send("emulation.setNetworkConditions",
                           {"networkConditions": {"type": "offline"}, "contexts": [self.context_id]})
            return True
        except EngineError:
            return False

    def go_online(self):
        try:
            self.bidi.send("emulation.setNetworkConditions", {"networkConditions": None, "contexts": [self.context_id]})
        except EngineError:
            pass

    def close(self):
        try:
            self.bidi.send("session.end", {}, timeout=10)
        except Exception:
            pass
        self.bidi.close()
        stop_process(self.proc, terminate=False)  # session.end closes firefox; kill it only if it stays
        self.log.close()
        shutil.rmtree(self.profile, ignore_errors=True)


# ---- webkit: WebKitWebDriver (classic WebDriver over HTTP) under Xvfb --------------------------------


class Xvfb:
    """A virtual X display; ``-noreset`` keeps it up while no browser is connected (between sessions)."""

    def __init__(self):
        require(XVFB, "xvfb", "Xvfb")
        read, write = os.pipe()
        self.proc = subprocess.Popen([XVFB, "-displayfd", str(write), "-screen", "0", "1280x1024x24",
                                      "-noreset", "-nolisten", "tcp"],
                                     pass_fds=(write,), stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        os.close(write)
        with os.fdopen(read) as f:
            number = f.readline().strip()
        if not number:
            self.proc.kill()
            raise EngineError("Xvfb did not report a display number")
        self.display = f":{number}"

    def stop(self):
        stop_process(self.proc)


class WebKit(Engine):
    name = "webkit"

    def __init__(self):
        super().__init__()
        require(WEBKIT_DRIVER, "webkit2gtk-driver", "WebKitWebDriver")
        require(MINIBROWSER, "libwebkit2gtk-4.1-0", "WebKitGTK's MiniBrowser")
        self.xvfb = Xvfb()
        self.port = free_port()
        self.log = tempfile.TemporaryFile("w+")
        self.driver = subprocess.Popen([WEBKIT_DRIVER, f"--port={self.port}"],
                                       stdout=self.log, stderr=subprocess.STDOUT,
                                       env={**os.environ, "DISPLAY": self.xvfb.display})
        self.base = f"http://127.0.0.1:{self.port}"
        deadline = time.monotonic() + 30
        while True:
            try:
                self._http("GET", "/status")
                break
            except (OSError, EngineError):
                if time.monotonic() > deadline or self.driver.poll() is not None:
                    self.close()
                    raise EngineError("WebKitWebDriver did not start")
                time.sleep(0.1)
        caps = {"capabilities": {"alwaysMatch": {"webkitgtk:browserOptions": {
            "binary": MINIBROWSER, "args": ["--automation"]}}}}
        answer = self._http("POST", "/session", caps)
        self.session = answer["sessionId"]
        self.version = answer.get("capabilities", {}).get("browserVersion", "?")
        self._cmd("POST", "/window/rect", {"width": 390, "height": 844})

    def _http(self, method, path, body=None, timeout=TIMEOUT_S):
        data = json.dumps(body).encode() if body is not None else None
        req = urllib.request.Request(self.base + path, data=data, method=method,
                                     headers={"Content-Type": "application/json; charset=utf-8"})
        try:
            with urllib.request.urlopen(req, timeout=timeout) as resp:
                return json.loads(resp.read() or b"{}").get("value")
        except urllib.error.HTTPError as err:
            try:
                value = json.loads(err.read()).get("value", {})
            except ValueError:
                value = {}
            raise EngineError(f"webkit {method} {path}: {value.get('error')}: {value.get('message')}") from None

    def _cmd(self, method, path, body=None, timeout=TIMEOUT_S):
        return self._http(method, f"/session/{self.session}{path}", body if body is not None else
                          ({} if method == "POST" else None), timeout)

    def _call(self, body, args):
        script = ("const done = arguments[arguments.length - 1];"
                  "const f = async function () {" + body + "};"
                  "f.apply(null, JSON.parse(arguments[0])).then("
                  "(v) => done({ok: JSON.stringify(v ?? null)}), (e) => done({error: String(e && e.message || e)}));")
        out = self._cmd("POST", "/execute/async", {"script": script, "args": [json.dumps(args)]})
        if "error" in out:
            raise EngineError(f"webkit: {out['error']}")
        return json.loads(out["ok"])

    def open(self, url):
        self.harvest()
        self._cmd("POST", "/url", {"url": url})

    def _reload(self):
        self._cmd("POST", "/refresh")

    def _element(self, css):
        self.run(_FIND + "find(arguments[0]).scrollIntoView({block: 'center'}); return true;", css)
        found = self._cmd("POST", "/element", {"using": "css selector", "value": css})
        return next(iter(found.values()))

    def click(self, css):
        self._cmd("POST", f"/element/{self._element(css)}/click")

    def type(self, css, text):
        el = self._element(css)
        self._cmd("POST", f"/element/{el}/clear")
        self._cmd("POST", f"/element/{el}/value", {"text": text})

    def close(self):
        if getattr(self, "session", None):
            try:
                self._cmd("DELETE", "", timeout=20)
            except Exception:
                pass
        stop_process(self.driver)
        self.log.close()
        self.xvfb.stop()


def launch(name: str) -> Engine:
    return {"chromium": Chromium, "firefox": Firefox, "webkit": WebKit}[name]()
