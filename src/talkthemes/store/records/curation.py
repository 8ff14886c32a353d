"""Records of the curation log (``curation_log`` rows)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from talkthemes.store.records._base import EMPTY, document, opt_int

__all__ = ["CURATION_ACTIONS", "CurationEntry"]

#: The curation actions the log records.
CURATION_ACTIONS = ("label", "note", "not_a_theme", "a_theme", "merge", "unmerge")


@dataclass(frozen=True, slots=True)
class CurationEntry:
    """One curation action (``curation_log`` row).

    Attributes
    ----------
    id : int
        The log row (grows with every action).
    at : str
        When (ISO 8601 with offset).
    action : str
        One of :data:`CURATION_ACTIONS`.
    theme_id : int
        The theme acted on.
    version : int or None
        The current version when it was done.
    detail : mapping
        ``before``/``after`` (label, note), ``into`` (merge), ``from`` (unmerge); read-only.
    """

    id: int
    at: str
    action: str
    theme_id: int
    version: int | None = None
    detail: Mapping[str, Any] = EMPTY

    @classmethod
    def from_row(
        cls, rid: int, at: str, action: str, theme_id: int, version: int | None, detail: str
    ) -> CurationEntry:
        """Build from the columns ``id, at, action, theme_id, version, detail``."""
        return cls(
            id=int(rid),
            at=str(at),
            action=str(action),
            theme_id=int(theme_id),
            version=opt_int(version),
            detail=document(detail),
        )

    def to_json(self) -> dict[str, Any]:
        """The JSON form (``label --log --json``): the columns, then the detail's keys."""
        return {
            "id": self.id,
            "at": self.at,
            "action": self.action,
            "theme_id": self.theme_id,
            "version": self.version,
            **self.detail,
        }
