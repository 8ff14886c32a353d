"""The unthemed group: a version's transcripts too short to carry a theme.

Preparation leaves out a transcript with fewer than ``[prepare] min_tokens`` content terms
(a hang-up, a wrong number, small talk, a line of greetings): it has too little to say
which reason it is about, and a model that saw it would gather such calls in a theme of
their own. Those transcripts are not dropped from sight: every screen and export of a
version shows them as one **unthemed** group, with its count and the reasons, read here
from the version's ``prep.json`` (``excluded``: ``[id, reason]`` pairs), which the prep
wrote at publish and the frozen prep at refresh. ``assign`` applies the same rule to new
text (:func:`talkthemes.assign.assign_frame`). See docs/methods.md, "The unthemed group".
"""

from __future__ import annotations

import json
import re
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

__all__ = [
    "UNTHEMED",
    "UnthemedGroup",
    "excluded_reasons",
    "reason_group",
    "unthemed_group",
]

#: What a lead-theme column says for a transcript of the unthemed group.
UNTHEMED = "unthemed"

# The preparation's reasons (prepare --explain words them) → how a reader is told.
_GROUPS: tuple[tuple[re.Pattern[str], str], ...] = (
    (re.compile(r"fewer than min_tokens"), "too short after preparation"),
    (re.compile(r"^only boilerplate"), "only greetings and other set phrases"),
    (re.compile(r"^no words in the turns kept"), "no words from the speakers kept"),
    (re.compile(r"^no words$"), "no words"),
    (re.compile(r"nothing left after scrub"), "only personal data and redaction marks"),
    (re.compile(r"no tokens left after the filter"), "only filler and stop words"),
    (re.compile(r"^no word in the vocabulary"), "no word the themes know"),
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
class UnthemedGroup:
    """A version's unthemed transcripts: how many, what share, and why.

    Attributes
    ----------
    count : int
        Transcripts of the version in the group.
    themed : int
        Transcripts of the version that have themes.
    by_reason : dict of str to int
        The count per reason as a reader is told it (:func:`reason_group`), largest first.
    reasons : dict of str to str
        Each unthemed transcript's id and the preparation's own reason, in the prep's order.
    """

    count: int
    themed: int
    by_reason: dict[str, int] = field(default_factory=dict)
    reasons: dict[str, str] = field(default_factory=dict)

    @property
    def share(self) -> float:
        """The group's share of the version's transcripts (themed and unthemed); 0 if none."""
        total = self.count + self.themed
        return self.count / total if total else 0.0

    def to_json(self) -> dict[str, Any]:
        """``count``, ``share`` (0–1, six decimals) and ``by_reason``."""
        return {"count": self.count, "share": round(self.share, 6), "by_reason": self.by_reason}

    def sentence(self) -> str:
        """One line for a screen, e.g. "Unthemed: 71 transcripts (4.7%), too short after
        preparation (71)."; "Unthemed: none." when empty."""
        if not self.count:
            return "Unthemed: none."
        why = ", ".join(f"{r} ({n:,})" for r, n in self.by_reason.items())
        word = "transcript" if self.count == 1 else "transcripts"
        return f"Unthemed: {self.count:,} {word} ({100 * self.share:.1f}%), {why}."


def unthemed_group(folder: Path, doc_ids: Sequence[str] | None = None) -> UnthemedGroup:
    """The unthemed group of the version in ``folder``.

    Parameters
    ----------
    folder : Path
        ``versions/<n>/`` (its ``prep.json`` lists the transcripts the prep excluded).
    doc_ids : sequence of str, optional
        The version's themed transcripts (default: read from its ``doc_ids.json``); an
        excluded id among them is not counted.

    Returns
    -------
    UnthemedGroup
    """
    if doc_ids is None:
        try:
            doc_ids = json.loads((Path(folder) / "doc_ids.json").read_text(encoding="utf-8"))
        except (OSError, ValueError):
            doc_ids = []
    excluded = excluded_reasons(folder)
    # A version's ids are distinct; only the (few) excluded ids are looked up among them,
    # so a million-call version is walked once, without a set of its ids.
    inside = set(excluded).intersection(doc_ids) if excluded else set()
    reasons = {t: r for t, r in excluded.items() if t not in inside}
    counts = Counter(reason_group(r) for r in reasons.values())
    by_reason = dict(sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])))
    return UnthemedGroup(
        count=len(reasons), themed=len(doc_ids), by_reason=by_reason, reasons=reasons
    )
