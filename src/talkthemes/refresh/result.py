"""What a refresh did: :class:`RefreshResult`, the document ``refresh --json`` prints."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

__all__ = ["RefreshResult"]


@dataclass
class RefreshResult:
    """What :func:`refresh` did.

    Attributes
    ----------
    status : str
        ``published`` or ``nothing_new``.
    previous_version : int
    version : int or None
        The version published.
    new_transcripts : int
        Stored transcripts the previous version did not know.
    ingest : dict or None
        The ingest report (JSON form).
    counts : dict
        Themes ``carried``, ``new`` and ``retired``.
    new_themes : list of dict
        Each new theme: ``theme_id``, ``top_terms``, ``verdict`` (``new`` when alerted;
        else ``split``, ``small``, ``familiar`` or ``not_a_theme``), ``alert``,
        ``split_of``, ``growth``, ``evidence`` and, when alerted, ``examples``
        (:func:`talkthemes.versions.alerts.judge_new_themes`).
    risers, fallers : list of dict
        Carried themes whose share of the new transcripts rose (fell) significantly
        (:func:`talkthemes.versions.alerts.judge_changes`), with their ``examples``.
    language : str or None
        The language this refresh themed (the workspace's ``[prepare] lang``).
    languages : dict
        Language code → the refresh of that language's lane (docs/languages.md).
    room : dict or None
        The room check (:class:`talkthemes.refresh.room.RoomDecision`): whether K was
        raised to give a new call reason a theme of its own; None when not run (a
        re-sweep, or ``[refresh] new_theme_room = 0``).
    """

    status: str
    previous_version: int
    version: int | None = None
    new_transcripts: int = 0
    ingest: dict[str, Any] | None = None
    alert_on_new: bool = False
    alert_on_rise: bool = False
    family: str | None = None
    k: int | None = None
    resweep: bool = False
    resweep_reason: str | None = None
    coherence: dict[str, Any] | None = None
    room: dict[str, Any] | None = None
    threshold: dict[str, Any] | None = None
    counts: dict[str, int] = field(default_factory=dict)
    new_themes: list[dict[str, Any]] = field(default_factory=list)
    retired_themes: list[dict[str, Any]] = field(default_factory=list)
    risers: list[dict[str, Any]] = field(default_factory=list)
    fallers: list[dict[str, Any]] = field(default_factory=list)
    drift_files: list[str] = field(default_factory=list)
    curation: dict[str, Any] | None = None
    seconds: float = 0.0
    language: str | None = None
    languages: dict[str, RefreshResult] = field(default_factory=dict)

    @property
    def rejected(self) -> int:
        """Inputs the ingest step rejected."""
        return len((self.ingest or {}).get("rejects", []))

    @property
    def alerted_new(self) -> list[int]:
        """Ids of the new themes alerted (every piece of evidence held)."""
        return [int(t["theme_id"]) for t in self.new_themes if t.get("alert")]

    @property
    def exit_code(self) -> int:
        """4 when asked to alert (``alert_on_new``, ``alert_on_rise``) and such an alert
        occurred; else 3 when some inputs were rejected; else 0 (published, or nothing new
        to do)."""
        if (self.alert_on_new and self.alerted_new) or (self.alert_on_rise and self.risers):
            return 4
        if any(lane.exit_code == 4 for lane in self.languages.values()):
            return 4  # an alert in a language lane
        return 3 if self.rejected else 0

    def to_json(self) -> dict[str, Any]:
        return {
            "status": self.status,
            "exit_code": self.exit_code,
            "previous_version": self.previous_version,
            "version": self.version,
            "new_transcripts": self.new_transcripts,
            "family": self.family,
            "k": self.k,
            "resweep": self.resweep,
            "resweep_reason": self.resweep_reason,
            "coherence_check": self.coherence,
            "room": self.room,
            "threshold": self.threshold,
            "counts": self.counts,
            "alerts": {
                "new": self.alerted_new,
                "rise": [int(t["theme_id"]) for t in self.risers],
                "fall": [int(t["theme_id"]) for t in self.fallers],
            },
            "new_themes": self.new_themes,
            "risers": self.risers,
            "fallers": self.fallers,
            "retired_themes": self.retired_themes,
            "drift_files": self.drift_files,
            "curation": self.curation,
            "seconds": round(self.seconds, 2),
            "ingest": self.ingest,
            "language": self.language,
            "languages": {code: lane.to_json() for code, lane in self.languages.items()},
        }
