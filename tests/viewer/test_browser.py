"""The viewer and the report in a real headless Chromium, driven over the DevTools protocol.

The viewer is started as a user starts it (``python -m talkthemes.serve``, which runs
:func:`talkthemes.serve.serve`) on a free port of 127.0.0.1; Chromium runs with every
background network feature off. Each section is loaded, its charts are waited for,
a screenshot is saved under a temporary folder, and the page must show no exception and
the demo's theme labels. The report is opened from disk with the network switched off and
must draw every chart.

Needs Debian's ``chromium`` (``apt-get install chromium``); skipped without it.
"""

from __future__ import annotations

import base64
import contextlib
import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(
        CHROMIUM is None, reason="needs Debian's chromium: apt-get install -y chromium"
    ),
]

CHROME_FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-default-apps",
    "--disable-extensions",
    "--window-size=1400,1100",
    "--remote-debugging-port=0",
]
IDLE = (
    'document.querySelectorAll(\'[data-testid="stSpinner"], [data-testid="stSkeleton"]\')'
    ".length === 0"
)


class Browser:
    """A headless Chromium and one page, spoken to over the DevTools protocol."""

    def __init__(self, profile: Path) -> None:
        from websockets.sync.client import connect

        self.proc = subprocess.Popen(
            [CHROMIUM, *CHROME_FLAGS, f"--user-data-dir={profile}", "about:blank"],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
            start_new_session=True,  # its helper processes share a group we can stop whole
        )
        port_file = profile / "DevToolsActivePort"
        deadline = time.monotonic() + 30
        while not (port_file.exists() and port_file.read_text().strip()):
            if time.monotonic() > deadline or self.proc.poll() is not None:
                self.close()
                raise RuntimeError("chromium did not open its DevTools port")
            time.sleep(0.1)
        port = int(port_file.read_text().split()[0])
        with urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list", timeout=10) as r:
            target = next(t for t in json.load(r) if t["type"] == "page")
        self._stack = contextlib.ExitStack()
        self.ws = self._stack.enter_context(
            connect(target["webSocketDebuggerUrl"], max_size=None, open_timeout=20)
        )
        self.next_id = 0
        self.dialogs: list[str] = []
        self.send("Page.enable")

    def send(self, method: str, **params: Any) -> dict[str, Any]:
        self.next_id += 1
        mid = self.next_id
        self.ws.send(json.dumps({"id": mid, "method": method, "params": params}))
        while True:
            msg = json.loads(self.ws.recv(timeout=60))
            if msg.get("method") == "Page.javascriptDialogOpening":
                self.dialogs.append(msg["params"].get("message", ""))
            if msg.get("id") == mid:
                if "error" in msg:
                    raise RuntimeError(f"{method}: {msg['error']}")
                return msg.get("result", {})

    def eval(self, expression: str) -> Any:
        result = self.send("Runtime.evaluate", expression=expression, returnByValue=True)
        return result.get("result", {}).get("value")

    def wait(self, expression: str, timeout: float = 90) -> Any:
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            value = self.eval(expression)
            if value:
                return value
            time.sleep(0.25)
        raise AssertionError(f"timed out waiting for: {expression}")

    def goto(self, url: str) -> None:
        self.send("Page.navigate", url=url)

    def screenshot(self, path: Path) -> None:
        data = self.send("Page.captureScreenshot", format="png")["data"]
        path.write_bytes(base64.b64decode(data))

    def shown_text(self) -> str:
        """What a reader sees: page text, chart text (SVG) and the values in input boxes."""
        return self.eval(
            "[document.body.innerText,"
            " ...[...document.querySelectorAll('svg text')].map(t => t.textContent),"
            " ...[...document.querySelectorAll('input')].map(i => i.value)].join('\\n')"
        )

    def close(self) -> None:
        if getattr(self, "_stack", None) is not None:
            self._stack.close()
        with contextlib.suppress(ProcessLookupError):
            os.killpg(self.proc.pid, signal.SIGTERM)  # the browser and its helper processes
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            with contextlib.suppress(ProcessLookupError):
                os.killpg(self.proc.pid, signal.SIGKILL)
            self.proc.wait()


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.fixture(scope="module")
def viewer(demo_ws) -> Iterator[str]:
    """The viewer served on a free port; yields its base URL."""
    port = _free_port()
    proc = subprocess.Popen(
        [sys.executable, "-m", "talkthemes.serve", str(demo_ws.ws.root), str(port)],
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        start_new_session=True,
        text=True,
    )
    base = f"http://127.0.0.1:{port}"
    try:
        first = proc.stdout.readline()
        assert f"{base}" in first, first
        deadline = time.monotonic() + 90
        while True:
            try:
                with urllib.request.urlopen(f"{base}/_stcore/health", timeout=5) as r:
                    if r.read().decode().strip() == "ok":
                        break
            except OSError:
                pass
            if time.monotonic() > deadline or proc.poll() is not None:
                raise AssertionError("the viewer did not start")
            time.sleep(0.5)
        yield base
    finally:
        proc.send_signal(signal.SIGTERM)  # serve() passes it on to Streamlit
        try:
            proc.wait(timeout=20)
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)  # the group of the process we started
            proc.wait()


@pytest.fixture(scope="module")
def browser() -> Iterator[Browser]:
    # helper processes may still flush the profile for a moment after the group is stopped
    with tempfile.TemporaryDirectory(prefix="tt-chromium-", ignore_cleanup_errors=True) as profile:
        b = Browser(Path(profile))
        try:
            yield b
        finally:
            b.close()


@pytest.fixture(scope="module")
def shots(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return tmp_path_factory.mktemp("screenshots")


SECTIONS = [
    ("", "Theme map", 1),
    ("choose-k", "Choose K", 1),
    ("theme-cards", "Theme cards", 1),
    ("calls", "Calls", 1),  # why this call
    ("over-time", "Over time", 3),
]


@pytest.mark.parametrize(("path", "title", "n_charts"), SECTIONS)
def test_each_section_in_chromium(demo_ws, viewer, browser, shots, path, title, n_charts) -> None:
    browser.goto(f"{viewer}/{path}")
    browser.wait(
        f"[...document.querySelectorAll('h1')].some(h => h.innerText.trim() === {title!r})"
    )
    charts = "document.querySelectorAll('[data-testid=\"stVegaLiteChart\"] svg.marks').length"
    ready = f"{IDLE} && {charts} >= {n_charts}"
    if path == "calls":
        ready += " && document.querySelector('.tt-transcript') !== null"
    browser.wait(ready, timeout=120)
    time.sleep(1.0)  # let the last chart finish drawing
    browser.screenshot(shots / f"{title.lower().replace(' ', '-')}.png")
    assert (shots / f"{title.lower().replace(' ', '-')}.png").stat().st_size > 10_000
    assert browser.eval("document.querySelectorAll('[data-testid=\"stException\"]').length") == 0
    text = browser.eval("document.body.innerText")
    assert "Traceback" not in text and "Page not found" not in text
    assert browser.eval(charts) == n_charts
    shown = browser.shown_text()
    labels = list(demo_ws.labelled.values())
    if path in ("", "over-time"):  # the map's marks and the trend's legend name every theme
        for label in labels:
            assert label in shown, label
    else:  # the selected theme (the largest, labelled first) is named on the page
        if path != "choose-k":
            assert labels[0] in shown
    if path in ("", "theme-cards"):  # a heading shows the label as typed (Markdown escaped)
        headings = browser.eval("[...document.querySelectorAll('h3')].map(h => h.innerText)")
        heading = f"Selected: {labels[0]}" if path == "" else labels[0]
        assert any(h.strip() == heading for h in headings), headings
    assert not browser.dialogs


def test_the_report_draws_every_chart_offline(report_file, browser, shots) -> None:
    specs = report_file.read_text(encoding="utf-8").count('<div class="chart" id=')
    browser.send("Network.enable")
    browser.send(
        "Network.emulateNetworkConditions",
        offline=True,
        latency=0,
        downloadThroughput=0,
        uploadThroughput=0,
    )
    try:
        browser.goto(report_file.resolve().as_uri())
        drawn = browser.wait(
            f"document.querySelectorAll('.chart svg.marks').length >= {specs} && "
            "document.querySelectorAll('.chart svg.marks').length",
            timeout=120,
        )
        browser.screenshot(shots / "report.png")
    finally:
        browser.send("Network.emulateNetworkConditions", offline=False, latency=0,
                     downloadThroughput=-1, uploadThroughput=-1)  # fmt: skip
    assert drawn == specs
    assert "could not be drawn" not in browser.eval("document.body.innerText")
    assert not browser.dialogs
