"""The corpus phase's state: every transcript's kept tokens, sentence by sentence."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from talkthemes.config import PrepareSettings
from talkthemes.prepare.collect import Collected

__all__ = ["CorpusStep", "TokenTable", "start_table"]


@dataclass
class TokenTable:
    """The corpus phase's state: every transcript's kept tokens, sentence by sentence.

    Each corpus step takes the table and returns it with fewer or joined tokens, and adds
    its section to :attr:`report`.

    Attributes
    ----------
    tids : list of str
        Transcript ids, in store order.
    types : list of str
        Term strings by id.
    tokens : ndarray of int32
        Kept term ids, transcript by transcript, sentence by sentence.
    breaks : ndarray of bool
        One per token: True where a run of adjacent words starts (see
        :attr:`talkthemes.prepare.lemmas.Encoded.breaks`).
    sent_doc : ndarray of int32
        Transcript number of each sentence.
    sent_words : ndarray of int32
        Words of each sentence before the filter.
    sent_keys : ndarray of int64
        Boilerplate key of each sentence (0: too short).
    sent_stats : ndarray of uint16 or int32, shape (S, len(STAT_COLUMNS))
        Filter counts of each sentence.
    sent_kept : ndarray of int64
        Tokens of each sentence in :attr:`tokens`.
    emptied : dict of str to ndarray of bool
        Transcripts left without text by each step so far, in step order.
    report : dict
        The ``--explain`` sections written so far.
    saved : dict
        What the corpus steps decided that the prep saves (``prep.json``), by step.
    removed_names : frozenset of str
        Every word the names step removed (not saved: the boilerplate step reports which of
        them its sentences hold, so ``--explain`` can mask them).
    """

    tids: list[str]
    types: list[str]
    tokens: NDArray[np.int32]
    breaks: NDArray[np.bool_]
    sent_doc: NDArray[np.int32]
    sent_words: NDArray[np.int32]
    sent_keys: NDArray[np.int64]
    sent_stats: NDArray[np.integer]
    sent_kept: NDArray[np.int64]
    emptied: dict[str, NDArray[np.bool_]] = field(default_factory=dict)
    report: dict[str, Any] = field(default_factory=dict)
    saved: dict[str, Any] = field(default_factory=dict)
    removed_names: frozenset[str] = frozenset()

    @property
    def n_docs(self) -> int:
        return len(self.tids)

    def per_doc(self, per_sentence: NDArray[np.integer]) -> NDArray[np.int64]:
        """Sum a per-sentence count over each transcript."""
        return np.bincount(self.sent_doc, weights=per_sentence, minlength=self.n_docs).astype(
            np.int64
        )


#: A corpus step: takes the table and the settings, returns the table.
CorpusStep = Callable[[TokenTable, PrepareSettings], TokenTable]


def start_table(col: Collected, settings: PrepareSettings) -> TokenTable:
    """The table after the per-transcript steps, with the roles and scrub report."""
    n_docs = len(col.tids)
    roles_removed = col.array("doc_roles_removed").astype(np.int64)
    scrub_removed = col.array("doc_scrub_removed").astype(np.int64)
    table = TokenTable(
        tids=col.tids,
        types=list(col.types),
        # int32 where it fits: these run over every sentence of the corpus
        sent_doc=np.repeat(
            np.arange(n_docs, dtype=np.int32), col.array("doc_sentences").astype(np.int64)
        ),
        sent_words=col.array("sent_words"),
        sent_keys=col.array("sent_keys"),
        sent_stats=col.array("sent_stats"),
        sent_kept=col.array("sent_kept").astype(np.int64),
        tokens=col.array("tokens"),
        breaks=col.array("breaks"),
    )
    words = table.per_doc(table.sent_words)
    table.emptied["roles"] = (words + scrub_removed) == 0
    table.emptied["scrub"] = ~table.emptied["roles"] & (words == 0)
    table.report["roles"] = {
        "setting": settings.roles,
        "turns": col.turns,
        "turns_dropped": col.turns_dropped,
        "words_removed": int(roles_removed.sum()),
        "emptied": int(table.emptied["roles"].sum()),
    }
    table.report["scrub"] = {
        "enabled": settings.scrub,
        "removed": dict(col.scrub_counts),
        "words_removed": int(scrub_removed.sum()),
        "emptied": int(table.emptied["scrub"].sum()),
    }
    return table
