"""Drive headless Chromium over the DevTools protocol on a pipe: no extra Python dependency.

Chromium started with ``--remote-debugging-pipe`` reads protocol commands (JSON, each ended by a
NUL byte) on file descriptor 3 and writes replies and events on descriptor 4. That is all the
report test needs: open a file, collect console errors, failed loads and exceptions, evaluate a
script, take a screenshot.
"""

from __future__ import annotations

import base64
import json
import os
import shutil
import subprocess
import tempfile
import time
from pathlib import Path


def find_chromium() -> str | None:
    for name in ("chromium", "chromium-browser", "google-chrome", "chrome"):
        path = shutil.which(name)
        if path:
            return path
    return None


class Browser:
    """One headless Chromium with one page, controlled through the DevTools pipe."""

    def __init__(self, executable: str, width: int = 1200, height: int = 900, timeout_s: float = 60.0) -> None:
        self.timeout_s = timeout_s
        self.profile = tempfile.mkdtemp(prefix="phasewise-chromium-")
        to_browser_r, self._to_browser = os.pipe()
        self._from_browser, from_browser_w = os.pipe()

        # The child reads commands on fd 3 and writes on fd 4 (moved high first: neither clobbers the other).
        def child_fds() -> None:
            r, w = os.dup(to_browser_r), os.dup(from_browser_w)
            r, w = os.dup2(r, 100), os.dup2(w, 101)
            os.dup2(r, 3)
            os.dup2(w, 4)

        self.proc = subprocess.Popen(
            [
                executable,
                "--headless",
                "--no-sandbox",
                "--disable-gpu",
                "--disable-background-networking",
                "--disable-component-update",
                "--disable-sync",
                "--no-first-run",
                "--disable-extensions",
                "--disable-default-apps",
                "--mute-audio",
                "--hide-scrollbars",
                f"--window-size={width},{height}",
                f"--user-data-dir={self.profile}",
                "--remote-debugging-pipe",
                "about:blank",
            ],
            close_fds=False,
            preexec_fn=child_fds,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        os.close(to_browser_r)
        os.close(from_browser_w)
        self._buf = b""
        self._next_id = 0
        self.events: list[dict] = []
        target = self.send("Target.createTarget", {"url": "about:blank"})["targetId"]
        self.session = self.send("Target.attachToTarget", {"targetId": target, "flatten": True})["sessionId"]
        for domain in ("Page", "Runtime", "Log", "Network"):
            self.send(f"{domain}.enable", session=True)
        # Headless windows have a minimum width (~500 px): the viewport is set exactly instead.
        self.send(
            "Emulation.setDeviceMetricsOverride",
            {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": False},
            session=True,
        )

    def _read_message(self, deadline: float) -> dict:
        while b"\0" not in self._buf:
            if time.monotonic() > deadline:
                raise TimeoutError("Chromium did not answer in time")
            chunk = os.read(self._from_browser, 1 << 16)
            if not chunk:
                raise RuntimeError("Chromium closed the DevTools pipe")
            self._buf += chunk
        raw, self._buf = self._buf.split(b"\0", 1)
        return json.loads(raw)

    def send(self, method: str, params: dict | None = None, session: bool = False) -> dict:
        self._next_id += 1
        msg = {"id": self._next_id, "method": method, "params": params or {}}
        if session:
            msg["sessionId"] = self.session
        os.write(self._to_browser, json.dumps(msg).encode() + b"\0")
        deadline = time.monotonic() + self.timeout_s
        while True:
            reply = self._read_message(deadline)
            if reply.get("id") == self._next_id:
                if "error" in reply:
                    raise RuntimeError(f"{method}: {reply['error']}")
                return reply.get("result", {})
            self.events.append(reply)

    def wait_for(self, method: str) -> dict:
        deadline = time.monotonic() + self.timeout_s
        for ev in self.events:
            if ev.get("method") == method:
                return ev
        while True:
            ev = self._read_message(deadline)
            self.events.append(ev)
            if ev.get("method") == method:
                return ev

    def open(self, path: Path) -> None:
        self.send("Page.navigate", {"url": path.resolve().as_uri()}, session=True)
        self.wait_for("Page.loadEventFired")

    def evaluate(self, expression: str):
        result = self.send(
            "Runtime.evaluate",
            {"expression": expression, "returnByValue": True, "awaitPromise": True},
            session=True,
        )
        if "exceptionDetails" in result:
            raise RuntimeError(f"script failed: {result['exceptionDetails']}")
        return result["result"].get("value")

    def screenshot_png(self, full_page: bool = False) -> bytes:
        params: dict = {"format": "png"}
        if full_page:
            params["captureBeyondViewport"] = True
            size = self.send("Page.getLayoutMetrics", session=True)["cssContentSize"]
            params["clip"] = {"x": 0, "y": 0, "width": size["width"], "height": size["height"], "scale": 1}
        return base64.b64decode(self.send("Page.captureScreenshot", params, session=True)["data"])

    def problems(self) -> list[str]:
        """Console errors and warnings, uncaught exceptions, failed resource loads, error log entries."""
        out = []
        for ev in self.events:
            m, p = ev.get("method"), ev.get("params", {})
            if m == "Runtime.consoleAPICalled" and p.get("type") in ("error", "warning", "assert"):
                out.append(f"console.{p['type']}: {p.get('args')}")
            elif m == "Runtime.exceptionThrown":
                out.append(f"exception: {p.get('exceptionDetails')}")
            elif m == "Log.entryAdded" and p.get("entry", {}).get("level") == "error":
                out.append(f"log: {p['entry'].get('text')} {p['entry'].get('url', '')}")
            elif m == "Network.loadingFailed":
                out.append(f"load failed: {p.get('errorText')}")
        return out

    def requested_urls(self) -> list[str]:
        return [ev["params"]["request"]["url"] for ev in self.events if ev.get("method") == "Network.requestWillBeSent"]

    def close(self) -> None:
        try:
            self.send("Browser.close")
        except (RuntimeError, TimeoutError, OSError):
            pass
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
        for fd in (self._to_browser, self._from_browser):
            try:
                os.close(fd)
            except OSError:
                pass
        shutil.rmtree(self.profile, ignore_errors=True)

    def __enter__(self) -> Browser:
        return self

    def __exit__(self, *exc) -> None:
        self.close()
