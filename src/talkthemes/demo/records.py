"""Records of the demo scenario: turns, calls, render styles and the files written."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, NamedTuple

if TYPE_CHECKING:
    import datetime as dt
    from pathlib import Path

__all__ = ["DemoCall", "DemoFiles", "DemoTurn", "RenderStyle"]


class DemoTurn(NamedTuple):
    """One turn of a demo call: ``(speaker_label, role, text, start_seconds)``."""

    speaker: str
    role: str
    text: str
    start: float


@dataclass(frozen=True, slots=True)
class RenderStyle:
    """How one call is laid out in its file.

    ``timestamps`` (``none``, ``bracket`` for ``[hh:mm:ss]``, ``plain``) and ``wrap`` (long
    turns continue on unlabelled lines) apply to ``.txt``; ``cue_ids``, ``close_voice``
    (``</v>`` tags), ``curly`` (typographic apostrophes) and ``note`` (a ``NOTE`` block)
    apply to WebVTT.
    """

    timestamps: str = "none"
    wrap: bool = False
    cue_ids: bool = False
    close_voice: bool = False
    curly: bool = False
    note: bool = False


@dataclass(frozen=True, slots=True)
class DemoCall:
    """One invented call, its metadata and its answer key.

    Attributes
    ----------
    call_id : str
        ``C<yyyy>-<mm>-<nnnnnn>``, numbered within the month in date order.
    date : datetime.date
    queue, site, channel, agent : str
    duration_s : int
    turns : tuple of DemoTurn
    reasons : tuple of str
        Lead reason, then the second reason if any; empty for off-topic calls and short
        calls cut off before a reason was given.
    kind : str
        ``regular``, ``off_topic`` or ``short``.
    detail : str
        Sub-kind of off-topic and short calls (``wrong_number``, ``dropped``, ...).
    format : str
        ``txt``, ``vtt`` or ``csv``: how :func:`write_demo` writes it.
    style : RenderStyle
    words_per_second : float
        Speaking rate behind the turn times.
    """

    call_id: str
    date: dt.date
    queue: str
    site: str
    channel: str
    agent: str
    duration_s: int
    turns: tuple[DemoTurn, ...]
    reasons: tuple[str, ...]
    kind: str
    detail: str
    format: str
    style: RenderStyle = field(default_factory=RenderStyle)
    words_per_second: float = 2.6

    @property
    def text(self) -> str:
        """All turns' text joined by newlines."""
        return "\n".join(t.text for t in self.turns)

    @property
    def word_count(self) -> int:
        """Number of whitespace-separated words over all turns."""
        return sum(len(t.text.split()) for t in self.turns)


@dataclass(frozen=True, slots=True)
class DemoFiles:
    """Where :func:`write_demo` put things, and how many calls of each format.

    Attributes
    ----------
    root : Path
        The output folder.
    exports : Path
        The folder to ingest: ``calls/``, ``turns.csv`` and ``manifest.csv``.
    manifest, truth : Path
        ``exports/manifest.csv`` and ``root/truth.csv`` (the answer key, never ingested).
    turns : Path or None
        ``exports/turns.csv``, or ``None`` when no call was written as CSV rows. Beyond
        :data:`CSV_CALLS_PER_FILE` such calls, the rest go to ``turns-002.csv``, ….
    inbox : Path or None
        ``root/inbox`` with October's calls when they were held back, else ``None``.
    counts, inbox_counts : dict of str to int
        Calls per format (``txt``, ``vtt``, ``csv``) in ``exports`` and in ``inbox``.
    """

    root: Path
    exports: Path
    manifest: Path
    truth: Path
    turns: Path | None
    inbox: Path | None
    counts: dict[str, int]
    inbox_counts: dict[str, int]

    @property
    def total(self) -> int:
        """All calls written, exports and inbox together."""
        return sum(self.counts.values()) + sum(self.inbox_counts.values())
