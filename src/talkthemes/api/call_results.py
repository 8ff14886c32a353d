"""What the API returns for the published versions and the calls the service reads.

Frozen dataclasses with a ``to_json()``: :class:`VersionInfo` (one per version,
:meth:`talkthemes.Workspace.versions`), :class:`CallsPage` of :class:`CallShare` (a theme's
calls, :meth:`~talkthemes.Workspace.theme_calls`) and :class:`CallDetail` with its
:class:`CallTurn` (one call, :meth:`~talkthemes.Workspace.call`). The other result types
the API adds are in :mod:`talkthemes.api.results`.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Any

__all__ = ["CallDetail", "CallShare", "CallTurn", "CallsPage", "VersionInfo"]


@dataclass(frozen=True)
class VersionInfo:
    """A published version, as :meth:`talkthemes.Workspace.versions` lists it.

    Attributes
    ----------
    version : int
    created_at : str
    current : bool
    family : str or None
        ``lda`` or ``nmf``.
    k : int or None
        Its number of themes.
    transcripts : int or None
        Transcripts it was trained on.
    made_by : str
        ``publish`` or ``refresh``.
    previous_version : int or None
        The version a refresh built on.
    """

    version: int
    created_at: str
    current: bool
    family: str | None
    k: int | None
    transcripts: int | None
    made_by: str
    previous_version: int | None = None

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict with the attributes in order."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


@dataclass(frozen=True)
class CallShare:
    """One call of a theme (:meth:`talkthemes.Workspace.theme_calls`).

    Attributes
    ----------
    call_id : str
    share : float
        The theme's share in the call (0–1).
    lead_theme_id : int
        The call's lead theme.
    lead_share : float
    metadata : dict of str to str
        As stored now.
    """

    call_id: str
    share: float
    lead_theme_id: int
    lead_share: float
    metadata: dict[str, str]

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict with the attributes in order."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


@dataclass(frozen=True)
class CallsPage:
    """One page of a theme's calls, most dominated first.

    Attributes
    ----------
    version : int
    theme_id : int
    total : int
        Calls that match, over all pages.
    offset, limit : int
        Where this page starts, and its largest size.
    calls : list of CallShare
    """

    version: int
    theme_id: int
    total: int
    offset: int
    limit: int
    calls: list[CallShare]

    @property
    def next_offset(self) -> int | None:
        """The offset of the next page; None on the last one."""
        end = self.offset + len(self.calls)
        return end if end < self.total else None

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict: the attributes, ``next_offset``, the calls as dicts."""
        return {
            "version": self.version,
            "theme_id": self.theme_id,
            "total": self.total,
            "offset": self.offset,
            "limit": self.limit,
            "next_offset": self.next_offset,
            "calls": [c.to_json() for c in self.calls],
        }


@dataclass(frozen=True)
class CallTurn:
    """A turn of a call as :meth:`talkthemes.Workspace.call` shows it."""

    speaker: str
    role: str
    start: float | None
    end: float | None
    text: str

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict with the attributes in order."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


@dataclass(frozen=True)
class CallDetail:
    """One stored call under a version (:meth:`talkthemes.Workspace.call`).

    Attributes
    ----------
    call_id : str
    version : int
    in_version : bool
        Whether the version was trained on it (only then are ``shares`` known here).
    lead_theme_id : int or None
    lead_share : float or None
    shares : dict of int to float, or None
        Theme id → share, in the version's theme order; None when not ``in_version``.
    metadata : dict of str to str
    text : str
        ``none``, ``masked`` or ``original``: how ``turns`` are given.
    turns : list of CallTurn, or None
        None when ``text`` is ``none``.
    reason : str
        Why there are no shares; empty otherwise.
    """

    call_id: str
    version: int
    in_version: bool
    lead_theme_id: int | None
    lead_share: float | None
    shares: dict[int, float] | None
    metadata: dict[str, str]
    text: str
    turns: list[CallTurn] | None
    reason: str = ""

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict; shares as a list of ``{"theme_id", "share"}``."""
        return {
            "call_id": self.call_id,
            "version": self.version,
            "in_version": self.in_version,
            "lead_theme_id": self.lead_theme_id,
            "lead_share": self.lead_share,
            "shares": None
            if self.shares is None
            else [{"theme_id": t, "share": s} for t, s in self.shares.items()],
            "metadata": dict(self.metadata),
            "text": self.text,
            "turns": None if self.turns is None else [t.to_json() for t in self.turns],
            "reason": self.reason,
        }
