"""Step 1, roles: keep the turns of the chosen speakers.

``roles = "all"`` keeps every turn; ``"customer"`` keeps customer turns and turns whose
speaker could not be told (role ``unknown``); ``"agent"`` keeps agent and unknown turns.
Unknown turns are kept in both cases because a file without speaker labels is one unknown
turn, and dropping it would drop the whole transcript.
"""

from __future__ import annotations

from collections.abc import Sequence

__all__ = ["ROLE_SETS", "select_turns"]

#: ``[prepare] roles`` value → roles kept (``None`` = all).
ROLE_SETS: dict[str, frozenset[str] | None] = {
    "all": None,
    "customer": frozenset({"customer", "unknown"}),
    "agent": frozenset({"agent", "unknown"}),
}


def select_turns(turns: Sequence[tuple[str, ...]], roles: str) -> tuple[list[str], list[str]]:
    """Split a transcript's turns into the texts kept and the texts dropped.

    Parameters
    ----------
    turns : sequence of (role, text) or (role, text, speaker)
        The transcript's turns in order.
    roles : {"all", "customer", "agent"}
        The ``[prepare] roles`` setting.

    Returns
    -------
    kept, dropped : list of str
        Texts of the kept and of the dropped turns, each in order.

    Raises
    ------
    ValueError
        When ``roles`` is not one of the allowed values.
    """
    try:
        keep = ROLE_SETS[roles]
    except KeyError:
        raise ValueError(f"roles must be one of {sorted(ROLE_SETS)}, not {roles!r}") from None
    if keep is None:
        return [turn[1] for turn in turns], []
    kept: list[str] = []
    dropped: list[str] = []
    for turn in turns:
        (kept if turn[0] in keep else dropped).append(turn[1])
    return kept, dropped
