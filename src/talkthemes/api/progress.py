"""Progress bars for the one progress protocol.

Every long method of :class:`talkthemes.Workspace` takes ``progress=``, a
:class:`talkthemes.progress.Progress`: any callable ``progress(done, total, what)``
(``total`` is 0 while unknown). A plain function is enough; these adapters show it as a bar:

* :func:`rich_progress` — a rich bar on a terminal (what the command line shows);
* :func:`tqdm_progress` — a tqdm bar (a widget in a notebook), when tqdm is installed: it is
  not a dependency of talkthemes.

Both are context managers that yield the callable and close the bar at the end::

    with tt.rich_progress("sweep") as bar:
        ws.sweep(k="4:12:2", progress=bar)

A bar appears at the first report, so a call that stops before its first step (a busy
workspace, a missing stage) leaves no empty bar behind.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from rich.console import Console
from rich.progress import (
    BarColumn,
    MofNCompleteColumn,
    TextColumn,
    TimeElapsedColumn,
    TimeRemainingColumn,
)
from rich.progress import Progress as RichProgress

from talkthemes.errors import ConfigError
from talkthemes.progress import Progress
from talkthemes.text import terminal_text

__all__ = ["WHAT_WIDTH", "rich_progress", "shorten", "tqdm_progress"]

#: Characters of ``what`` (often a file name) a bar shows; longer ones keep their end.
WHAT_WIDTH = 40


def shorten(what: str, width: int = WHAT_WIDTH) -> str:
    """``what`` made safe for a terminal and shortened from the left to ``width`` characters.

    Examples
    --------
    >>> shorten("calls/2026-05/" + "x" * 40 + ".txt", 12)
    '…xxxxxxx.txt'
    """
    shown = terminal_text(what)
    return shown if len(shown) <= width else "…" + shown[-(width - 1) :]


class _RichBar:
    """A rich bar started at the first report (see the module notes)."""

    def __init__(self, label: str, console: Console | None, transient: bool) -> None:
        self._label, self._console, self._transient = label, console, transient
        self._bar: RichProgress | None = None
        self._task: Any = None
        self._lock = threading.Lock()

    def __call__(self, done: int, total: int, what: str = "") -> None:
        with self._lock:
            if self._bar is None:
                self._bar = RichProgress(
                    TextColumn("[bold]{task.description}"),
                    BarColumn(),
                    MofNCompleteColumn(),
                    TimeElapsedColumn(),
                    TimeRemainingColumn(),
                    TextColumn("{task.fields[what]}", style="dim", markup=False),
                    console=self._console,
                    transient=self._transient,
                )
                self._bar.start()
                self._task = self._bar.add_task(terminal_text(self._label), total=None, what="")
            self._bar.update(self._task, completed=done, total=total or None, what=shorten(what))

    def close(self) -> None:
        with self._lock:
            if self._bar is not None:
                self._bar.stop()


@contextmanager
def rich_progress(
    label: str = "", *, console: Console | None = None, transient: bool = False
) -> Iterator[Progress]:
    """A rich progress bar, yielded as a :class:`~talkthemes.progress.Progress`.

    A total of 0 shows a bar without an end (``3/?``); ``what`` is shown literally (never as
    markup), shortened from the left to :data:`WHAT_WIDTH` characters.

    Parameters
    ----------
    label : str
        Shown before the bar.
    console : rich.console.Console, optional
        Where to draw it (default: rich's console on stdout).
    transient : bool
        Remove the bar when done instead of leaving its last state on screen.

    Yields
    ------
    Progress
    """
    bar = _RichBar(label, console, transient)
    try:
        yield bar
    finally:
        bar.close()


@contextmanager
def tqdm_progress(label: str = "", **options: Any) -> Iterator[Progress]:
    """A tqdm progress bar (``tqdm.auto``: a widget in a notebook), yielded as a Progress.

    Parameters
    ----------
    label : str
        The bar's description.
    **options
        Passed to ``tqdm`` (``leave``, ``file``, ``disable``, ...).

    Yields
    ------
    Progress

    Raises
    ------
    ConfigError
        When tqdm is not installed.
    """
    try:
        # Deferred on purpose: tqdm is optional, not a dependency of talkthemes.
        from tqdm.auto import tqdm
    except ImportError:
        raise ConfigError(
            "tqdm_progress needs tqdm, which is not installed (pip install tqdm); "
            "rich_progress needs nothing more"
        ) from None
    bar = tqdm(total=None, desc=label, **options)
    lock = threading.Lock()

    def update(done: int, total: int, what: str = "") -> None:
        with lock:
            if total and bar.total != total:
                bar.total = total
            bar.n = done
            bar.set_postfix_str(shorten(what), refresh=False)
            bar.refresh()

    try:
        yield update
    finally:
        bar.close()
