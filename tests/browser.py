"""Headless Chromium driven over its DevTools protocol, shared by the report tests.

Needs Debian's ``chromium`` package and the ``websocket-client`` pip package.
"""

import json
import re
import shutil
import subprocess
import time
import urllib.request
from pathlib import Path

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


class DevTools:
    """Headless Chromium driven over its DevTools protocol (websocket on the loopback)."""

    FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync",
             "--disable-extensions", "--allow-file-access-from-files", "--hide-scrollbars",
             "--window-size=1200,900", "--remote-debugging-port=0"]  # fmt: skip

    def __init__(self, profile: Path):
        import websocket

        self.proc = subprocess.Popen(
            [CHROMIUM, *self.FLAGS, f"--user-data-dir={profile}", "about:blank"],
            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
        )  # fmt: skip
        port = None
        deadline = time.monotonic() + 60
        while port is None and time.monotonic() < deadline:
            line = self.proc.stderr.readline()
            if not line and self.proc.poll() is not None:
                break
            m = re.search(r"DevTools listening on ws://127\.0\.0\.1:(\d+)/", line)
            if m:
                port = int(m.group(1))
        if port is None:
            self.close()
            raise RuntimeError("chromium did not open its DevTools port")
        targets = json.loads(urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list").read())
        page = next(t for t in targets if t["type"] == "page")
        self.ws = websocket.create_connection(page["webSocketDebuggerUrl"], timeout=60)
        self.next_id = 0
        self.events = []

    def call(self, method: str, **params):
        self.next_id += 1
        self.ws.send(json.dumps({"id": self.next_id, "method": method, "params": params}))
        while True:
            msg = json.loads(self.ws.recv())
            if msg.get("id") == self.next_id:
                if "error" in msg:
                    raise RuntimeError(f"{method}: {msg['error']}")
                return msg.get("result", {})
            self.events.append(msg)

    def wait_event(self, method: str, timeout: float = 60.0):
        deadline = time.monotonic() + timeout
        for e in self.events:
            if e.get("method") == method:
                return e
        while time.monotonic() < deadline:
            msg = json.loads(self.ws.recv())
            self.events.append(msg)
            if msg.get("method") == method:
                return msg
        raise TimeoutError(method)

    def eval(self, expression: str):
        r = self.call(
            "Runtime.evaluate", expression=expression, returnByValue=True, awaitPromise=True
        )  # noqa: E501
        return r["result"].get("value")

    def close(self):
        try:
            self.ws.close()
        except Exception:
            pass
        self.proc.terminate()
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()


def open_page(browser: DevTools, path: Path) -> None:
    """Load ``path`` with the Page, Runtime, Log and Network events recorded, and wait until
    its images are decoded."""
    for domain in ("Page", "Runtime", "Log", "Network"):
        browser.call(f"{domain}.enable")
    browser.call("Page.navigate", url=path.as_uri())
    browser.wait_event("Page.loadEventFired")
    browser.eval("Promise.all([...document.images].map(i => i.decode()))")
