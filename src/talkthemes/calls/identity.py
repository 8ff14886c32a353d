"""Identity first: when two calls with the same text are one call exported twice.

The id of a call (a table's id column, a manifest key, a file name) is its identity: two
inputs with different ids are two calls. A hash of the normalised text
(:func:`~talkthemes.calls.model.normalised_hash`) only *flags* a likely re-export — the
same call exported again under another name — and only when

* the text is long enough to be unique (at least ``min_words`` words; "hello? … hello?"
  is what many callers who hang up say), and
* no metadata tells the two apart: a field named after one of ``fields`` (``date``,
  ``duration``, ``agent`` by default; matched as a word of the field name, so
  ``call_duration`` and ``agent_id`` count) that both calls have, with different values.

Otherwise both calls are stored and the pair is reported as "same text as <id>". What
happens to a likely re-export is a setting: skipped (the default) or kept.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

__all__ = ["KEPT", "SAME_TEXT", "SKIPPED", "ReexportRule", "metadata_conflicts"]

#: Kinds of same-text pairs, as stored and reported.
SKIPPED = "reexport_skipped"
KEPT = "reexport_kept"
SAME_TEXT = "same_text"

_NON_WORD = re.compile(r"[^0-9a-z]+")
_DURATION_TOLERANCE_S = 1.0  # exports round durations differently


@dataclass(frozen=True, slots=True)
class ReexportRule:
    """When a call with a stored call's text is a likely re-export, and what to do then.

    Attributes
    ----------
    min_words : int
        Fewest words a text needs to identify a call by itself.
    action : {"skip", "keep"}
        What ingest does with a likely re-export.
    fields : tuple of str
        Words naming the metadata fields that tell calls apart.
    """

    min_words: int = 25
    action: str = "skip"
    fields: tuple[str, ...] = ("date", "duration", "agent")

    def judge(
        self, n_words: int, new: Mapping[str, str], old: Mapping[str, str]
    ) -> tuple[str, str]:
        """Decide about a call whose text equals a stored call's (under another id).

        Parameters
        ----------
        n_words : int
            Words in the call's text.
        new, old : mapping of str to str
            Metadata of the new call and of the stored one.

        Returns
        -------
        kind : str
            :data:`SKIPPED` or :data:`KEPT` for a likely re-export (by ``action``), else
            :data:`SAME_TEXT` (two calls, both stored).
        why : str
            A short reason for messages.
        """
        if n_words < self.min_words:
            return SAME_TEXT, f"short text ({n_words} words < {self.min_words})"
        conflicts = metadata_conflicts(new, old, self.fields)
        if conflicts:
            return SAME_TEXT, "metadata differs: " + "; ".join(
                f"{key} {a!r} vs {b!r}" for key, a, b in conflicts
            )
        return (SKIPPED if self.action == "skip" else KEPT), "likely re-export"


def _words(key: str) -> set[str]:
    return set(_NON_WORD.split(key.casefold())) - {""}


def _agree(field: str, a: str, b: str) -> bool:
    a, b = a.strip().casefold(), b.strip().casefold()
    if a == b:
        return True
    if field == "date":
        # a date and a date-time of the same day ("2024-03-01" / "2024-03-01T10:15:00")
        return a.startswith(b) or b.startswith(a)
    try:
        x, y = float(a), float(b)
    except ValueError:
        return False
    tolerance = _DURATION_TOLERANCE_S if field == "duration" else 0.0
    return abs(x - y) <= tolerance


def metadata_conflicts(
    new: Mapping[str, str], old: Mapping[str, str], fields: Sequence[str]
) -> list[tuple[str, str, str]]:
    """Fields that tell two calls apart: ``(key, new value, old value)`` for every key both
    have, named after one of ``fields``, whose values disagree.

    Values agree when equal ignoring case and surrounding space; numbers when equal (within
    a second for durations); dates when one is the other's day.

    Examples
    --------
    >>> metadata_conflicts({"date": "2024-03-01", "queue": "a"},
    ...                    {"date": "2024-03-02", "queue": "b"}, ["date"])
    [('date', '2024-03-01', '2024-03-02')]
    >>> metadata_conflicts({"call_duration": "61"}, {"call_duration": "60.5"}, ["duration"])
    []
    """
    out: list[tuple[str, str, str]] = []
    wanted = [f.casefold() for f in fields]
    for key in sorted(new.keys() & old.keys()):
        words = _words(key)
        for field in wanted:
            if field in words:
                if not _agree(field, new[key], old[key]):
                    out.append((key, new[key], old[key]))
                break
    return out
