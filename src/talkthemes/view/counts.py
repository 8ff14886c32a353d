"""How many transcripts a version shows, and how many it leaves out and why.

The store may hold more transcripts than a version's themes describe: preparation leaves
out transcripts too short (or emptied) after its steps, and transcripts ingested after
the version was made are not in it until a refresh. Wherever the viewer or the report
states a count, it says how many were left out and why, so "1,500 stored" (``status``)
and "1,429 in the themes" (the viewer) never disagree silently.
"""

from __future__ import annotations

import json
import re
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

from talkthemes.versions.load import Version
from talkthemes.workspace import Workspace

__all__ = ["CallCounts", "call_counts", "excluded_reasons", "reason_group"]

# The preparation's reasons (prepare --explain words them) → how a reader is told.
_GROUPS: tuple[tuple[re.Pattern[str], str], ...] = (
    (re.compile(r"fewer than min_tokens"), "too short after preparation"),
    (re.compile(r"^only boilerplate"), "only greetings and other set phrases"),
    (re.compile(r"^no words in the turns kept"), "no words from the speakers kept"),
    (re.compile(r"^no words$"), "no words"),
    (re.compile(r"nothing left after scrub"), "only personal data and redaction marks"),
    (re.compile(r"no tokens left after the filter"), "only filler and stop words"),
)


def reason_group(reason: str) -> str:
    """A preparation reason, as a reader is told it (``"too short after preparation"``)."""
    for pattern, group in _GROUPS:
        if pattern.search(reason):
            return group
    return re.sub(r"\d+", "N", reason.strip()) or "left out by preparation"


def excluded_reasons(folder: Path) -> dict[str, str]:
    """The transcripts a version's preparation left out, by id, with the reason given.

    Read from the version's ``prep.json`` (``excluded``: ``[id, reason]`` pairs); empty
    when the file or the list is missing.
    """
    path = Path(folder) / "prep.json"
    try:
        info = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}
    pairs = info.get("excluded") if isinstance(info, dict) else None
    out: dict[str, str] = {}
    for pair in pairs or []:
        if isinstance(pair, (list, tuple)) and len(pair) == 2:
            out[str(pair[0])] = str(pair[1])
        elif isinstance(pair, dict) and "id" in pair:
            out[str(pair["id"])] = str(pair.get("reason", ""))
    return out


@dataclass(frozen=True)
class CallCounts:
    """Transcripts stored, described by the version's themes, and left out by reason.

    Attributes
    ----------
    stored : int
        Transcripts in the workspace's store.
    shown : int
        Transcripts the version's themes describe (every count on screen is out of these).
    left_out : dict of str to int
        Transcripts of the store not in the version, by reason, largest first.
    """

    stored: int
    shown: int
    left_out: dict[str, int] = field(default_factory=dict)

    @property
    def n_left_out(self) -> int:
        """Transcripts of the store not in the version."""
        return sum(self.left_out.values())

    def sentence(self) -> str:
        """One sentence for a caption, e.g. "1,429 of the 1,500 stored transcripts; 71 left
        out: 71 too short after preparation."."""
        if not self.left_out:
            return f"All {self.stored:,} stored transcripts."
        reasons = [f"{n:,} {why}" for why, n in self.left_out.items()]
        said = reasons[0] if len(reasons) == 1 else ", ".join(reasons[:-1]) + " and " + reasons[-1]
        return (
            f"{self.shown:,} of the {self.stored:,} stored transcripts; "
            f"{self.n_left_out:,} left out: {said}."
        )


def call_counts(ws: Workspace, version: Version) -> CallCounts:
    """Count a version's transcripts against the store's, with the reasons for the gap.

    Reasons: the preparation's (grouped by :func:`reason_group`), and "ingested after
    this version" for stored transcripts the version's preparation never saw.
    """
    with ws.store() as store:
        stored = int(store.count_transcripts())
    shown = len(version.doc_ids)
    excluded = excluded_reasons(version.folder)
    in_version = set(version.doc_ids)
    groups = Counter(reason_group(r) for tid, r in excluded.items() if tid not in in_version)
    later = stored - shown - sum(groups.values())
    if later > 0:
        groups["ingested after this version was made"] += later
    left = dict(sorted(groups.items(), key=lambda kv: (-kv[1], kv[0])))
    return CallCounts(stored=stored, shown=shown, left_out=left)
