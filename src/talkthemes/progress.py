"""One progress protocol for every long operation.

Every operation that takes a while accepts ``progress: Progress | None`` and calls it as
``progress(done, total, what)``: ``done`` units finished out of ``total`` (0 when the total is
not known yet), ``what`` a short description of the current item or stage. The faces adapt it:
the CLI to a rich bar, the viewer to a Streamlit bar, the HTTP service to a job record.
"""

from __future__ import annotations

from typing import Protocol

__all__ = ["Progress", "report", "silent"]


class Progress(Protocol):
    """``progress(done, total, what)``: ``total`` is 0 while unknown."""

    def __call__(self, done: int, total: int, what: str = "") -> None: ...


def silent(done: int, total: int, what: str = "") -> None:
    """A :class:`Progress` that shows nothing."""


def report(progress: Progress | None, done: int, total: int, what: str = "") -> None:
    """Call ``progress`` when one was given."""
    if progress is not None:
        progress(done, total, what)
