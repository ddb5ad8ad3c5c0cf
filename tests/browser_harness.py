"""A small client for a headless Chromium driven over its DevTools protocol on a pipe (``--remote-debugging-pipe``).

Chromium reads commands from file descriptor 3 and writes replies and events to descriptor 4, each message one JSON
object ended by a NUL byte. No websocket, no driver binary, no browser download: the system ``chromium`` only.
"""

from __future__ import annotations

import base64
import json
import os
import select
import shutil
import subprocess
import tempfile
import time
from pathlib import Path
from typing import Any

import pytest

CHROMIUM = next((p for p in ("/usr/bin/chromium", shutil.which("chromium") or "") if p and os.path.exists(p)), None)
needs_browser = pytest.mark.skipif(CHROMIUM is None, reason="no chromium browser installed (Debian: apt-get install "
                                                            "chromium); the HTML report's browser tests need one")
FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--disable-default-apps", "--disable-extensions", "--mute-audio", "--hide-scrollbars")


class BrowserError(AssertionError):
    """The browser answered a command with an error, or did not answer in time."""


class Browser:
    """One headless Chromium with a fresh profile; :meth:`page` opens a tab and attaches to it."""

    def __init__(self, timeout: float = 60.0) -> None:
        if CHROMIUM is None:
            pytest.skip("no chromium browser installed")
        self.timeout = timeout
        self.profile = tempfile.mkdtemp(prefix="afecheck-chromium-")
        to_child_r, self._to_child = os.pipe()
        self._from_child, from_child_w = os.pipe()

        def wire() -> None:
            os.dup2(to_child_r, 3)
            os.dup2(from_child_w, 4)

        self.proc = subprocess.Popen(
            [CHROMIUM, *FLAGS, f"--user-data-dir={self.profile}", "--remote-debugging-pipe", "about:blank"],
            stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
            preexec_fn=wire, pass_fds=(3, 4, to_child_r, from_child_w),
        )
        os.close(to_child_r)
        os.close(from_child_w)
        self._buf = b""
        self._next = 0
        self.events: list[dict[str, Any]] = []

    def close(self) -> None:
        try:
            self.send("Browser.close", wait=False)
            self.proc.wait(timeout=10)
        except Exception:  # noqa: BLE001 - make sure it ends whatever happened
            self.proc.kill()
            self.proc.wait(timeout=10)
        for fd in (self._to_child, self._from_child):
            try:
                os.close(fd)
            except OSError:
                pass
        shutil.rmtree(self.profile, ignore_errors=True)

    def __enter__(self) -> Browser:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _read(self, deadline: float) -> dict[str, Any]:
        while b"\0" not in self._buf:
            left = deadline - time.monotonic()
            if left <= 0:
                raise BrowserError("the browser did not answer in time")
            ready, _, _ = select.select([self._from_child], [], [], left)
            if ready:
                chunk = os.read(self._from_child, 1 << 20)
                if not chunk:
                    raise BrowserError("the browser closed its pipe")
                self._buf += chunk
        raw, self._buf = self._buf.split(b"\0", 1)
        return json.loads(raw)

    def send(self, method: str, params: dict[str, Any] | None = None, session: str | None = None,
             wait: bool = True) -> dict[str, Any]:
        """Send one command; return its result (events that arrive meanwhile are kept in :attr:`events`)."""
        self._next += 1
        msg: dict[str, Any] = {"id": self._next, "method": method, "params": params or {}}
        if session:
            msg["sessionId"] = session
        os.write(self._to_child, json.dumps(msg).encode() + b"\0")
        if not wait:
            return {}
        deadline = time.monotonic() + self.timeout
        while True:
            reply = self._read(deadline)
            if reply.get("id") == self._next:
                if "error" in reply:
                    raise BrowserError(f"{method}: {reply['error']}")
                return reply.get("result", {})
            self.events.append(reply)

    def wait_for(self, method: str, session: str | None = None) -> dict[str, Any]:
        """The first event ``method`` (already received or still to come)."""
        deadline = time.monotonic() + self.timeout
        seen = 0
        while True:
            for ev in self.events[seen:]:
                if ev.get("method") == method and (session is None or ev.get("sessionId") == session):
                    return ev
            seen = len(self.events)
            self.events.append(self._read(deadline))

    def page(self, width: int = 1000, height: int = 800) -> Page:
        target = self.send("Target.createTarget", {"url": "about:blank"})["targetId"]
        session = self.send("Target.attachToTarget", {"targetId": target, "flatten": True})["sessionId"]
        page = Page(self, session)
        for domain in ("Page", "Runtime", "Log", "Network"):
            page.send(f"{domain}.enable")
        page.send("Emulation.setDeviceMetricsOverride",
                  {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": False})
        return page


class Page:
    """One tab: navigate, evaluate, screenshot, print; its console errors, dialogs and network requests."""

    def __init__(self, browser: Browser, session: str) -> None:
        self.browser = browser
        self.session = session

    def send(self, method: str, params: dict[str, Any] | None = None) -> dict[str, Any]:
        return self.browser.send(method, params, self.session)

    def open(self, path: Path) -> None:
        self.send("Page.navigate", {"url": path.resolve().as_uri()})
        self.browser.wait_for("Page.loadEventFired", self.session)

    def evaluate(self, expression: str) -> Any:
        """The value of a JavaScript expression (JSON-serialisable), failing on a thrown exception."""
        res = self.send("Runtime.evaluate", {"expression": expression, "returnByValue": True, "awaitPromise": True})
        if "exceptionDetails" in res:
            raise BrowserError(f"script failed: {res['exceptionDetails']}")
        return res["result"].get("value")

    def _mine(self, method: str) -> list[dict[str, Any]]:
        return [e["params"] for e in self.browser.events if e.get("sessionId") == self.session
                and e.get("method") == method]

    def console_errors(self) -> list[str]:
        """Console messages of level error, uncaught exceptions and browser log errors seen so far."""
        out = [str(p.get("args")) for p in self._mine("Runtime.consoleAPICalled") if p.get("type") in ("error",
                                                                                                       "assert")]
        out += [str(p.get("exceptionDetails")) for p in self._mine("Runtime.exceptionThrown")]
        out += [str(p["entry"].get("text")) for p in self._mine("Log.entryAdded") if p["entry"].get("level") == "error"]
        return out

    def dialogs(self) -> list[dict[str, Any]]:
        return self._mine("Page.javascriptDialogOpening")

    def requests(self) -> list[str]:
        """URLs the page asked for (the document itself included)."""
        return [p["request"]["url"] for p in self._mine("Network.requestWillBeSent")]

    def screenshot(self, path: Path) -> None:
        """A PNG of the whole page, however long."""
        size = self.send("Page.getLayoutMetrics")["cssContentSize"]
        clip = {"x": 0, "y": 0, "width": size["width"], "height": min(size["height"], 16000), "scale": 1}
        data = self.send("Page.captureScreenshot", {"format": "png", "clip": clip, "captureBeyondViewport": True})
        path.write_bytes(base64.b64decode(data["data"]))

    def print_pdf(self, width_in: float, height_in: float) -> bytes:
        data = self.send("Page.printToPDF", {"paperWidth": width_in, "paperHeight": height_in, "printBackground": True,
                                             "marginTop": 0.4, "marginBottom": 0.4, "marginLeft": 0.4,
                                             "marginRight": 0.4})
        return base64.b64decode(data["data"])
