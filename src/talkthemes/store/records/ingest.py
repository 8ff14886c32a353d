"""Records of ingest: same-text pairs and stored turns."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["StoredTurn", "TextMatch"]


@dataclass(frozen=True, slots=True)
class TextMatch:
    """A call whose text equals a stored call's under another id (``text_matches`` row).

    Attributes
    ----------
    tid, source : str
        The call and where it came from.
    original : str
        The id of the stored call with the same text.
    kind : str
        ``reexport_skipped``, ``reexport_kept`` (a likely re-export) or ``same_text`` (two
        calls, both stored); see :mod:`talkthemes.calls.identity`.
    reason : str
        Why (short text, which metadata differs, or "likely re-export").
    """

    tid: str
    source: str
    original: str
    kind: str
    reason: str


@dataclass(frozen=True, slots=True)
class StoredTurn:
    """A turn as stored: position, speaker label, role, times and text."""

    seq: int
    speaker: str
    role: str
    start: float | None
    end: float | None
    text: str
