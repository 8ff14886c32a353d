"""Speaker labels: recognising them in text and mapping them to roles.

Two jobs live here because the ``.txt`` and ``.vtt`` readers (and the text column of
per-transcript tables) share them:

* :class:`RoleMapper` turns a label ("Agent 2", "CUSTOMER:", "caller1") into one of the
  roles ``agent``, ``customer`` or ``unknown``.
* :func:`split_label` and :func:`choose_speakers` decide whether ``Something: text`` at the
  start of a line names a speaker.

The label rule
--------------
A line starts with a *candidate* label when it reads ``Label: text`` (or ``Label:`` at the
end of the line), where the label

* starts with a letter,
* is at most 40 characters and at most 4 words long,
* holds only letters, digits, spaces and ``. _ - ' ’ # ( ) / &``,
* is followed by a colon and then whitespace or the end of the line (so ``https://...``
  and times such as ``10:30`` are never labels).

Because ordinary prose can look the same ("Note: the bill was high"), a candidate only
counts as a speaker when it maps to the agent or customer role, or when it starts at least
two lines of the same transcript. When no candidate passes that test (a short exchange
where every speaker talks once), every candidate counts. A candidate that does not count
is kept as part of the text of the turn it appears in.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping

from talkthemes.calls.model import ROLES

__all__ = [
    "LABEL_MAX_CHARS",
    "LABEL_MAX_WORDS",
    "LABEL_PATTERN",
    "RoleMapper",
    "choose_speakers",
    "split_label",
]

LABEL_MAX_CHARS = 40
LABEL_MAX_WORDS = 4

_FIRST_WORD = re.compile(r"[^\W\d_]+")
#: A candidate label (without the colon); shared with the line pattern of the txt reader.
LABEL_PATTERN = rf"[^\W\d_][\w .'’#()/&-]{{0,{LABEL_MAX_CHARS - 1}}}"
_LABEL = re.compile(rf"\s*(?P<label>{LABEL_PATTERN})\s*:(?:\s+|$)")


class RoleMapper:
    """Map speaker labels to the roles ``agent``, ``customer`` and ``unknown``.

    A label maps to a role when, case-insensitively, either the whole label or its first
    word (the first run of letters, so trailing digits and punctuation are ignored) is in
    that role's list. The role names themselves (``agent``, ``customer``, ``unknown``)
    always map to themselves, so a role column can be used directly.

    Parameters
    ----------
    agent_labels, customer_labels : iterable of str
        Labels of each role (``IngestSettings.agent_labels`` / ``customer_labels``). A label
        in both lists is read as agent.

    Examples
    --------
    >>> m = RoleMapper(["agent"], ["caller"])
    >>> m.role("Agent 2"), m.role("caller1"), m.role("Maria")
    ('agent', 'customer', 'unknown')
    """

    def __init__(self, agent_labels: Iterable[str], customer_labels: Iterable[str]) -> None:
        table: dict[str, str] = {}
        for label in customer_labels:
            table[label.strip().casefold()] = "customer"
        for label in agent_labels:
            table[label.strip().casefold()] = "agent"
        for role in ROLES:
            table[role] = role
        table.pop("", None)
        self._table = table
        self._cache: dict[str, str] = {}

    def role(self, label: str | None) -> str:
        """The role of a speaker label (``unknown`` for an empty or unmatched label)."""
        if not label:
            return "unknown"
        hit = self._cache.get(label)
        if hit is not None:
            return hit
        key = label.strip().casefold()
        role = self._table.get(key)
        if role is None:
            word = _FIRST_WORD.search(key)
            role = self._table.get(word.group(0), "unknown") if word else "unknown"
        if len(self._cache) < 100_000:
            self._cache[label] = role
        return role


def split_label(line: str) -> tuple[str, str] | None:
    """Split ``Label: text`` into ``(label, text)`` when the line starts with a candidate label.

    Parameters
    ----------
    line : str
        One line, without its line ending.

    Returns
    -------
    tuple of (str, str) or None
        The label (stripped) and the rest of the line, or None when the line does not start
        with a candidate label (see the module docstring for the rule).
    """
    m = _LABEL.match(line)
    if m is None:
        return None
    label = m.group("label").strip()
    if len(label.split()) > LABEL_MAX_WORDS:
        return None
    return label, line[m.end() :]


def choose_speakers(counts: Mapping[str, int], mapper: RoleMapper) -> set[str]:
    """Which candidate labels of one transcript count as speakers.

    Parameters
    ----------
    counts : mapping of str to int
        Candidate labels, case-folded, with the number of lines each starts.
    mapper : RoleMapper
        A candidate with a known role always counts.

    Returns
    -------
    set of str
        Case-folded labels that count: those with a known role or at least two lines; all of
        them when none qualifies that way.
    """
    chosen = {lab for lab, n in counts.items() if n >= 2 or mapper.role(lab) != "unknown"}
    return chosen if chosen else set(counts)
