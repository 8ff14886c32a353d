"""The viewer and the report in Debian's Chromium, driven with Playwright as a user would.

One viewer is served for the module as a user starts it (``python -m talkthemes.serve``)
on a free port of 127.0.0.1, over the shared demo workspace; Playwright drives the system
browser (``/usr/bin/chromium``, never a downloaded one). Each test opens a section by its
address and does what a user does there. Every page must show no exception, no Markdown
escape left in the text, no raw field name, and log no console error.

Needs Debian's ``chromium`` and the ``playwright`` package (dev extra); skipped without.
"""

from __future__ import annotations

import os
import re
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from typing import Any

import pytest

os.environ.setdefault("PLAYWRIGHT_SKIP_BROWSER_DOWNLOAD", "1")  # the system browser only
sync_api = pytest.importorskip("playwright.sync_api")

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")

pytestmark = [
    pytest.mark.browser,
    pytest.mark.slow,  # one viewer for the module; about 1.5 min in all
    pytest.mark.skipif(
        CHROMIUM is None, reason="needs Debian's chromium: apt-get install -y chromium"
    ),
]

SECTIONS = {
    "choose-k": "Choose K",
    "theme-map": "Theme map",
    "theme-cards": "Theme cards",
    "calls": "Calls",
    "over-time": "Over time",
    "refresh-history": "Refresh history",
}
CHART = '[data-testid="stVegaLiteChart"]'
IDLE = (
    "() => document.querySelectorAll("
    '\'[data-testid="stSpinner"], [data-testid="stSkeleton"]\').length === 0'
)


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.fixture(scope="module")
def viewer(browser_ws) -> Iterator[str]:
    """The viewer served on a free port over a copy of the demo workspace; its base URL."""
    port = _free_port()
    proc = subprocess.Popen(
        [sys.executable, "-m", "talkthemes.serve", str(browser_ws.root), str(port)],
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        start_new_session=True,
        text=True,
    )
    base = f"http://127.0.0.1:{port}"
    try:
        first = proc.stdout.readline()
        assert base in first, first
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
def browser() -> Iterator[Any]:
    with sync_api.sync_playwright() as pw:
        chromium = pw.chromium.launch(
            executable_path=CHROMIUM,
            args=["--no-sandbox", "--disable-gpu", "--disable-background-networking"],
        )
        try:
            yield chromium
        finally:
            chromium.close()


class Page:
    """A browser tab that records console errors and dialogs, with a user's helpers."""

    def __init__(self, browser: Any, *, offline: bool = False) -> None:
        self.context = browser.new_context(viewport={"width": 1400, "height": 1000})
        if offline:
            self.context.set_offline(True)
        self.page = self.context.new_page()
        self.errors: list[str] = []
        self.dialogs: list[str] = []
        self.page.on("console", self._console)
        self.page.on("pageerror", lambda exc: self.errors.append(f"page error: {exc}"))
        self.page.on("dialog", lambda d: (self.dialogs.append(d.message), d.dismiss()))

    def _console(self, msg: Any) -> None:
        if msg.type not in ("error", "warning"):
            return
        where = (msg.location or {}).get("url", "")
        # Streamlit's client looks for its server under the page's own path first
        # (/calls/_stcore/health), then under the root: an expected 404, not ours.
        if "/_stcore/" in where or ("Failed to load resource" in msg.text and "_stcore" in where):
            return
        if msg.type == "warning" and "Vega" not in msg.text and "WARN" not in msg.text:
            return
        self.errors.append(f"{msg.type}: {msg.text} ({where})")

    def open(self, url: str, title: str | None = None) -> None:
        self.page.goto(url)
        if title is not None:
            self.page.locator("h1", has_text=title).first.wait_for(timeout=120_000)
        self.settle()

    def settle(self, charts: int = 0) -> None:
        """Wait until no spinner is left and at least ``charts`` charts are drawn."""
        self.page.wait_for_function(IDLE, timeout=120_000)
        if charts:
            self.page.wait_for_function(
                f"() => document.querySelectorAll('{CHART} svg.marks').length >= {charts}",
                timeout=120_000,
            )
        time.sleep(0.8)  # the last chart's transitions
        self.page.wait_for_function(IDLE, timeout=120_000)

    def wait_text(self, text: str, timeout: float = 60_000) -> None:
        """Wait until ``text`` shows anywhere on the page (charts included)."""
        self.page.wait_for_function(
            "t => document.body.innerText.includes(t) || [...document.querySelectorAll("
            "'svg text')].some(e => e.textContent.includes(t))",
            arg=text,
            timeout=timeout,
        )

    def text(self) -> str:
        """What a reader sees: page text, chart text and the values in input boxes."""
        return self.page.evaluate(
            "() => [document.body.innerText,"
            " ...[...document.querySelectorAll('svg text')].map(t => t.textContent),"
            " ...[...document.querySelectorAll('input')].map(i => i.value)].join('\\n')"
        )

    def bar_widths(self, chart: int) -> list[float]:
        """Widths in pixels of the bars the ``chart``-th chart on the page draws."""
        return self.page.evaluate(
            f"""() => {{
            const chart = document.querySelectorAll('{CHART}')[{chart}];
            return [...chart.querySelectorAll('path[aria-roledescription="bar"]')]
                .map(p => p.getBBox().width);
        }}"""
        )

    def choose(self, label: str, text: str) -> None:
        """Pick an option of the select box labelled ``label`` by typing it, as a user does."""
        box = self.page.locator('[data-testid="stSelectbox"]').filter(has_text=label).first
        field = box.locator("input").first
        field.click()
        field.fill(text)
        self.page.get_by_role("option").filter(has_text=text).first.click()
        self.settle()

    def close(self) -> None:
        self.context.close()


@pytest.fixture
def page(browser) -> Iterator[Page]:
    tab = Page(browser)
    try:
        yield tab
    finally:
        tab.close()


def assert_clean(tab: Page) -> None:
    """No exception, no leftover Markdown escape, no raw field name, no console error."""
    text = tab.text()
    assert tab.page.locator('[data-testid="stException"]').count() == 0
    assert "Traceback" not in text and "Page not found" not in text
    assert "\\" not in text, [line for line in text.splitlines() if "\\" in line][:3]
    assert "duration_s" not in text and "c_npmi" not in text
    assert not tab.errors, tab.errors
    assert not tab.dialogs


@pytest.mark.parametrize("address", list(SECTIONS))
def test_each_section_answers_at_its_own_address(viewer, page, address) -> None:
    page.open(f"{viewer}/{address}", SECTIONS[address])
    assert page.page.url.rstrip("/").endswith(f"/{address}")
    headings = page.page.locator("h1").all_inner_texts()
    assert SECTIONS[address] in [h.strip() for h in headings]
    assert_clean(page)


def test_the_root_address_opens_the_theme_map(viewer, page) -> None:
    page.open(f"{viewer}/", "Theme map")
    assert page.page.url.rstrip("/").endswith("/theme-map")
    assert_clean(page)


@pytest.mark.parametrize("period", ["Week", "Month"])
def test_risers_and_fallers_draw_bars_with_width(viewer, page, period) -> None:
    page.open(f"{viewer}/over-time", "Over time")
    page.page.locator('[data-testid="stRadio"] label', has_text=period).first.click()
    page.settle(charts=3)
    widths = page.bar_widths(2)
    assert len(widths) >= 3 and max(widths) > 20, widths
    assert sum(w > 1 for w in widths) >= len(widths) // 2, widths
    assert f"The {period.lower()} to look at" in page.text()
    assert_clean(page)


def test_the_report_draws_every_chart_offline(report_file, browser) -> None:
    specs = report_file.read_text(encoding="utf-8").count('<div class="chart" id=')
    tab = Page(browser, offline=True)
    try:
        tab.page.goto(report_file.resolve().as_uri())
        tab.page.wait_for_function(
            f"() => document.querySelectorAll('.chart svg.marks').length >= {specs}",
            timeout=120_000,
        )
        drawn = tab.page.locator(".chart svg.marks").count()
        text = tab.text()
    finally:
        tab.close()
    assert drawn == specs
    assert "could not be drawn" not in text and "Click a theme" not in text
    assert not re.search(r"\(cell \)", text)
    assert not tab.errors, tab.errors


def test_planted_personal_data_never_reaches_the_screen(viewer, page, browser_ws) -> None:
    from tests.viewer.conftest import PII, PII_ID

    from talkthemes.versions.load import load_version

    version = load_version(browser_ws)
    pos = int(version.lead()[version.doc_ids.index(PII_ID)])
    page.open(f"{viewer}/calls", "Calls")
    page.choose("Theme", f"(#{version.theme_ids[pos]})")
    page.choose("Open a transcript", PII_ID)
    page.page.locator(".tt-transcript .tt-masked").first.wait_for(timeout=60_000)
    text = page.text()
    assert "Brisha" not in text and PII_ID in text  # the planted call is the one open
    assert not [p for p in PII if p in text]
    masked = page.page.locator(".tt-transcript .tt-masked").all_inner_texts()
    assert {"name", "e-mail", "number", "card number", "phone number", "address"} <= set(masked)
    assert_clean(page)


def test_pick_a_theme_on_the_map_and_land_on_its_card(viewer, page, browser_ws) -> None:
    from talkthemes.versions.load import load_version
    from talkthemes.view.themes import theme_names

    version = load_version(browser_ws)
    names = theme_names(version)
    smallest = int(version.coverage().argmin())  # not the theme selected at first
    page.open(f"{viewer}/theme-map", "Theme map")
    page.settle(charts=1)
    first_line = page.page.locator(f"{CHART} svg text").filter(
        has_text=names[smallest].split(" · ")[0]
    )
    first_line.first.click()
    page.page.locator("h3", has_text=f"Selected: {names[smallest]}").wait_for(timeout=60_000)
    page.page.get_by_role("link", name="Open its card").click()
    page.page.locator("h1", has_text="Theme cards").wait_for(timeout=60_000)
    page.settle(charts=1)
    headings = [h.strip() for h in page.page.locator("h3").all_inner_texts()]
    assert names[smallest] in headings
    assert page.page.url.rstrip("/").endswith("/theme-cards")
    assert_clean(page)


def test_a_label_typed_on_a_card_shows_in_calls_over_time_and_the_report(
    viewer, page, browser_ws, tmp_path
) -> None:
    from talkthemes.report import write_report

    label = "Outage callbacks & <crews>"
    page.open(f"{viewer}/theme-cards", "Theme cards")
    field = page.page.get_by_label("Label", exact=True)
    field.fill(label)
    field.press("Enter")
    page.page.get_by_text("saved", exact=False).first.wait_for(timeout=30_000)
    page.settle(charts=1)
    assert label in page.page.locator("h3").all_inner_texts()
    page.open(f"{viewer}/calls", "Calls")
    box = page.page.locator('[data-testid="stSelectbox"]').filter(has_text="Theme").first
    sync_api.expect(box.locator("input").first).to_have_value(
        re.compile(re.escape(label)), timeout=60_000
    )  # the theme picked in Calls goes by its new label
    page.open(f"{viewer}/over-time", "Over time")
    page.settle(charts=3)
    page.wait_text(label)
    assert label in page.page.locator(f"{CHART} svg text").all_text_contents()
    assert_clean(page)
    report = write_report(browser_ws, tmp_path / "themes.html")
    tab = Page(page.context.browser, offline=True)
    try:
        tab.page.goto(report.resolve().as_uri())
        tab.page.locator("h3", has_text=label).first.wait_for(timeout=60_000)
        assert label in tab.page.locator("article h3").all_inner_texts()
    finally:
        tab.close()


def test_filter_calls_by_a_metadata_value(viewer, page, browser_ws) -> None:
    from talkthemes.versions.load import load_version
    from talkthemes.view.calls import CallFilter, calls_table
    from talkthemes.view.metadata import load_metadata

    version = load_version(browser_ws)
    meta = load_metadata(browser_ws, version.doc_ids)
    pos = int(version.coverage().argmax())
    everything = len(calls_table(version, meta, pos))
    billing = len(calls_table(version, meta, pos, CallFilter(categories={"queue": ["billing"]})))
    assert 0 < billing < everything
    page.open(f"{viewer}/calls", "Calls")
    caption = page.page.get_by_text("transcripts match", exact=False).first
    assert caption.inner_text().startswith(f"{everything:,} transcripts match")
    queue = page.page.locator('[data-testid="stMultiSelect"]').filter(has_text="Queue").first
    queue.locator("input").first.click()
    page.page.get_by_role("option", name="billing", exact=True).click()
    page.page.keyboard.press("Escape")
    page.settle()
    page.page.get_by_text(f"{billing:,} transcripts match", exact=False).first.wait_for(
        timeout=60_000
    )
    assert_clean(page)
