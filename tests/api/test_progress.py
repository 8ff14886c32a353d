"""The progress adapters: what the bar shows, that it shows nothing before the first report,
and that a file name with markup or control characters is shown literally."""

from __future__ import annotations

import io
import sys

import pytest
from rich.console import Console

import talkthemes as tt
from talkthemes.api.progress import shorten


def _console() -> tuple[Console, io.StringIO]:
    buffer = io.StringIO()
    return Console(file=buffer, width=120, force_terminal=False, color_system=None), buffer


def test_rich_bar_shows_label_count_and_current_item_literally() -> None:
    console, buffer = _console()
    with tt.rich_progress("ingest", console=console) as bar:
        bar(1, 4, "calls/a.txt")
        bar(3, 4, "[red]calls/b.txt[/red]\x1b[2J")
    shown = buffer.getvalue()
    assert "ingest" in shown and "3/4" in shown
    assert "[red]calls/b.txt[/red]?[2J" in shown  # markup and escape codes not obeyed


def test_rich_bar_without_a_total_counts_up() -> None:
    console, buffer = _console()
    with tt.rich_progress("assign", console=console) as bar:
        bar(250, 0, "c250")
    assert "250/?" in buffer.getvalue()


def test_no_report_no_bar() -> None:
    """A call that fails before its first step (a busy workspace) leaves no empty bar."""
    console, buffer = _console()
    with pytest.raises(tt.WorkspaceBusyError), tt.rich_progress("sweep", console=console):
        raise tt.WorkspaceBusyError("workspace busy")
    assert buffer.getvalue() == ""


def test_long_items_keep_their_end() -> None:
    name = "calls/2026-05/" + "x" * 60 + "-c0042.txt"
    assert shorten(name) == "…" + name[-39:]
    assert len(shorten(name)) == 40 and shorten("short.txt") == "short.txt"


def test_tqdm_bar_when_tqdm_is_installed() -> None:
    pytest.importorskip("tqdm")
    buffer = io.StringIO()
    with tt.tqdm_progress("prepare", file=buffer, mininterval=0) as bar:
        bar(0, 4, "read")
        bar(2, 4, "lemmas")
    shown = buffer.getvalue()
    assert "prepare" in shown and "2/4" in shown and "lemmas" in shown


def test_tqdm_missing_is_a_clear_error(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setitem(sys.modules, "tqdm.auto", None)  # import of it now fails
    with pytest.raises(tt.ConfigError, match=r"needs tqdm.*pip install tqdm"):
        with tt.tqdm_progress("x"):
            pass
