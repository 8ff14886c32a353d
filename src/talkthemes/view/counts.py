"""How many transcripts a version shows, how many are unthemed, and how many it does not hold.

The store may hold more transcripts than a version's themes describe: preparation leaves
out transcripts too short (or emptied) after its steps — the version's **unthemed** group
(:mod:`talkthemes.versions.unthemed`, the one source of that count) — and transcripts
ingested after the version was made are not in it until a refresh. Wherever the viewer or
the report states a count, it says how many are unthemed and why, and how many came later,
so "1,500 stored" (``status``) and "1,429 in the themes" (the viewer) never disagree
silently.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from talkthemes.versions.load import Version
from talkthemes.versions.unthemed import (
    UnthemedGroup,
    excluded_reasons,
    reason_group,
    unthemed_group,
)
from talkthemes.workspace import Workspace

__all__ = [
    "CallCounts",
    "call_counts",
    "excluded_reasons",
    "reason_group",
    "version_unthemed",
]

#: Why a stored transcript is not in a version at all.
LATER = "ingested after this version was made"


@dataclass(frozen=True)
class CallCounts:
    """Transcripts stored, described by the version's themes, unthemed, and not in it.

    Attributes
    ----------
    stored : int
        Transcripts in the workspace's store.
    shown : int
        Transcripts the version's themes describe (every theme's share is out of these).
    unthemed : dict of str to int
        The version's unthemed transcripts by reason, largest first.
    left_out : dict of str to int
        Stored transcripts the version does not hold (ingested after it), by reason.
    """

    stored: int
    shown: int
    unthemed: dict[str, int] = field(default_factory=dict)
    left_out: dict[str, int] = field(default_factory=dict)

    @property
    def n_unthemed(self) -> int:
        """The version's unthemed transcripts."""
        return sum(self.unthemed.values())

    @property
    def n_left_out(self) -> int:
        """Stored transcripts the version does not hold."""
        return sum(self.left_out.values())

    def sentence(self) -> str:
        """One sentence for a caption, e.g. "Of the 1,500 stored transcripts: 1,429 in the
        themes, 71 unthemed (71 too short after preparation)."."""
        if not self.unthemed and not self.left_out:
            return f"All {self.stored:,} stored transcripts are in the themes."
        parts = [f"{self.shown:,} in the themes"]
        if self.unthemed:
            why = _listed(self.unthemed)
            parts.append(f"{self.n_unthemed:,} unthemed ({why})")
        if self.left_out:
            parts.append(_listed(self.left_out))
        return f"Of the {self.stored:,} stored transcripts: " + ", ".join(parts) + "."


def _listed(counts: dict[str, int]) -> str:
    items = [f"{n:,} {why}" for why, n in counts.items()]
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]


def version_unthemed(version: Version) -> UnthemedGroup:
    """The version's unthemed group (:func:`talkthemes.versions.unthemed.unthemed_group`)."""
    return unthemed_group(version.folder, version.doc_ids)


def call_counts(ws: Workspace, version: Version) -> CallCounts:
    """Count a version's transcripts against the store's: unthemed by reason, and the
    stored transcripts the version never saw ("ingested after this version was made")."""
    with ws.store() as store:
        stored = int(store.count_transcripts())
    group = version_unthemed(version)
    later = stored - len(version.doc_ids) - group.count
    left = {LATER: later} if later > 0 else {}
    return CallCounts(stored=stored, shown=len(version.doc_ids), unthemed=group.by_reason,
                      left_out=left)  # fmt: skip
