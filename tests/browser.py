"""Headless Chromium (Debian's ``chromium`` package) driven through its DevTools protocol,
for the tests that open a report in a real browser.

The browser listens on 127.0.0.1 only, on a port it picks itself, with a profile in a
temporary folder; name resolution and a proxy that leads nowhere keep it off the network,
and the page's network is switched offline as well, so a request for anything outside the
opened file fails and is recorded (``requests``) rather than fetched.
"""

from __future__ import annotations

import base64
import contextlib
import json
import shutil
import subprocess
import tempfile
import time
import urllib.request
from pathlib import Path
from typing import Any, Self

#: where Debian (``chromium``) and other distributions put the browser
CANDIDATES = ("chromium", "chromium-browser", "google-chrome")


def find_chromium() -> str | None:
    for name in CANDIDATES:
        found = shutil.which(name)
        if found:
            return found
    return None


class Browser:
    """One headless Chromium with one page; use as a context manager."""

    def __init__(self, binary: str, width: int = 1200, height: int = 1000) -> None:
        self.binary = binary
        self.width, self.height = width, height
        self.profile = tempfile.mkdtemp(prefix="schemcheck-chromium-")
        self.proc: subprocess.Popen[bytes] | None = None
        self.ws: Any = None
        self.events: list[dict[str, Any]] = []
        self._id = 0

    def __enter__(self) -> Self:
        import websocket

        self.proc = subprocess.Popen(
            [self.binary, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
             "--no-default-browser-check", "--disable-background-networking",
             "--disable-component-update", "--disable-sync", "--disable-extensions",
             "--disable-features=Translate,MediaRouter,OptimizationHints",
             "--host-resolver-rules=MAP * ~NOTFOUND", "--proxy-server=http://127.0.0.1:9",
             "--remote-debugging-address=127.0.0.1", "--remote-debugging-port=0",
             f"--user-data-dir={self.profile}", f"--window-size={self.width},{self.height}",
             "about:blank"],
            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        port_file = Path(self.profile) / "DevToolsActivePort"
        deadline = time.monotonic() + 60
        while not (port_file.is_file() and port_file.read_text().strip()):
            if time.monotonic() > deadline or self.proc.poll() is not None:
                self.close()
                raise RuntimeError("Chromium did not start its DevTools endpoint")
            time.sleep(0.1)
        port = int(port_file.read_text().split()[0])
        with urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list", timeout=30) as r:
            targets = json.loads(r.read())
        page = next(t for t in targets if t.get("type") == "page")
        self.ws = websocket.create_connection(page["webSocketDebuggerUrl"], timeout=60,
                                              suppress_origin=True)
        for domain in ("Page", "Runtime", "Log", "Network"):
            self.call(f"{domain}.enable")
        self.call("Network.emulateNetworkConditions", offline=True, latency=0,
                  downloadThroughput=-1, uploadThroughput=-1)
        self.call("Emulation.setDeviceMetricsOverride", width=self.width, height=self.height,
                  deviceScaleFactor=1, mobile=False)
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        if self.ws is not None:
            import websocket

            # the browser may close the socket before it answers
            with contextlib.suppress(OSError, websocket.WebSocketException):
                self.call("Browser.close")
            self.ws.close()
            self.ws = None
        if self.proc is not None:
            try:
                self.proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=20)
            self.proc = None
        shutil.rmtree(self.profile, ignore_errors=True)

    def call(self, method: str, **params: Any) -> dict[str, Any]:
        """Send one command and wait for its answer (events meanwhile are kept)."""
        self._id += 1
        ident = self._id
        self.ws.send(json.dumps({"id": ident, "method": method, "params": params}))
        while True:
            message = json.loads(self.ws.recv())
            if message.get("id") == ident:
                if "error" in message:
                    raise RuntimeError(f"{method}: {message['error']}")
                return message.get("result", {})
            if "method" in message:
                self.events.append(message)

    def wait_for(self, method: str, timeout: float = 60.0) -> dict[str, Any]:
        """The first event named ``method``, waiting up to ``timeout`` seconds."""
        for event in self.events:
            if event["method"] == method:
                return event
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            self.ws.settimeout(max(0.1, deadline - time.monotonic()))
            message = json.loads(self.ws.recv())
            if "method" in message:
                self.events.append(message)
                if message["method"] == method:
                    return message
        raise TimeoutError(method)

    def settle(self, seconds: float = 0.5) -> None:
        """Collect the events that arrive within ``seconds``."""
        import websocket

        deadline = time.monotonic() + seconds
        while (left := deadline - time.monotonic()) > 0:
            self.ws.settimeout(left)
            try:
                message = json.loads(self.ws.recv())
            except websocket.WebSocketTimeoutException:
                break
            if "method" in message:
                self.events.append(message)
        self.ws.settimeout(60)

    def open(self, url: str) -> None:
        self.call("Page.navigate", url=url)
        self.wait_for("Page.loadEventFired")
        self.settle()

    def evaluate(self, expression: str) -> Any:
        result = self.call("Runtime.evaluate", expression=expression, returnByValue=True)
        if "exceptionDetails" in result:
            raise RuntimeError(result["exceptionDetails"])
        return result["result"].get("value")

    def requests(self) -> list[str]:
        return [e["params"]["request"]["url"] for e in self.events
                if e["method"] == "Network.requestWillBeSent"]

    def errors(self) -> list[str]:
        """Console errors, uncaught exceptions and error log entries (failed loads)."""
        out = []
        for e in self.events:
            p = e["params"]
            if e["method"] == "Runtime.consoleAPICalled" and p["type"] in ("error", "assert"):
                out.append(" ".join(str(a.get("value", a.get("description"))) for a in p["args"]))
            elif e["method"] == "Runtime.exceptionThrown":
                out.append(p["exceptionDetails"].get("text", "exception"))
            elif e["method"] == "Log.entryAdded" and p["entry"]["level"] == "error":
                out.append(p["entry"]["text"])
        return out

    def screenshot(self, clip: dict[str, float] | None = None) -> bytes:
        params: dict[str, Any] = {"format": "png"}
        if clip is not None:
            params.update(clip={**clip, "scale": 1}, captureBeyondViewport=True)
        return base64.b64decode(self.call("Page.captureScreenshot", **params)["data"])

    def pdf(self) -> bytes:
        return base64.b64decode(self.call("Page.printToPDF", printBackground=True,
                                          preferCSSPageSize=True)["data"])
