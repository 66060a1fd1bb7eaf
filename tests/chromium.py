"""A small client of headless Chromium over the DevTools protocol on a pipe (test helper).

Chromium reads commands on file descriptor 3 and writes answers on 4 (``--remote-debugging-
pipe``), each a JSON message ended by a NUL byte. Used by `test_browser.py` to load a page at
a given width, collect console and network errors, ask whether every image loaded and whether
the page overflows sideways (evaluated by the protocol, not by a script in the page: the
pages allow none), take screenshots and print to PDF.
"""

from __future__ import annotations

import base64
import json
import os
import select
import shutil
import subprocess
import time
from pathlib import Path

__all__ = ["FLAGS", "find_chromium", "Browser"]

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync"]

PAGE_STATE = """JSON.stringify({
  images: Array.from(document.images).map(i => [i.getAttribute('src').slice(0, 80),
                                                 i.complete && i.naturalWidth > 0]),
  scrollWidth: document.documentElement.scrollWidth,
  innerWidth: window.innerWidth,
  height: document.documentElement.scrollHeight,
  scripts: document.scripts.length,
  csp: (document.querySelector('meta[http-equiv="Content-Security-Policy"]') || {}).content || ''
})"""


def find_chromium() -> str | None:
    for cand in (shutil.which("chromium"), "/usr/bin/chromium", shutil.which("chromium-browser")):
        if cand and Path(cand).is_file():
            return cand
    return None


class Browser:
    """One headless Chromium process driven over the DevTools pipe."""

    def __init__(self, exe: str, profile: Path):
        r_cmd, w_cmd = os.pipe()
        r_out, w_out = os.pipe()

        def child_fds():
            os.dup2(r_cmd, 3)
            os.dup2(w_out, 4)

        self.proc = subprocess.Popen(
            [exe, *FLAGS, "--remote-debugging-pipe", f"--user-data-dir={profile}", "about:blank"],
            pass_fds=tuple(sorted({3, 4, r_cmd, w_out})), preexec_fn=child_fds,
            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        os.close(r_cmd)
        os.close(w_out)
        self._w, self._r = w_cmd, r_out
        self._buf = b""
        self._id = 0
        self.events: list[dict] = []
        target = self.send("Target.createTarget", {"url": "about:blank"})["targetId"]
        self.session = self.send("Target.attachToTarget",
                                 {"targetId": target, "flatten": True})["sessionId"]
        for domain in ("Page.enable", "Runtime.enable", "Log.enable"):
            self.send(domain, session=True)

    def _read(self, deadline: float) -> dict:
        while b"\0" not in self._buf:
            left = deadline - time.time()
            if left <= 0:
                raise TimeoutError("no answer from chromium")
            ready, _, _ = select.select([self._r], [], [], left)
            if ready:
                chunk = os.read(self._r, 1 << 20)
                if not chunk:
                    raise EOFError("chromium closed the pipe")
                self._buf += chunk
        msg, self._buf = self._buf.split(b"\0", 1)
        return json.loads(msg)

    def send(self, method: str, params: dict | None = None, session: bool = False,
             timeout: float = 120.0) -> dict:
        self._id += 1
        msg = {"id": self._id, "method": method, "params": params or {}}
        if session:
            msg["sessionId"] = self.session
        os.write(self._w, json.dumps(msg).encode() + b"\0")
        deadline = time.time() + timeout
        while True:
            answer = self._read(deadline)
            if answer.get("id") == self._id:
                if "error" in answer:
                    raise RuntimeError(f"{method}: {answer['error']}")
                return answer.get("result", {})
            self.events.append(answer)

    def wait_for(self, event: str, timeout: float = 60.0) -> dict:
        for i, e in enumerate(self.events):
            if e.get("method") == event:
                return self.events.pop(i)
        deadline = time.time() + timeout
        while True:
            answer = self._read(deadline)
            if answer.get("method") == event:
                return answer
            self.events.append(answer)

    def open(self, url: str, width: int, height: int = 900) -> dict:
        """Load `url` in a viewport `width` CSS px wide; return the page state and the
        console / network errors seen while loading."""
        self.events.clear()
        self.send("Emulation.setDeviceMetricsOverride",
                  {"width": width, "height": height, "deviceScaleFactor": 1,
                   "mobile": width < 600}, session=True)
        self.send("Page.navigate", {"url": url}, session=True)
        self.wait_for("Page.loadEventFired")
        state = json.loads(self.send("Runtime.evaluate", {"expression": PAGE_STATE,
                                                          "returnByValue": True},
                                     session=True)["result"]["value"])
        errors = []
        for e in self.events:
            m, p = e.get("method"), e.get("params", {})
            if m == "Log.entryAdded" and p["entry"].get("level") in ("error", "warning"):
                errors.append(f"{p['entry'].get('source')}: {p['entry'].get('text')}")
            elif m == "Runtime.exceptionThrown":
                errors.append(f"exception: {p.get('exceptionDetails', {}).get('text')}")
            elif m == "Runtime.consoleAPICalled" and p.get("type") in ("error", "warning", "assert"):
                errors.append(f"console: {p.get('args')}")
        state["errors"] = errors
        return state

    def screenshot(self, path: Path, full_page: bool = True) -> Path:
        data = self.send("Page.captureScreenshot",
                         {"format": "png", "captureBeyondViewport": full_page}, session=True)
        Path(path).write_bytes(base64.b64decode(data["data"]))
        return Path(path)

    def pdf(self, path: Path) -> Path:
        """Print the loaded page as Chromium would (A4 unless the page's @page says)."""
        data = self.send("Page.printToPDF",
                         {"paperWidth": 8.2677, "paperHeight": 11.6929, "printBackground": True,
                          "preferCSSPageSize": True, "displayHeaderFooter": False},
                         session=True)
        Path(path).write_bytes(base64.b64decode(data["data"]))
        return Path(path)

    def close(self) -> None:
        try:
            self.send("Browser.close", timeout=10)
        except (OSError, TimeoutError, EOFError, RuntimeError):
            pass
        try:
            self.proc.wait(timeout=20)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait(timeout=10)
        for fd in (self._w, self._r):
            try:
                os.close(fd)
            except OSError:
                pass
