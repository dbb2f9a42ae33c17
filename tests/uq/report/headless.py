"""A minimal client of the Chrome DevTools protocol over a pipe (no third-party package).

Chromium started with ``--remote-debugging-pipe`` reads protocol commands from file
descriptor 3 and writes responses and events to descriptor 4, each message a JSON text
ended by a NUL byte (Chrome DevTools protocol, "remote-debugging-pipe"). Only what the
report's browser test needs is here: open a page at a viewport width, wait for its load
event, evaluate an expression, collect console errors, print to PDF, take a screenshot.
"""
from __future__ import annotations

import base64
import fcntl
import json
import os
import queue
import shutil
import subprocess
import tempfile
import threading
import time

__all__ = ["find_browser", "Browser"]

_CANDIDATES = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable", "chrome")


def find_browser() -> str | None:
    """A Chromium-family executable: $TRANSIT_RISK_BROWSER, else the first on PATH."""
    given = os.environ.get("TRANSIT_RISK_BROWSER")
    if given:
        return shutil.which(given) or (given if os.path.isfile(given) else None)
    return next((p for p in map(shutil.which, _CANDIDATES) if p), None)


class Browser:
    """One headless browser process; use as a context manager."""

    def __init__(self, executable: str, *, timeout: float = 60.0):
        self.timeout = timeout
        self._profile = tempfile.mkdtemp(prefix="transit-risk-browser-")
        to_browser_r, self._to_browser = os.pipe()
        self._from_browser, from_browser_w = os.pipe()

        def wire():  # in the child: the protocol's descriptors 3 (commands) and 4 (replies)
            high = [fcntl.fcntl(fd, fcntl.F_DUPFD, 10) for fd in (to_browser_r, from_browser_w)]
            os.dup2(high[0], 3)
            os.dup2(high[1], 4)

        self.proc = subprocess.Popen(
            [executable, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
             "--remote-debugging-pipe", "--no-first-run", "--no-default-browser-check",
             "--disable-extensions", "--disable-background-networking",
             f"--user-data-dir={self._profile}", "about:blank"],
            preexec_fn=wire, pass_fds=(3, 4), stdin=subprocess.DEVNULL,
            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        os.close(to_browser_r)
        os.close(from_browser_w)
        self._next_id = 0
        self._replies: dict[int, dict] = {}
        self._events: "queue.Queue[dict]" = queue.Queue()
        self.events: list[dict] = []
        self._lock = threading.Condition()
        self._reader = threading.Thread(target=self._read, daemon=True)
        self._reader.start()

    # ------------------------------------------------------------------ protocol
    def _read(self) -> None:
        buffer = b""
        with os.fdopen(self._from_browser, "rb", buffering=0) as stream:
            while True:
                chunk = stream.read(1 << 16)
                if not chunk:
                    break
                buffer += chunk
                while b"\0" in buffer:
                    raw, buffer = buffer.split(b"\0", 1)
                    message = json.loads(raw)
                    with self._lock:
                        if "id" in message:
                            self._replies[message["id"]] = message
                        else:
                            self.events.append(message)
                        self._lock.notify_all()

    def send(self, method: str, params: dict | None = None, session: str | None = None) -> dict:
        """Send one command and wait for its result (raises on a protocol error)."""
        self._next_id += 1
        ident = self._next_id
        message = {"id": ident, "method": method, "params": params or {}}
        if session:
            message["sessionId"] = session
        os.write(self._to_browser, json.dumps(message).encode() + b"\0")
        deadline = time.monotonic() + self.timeout
        with self._lock:
            while ident not in self._replies:
                left = deadline - time.monotonic()
                if left <= 0 or not self._lock.wait(left):
                    raise TimeoutError(f"no reply to {method} within {self.timeout} s")
            reply = self._replies.pop(ident)
        if "error" in reply:
            raise RuntimeError(f"{method}: {reply['error']}")
        return reply.get("result", {})

    def wait_event(self, method: str, session: str) -> dict:
        deadline = time.monotonic() + self.timeout
        with self._lock:
            while True:
                for e in self.events:
                    if e.get("method") == method and e.get("sessionId") == session:
                        return e
                left = deadline - time.monotonic()
                if left <= 0 or not self._lock.wait(left):
                    raise TimeoutError(f"no {method} within {self.timeout} s")

    # ------------------------------------------------------------------ pages
    def open(self, url: str, *, width: int, height: int = 900) -> str:
        """Load ``url`` in a new tab at the viewport size; return the tab's session id."""
        target = self.send("Target.createTarget", {"url": "about:blank"})["targetId"]
        session = self.send("Target.attachToTarget", {"targetId": target,
                                                      "flatten": True})["sessionId"]
        for domain in ("Page", "Runtime", "Log"):
            self.send(f"{domain}.enable", session=session)
        self.send("Emulation.setDeviceMetricsOverride",
                  {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": False},
                  session=session)
        self.send("Page.navigate", {"url": url}, session=session)
        self.wait_event("Page.loadEventFired", session)
        return session

    def evaluate(self, session: str, expression: str):
        """The JSON-able value of a JavaScript expression in the page."""
        result = self.send("Runtime.evaluate", {"expression": expression, "returnByValue": True,
                                                "awaitPromise": True}, session=session)
        if "exceptionDetails" in result:
            raise RuntimeError(f"page script failed: {result['exceptionDetails']}")
        return result["result"].get("value")

    def errors(self, session: str) -> list[str]:
        """Console errors, uncaught exceptions and error log entries (CSP, failed loads)."""
        out = []
        with self._lock:
            events = [e for e in self.events if e.get("sessionId") == session]
        for e in events:
            p = e.get("params", {})
            if e["method"] == "Runtime.exceptionThrown":
                out.append(json.dumps(p.get("exceptionDetails", {}))[:300])
            elif e["method"] == "Runtime.consoleAPICalled" and p.get("type") in ("error", "assert"):
                out.append(json.dumps(p.get("args", []))[:300])
            elif e["method"] == "Log.entryAdded" and p.get("entry", {}).get("level") == "error":
                out.append(p["entry"].get("text", "")[:300])
        return out

    def print_pdf(self, session: str) -> bytes:
        """The page printed as the browser prints it (A4 from the page's @page rule)."""
        data = self.send("Page.printToPDF", {"preferCSSPageSize": True, "printBackground": True,
                                             "paperWidth": 8.27, "paperHeight": 11.69},
                         session=session)["data"]
        return base64.b64decode(data)

    def screenshot(self, session: str, *, full_page: bool = True) -> bytes:
        params = {"format": "png", "captureBeyondViewport": full_page}
        if full_page:
            width, height = self.evaluate(session, "[document.documentElement.clientWidth, "
                                                   "document.documentElement.scrollHeight]")
            params["clip"] = {"x": 0, "y": 0, "width": width, "height": height, "scale": 1}
        return base64.b64decode(self.send("Page.captureScreenshot", params,
                                          session=session)["data"])

    # ------------------------------------------------------------------ lifetime
    def close(self) -> None:
        try:
            self.send("Browser.close")
        except Exception:  # already gone: fall through to terminate
            pass
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait(timeout=10)
        os.close(self._to_browser)
        shutil.rmtree(self._profile, ignore_errors=True)

    def __enter__(self) -> "Browser":
        return self

    def __exit__(self, *exc) -> None:
        self.close()
