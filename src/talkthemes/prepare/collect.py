"""What the per-transcript phase hands to the corpus phase, batch by batch.

A batch of transcripts becomes a :class:`BatchResult` (integer arrays and small tables, so it
travels cheaply from a worker process); the main process merges them into one
:class:`Collected` and never holds transcripts as objects beyond the batch being read.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from talkthemes.prepare.filter import STAT_COLUMNS
from talkthemes.prepare.scrub import SCRUB_KINDS

__all__ = ["BatchResult", "Collected", "compact_counts"]


def compact_counts(counts: NDArray[np.integer]) -> NDArray[np.integer]:
    """Non-negative counts as uint16 when they fit (the sentence counts of a big corpus are
    its largest array), else int32; batches of both kinds concatenate to int32."""
    if counts.size == 0 or int(counts.max()) <= np.iinfo(np.uint16).max:
        return counts.astype(np.uint16)
    return counts.astype(np.int32)


@dataclass
class BatchResult:
    """The per-transcript phase's output for one batch (integer arrays, picklable).

    ``S`` is the number of sentences with at least one word, ``K`` the kept tokens.
    """

    tids: list[str]
    doc_sentences: NDArray[np.int32]  # (D,) sentences per transcript
    doc_roles_removed: NDArray[np.int32]  # (D,) words in turns dropped by roles
    doc_scrub_removed: NDArray[np.int32]  # (D,) words removed by scrub
    turns: int
    turns_dropped: int
    sent_words: NDArray[np.int32]  # (S,)
    sent_keys: NDArray[np.int64]  # (S,) boilerplate key, 0 = too short
    sent_stats: NDArray[np.integer]  # (S, len(STAT_COLUMNS)), uint16 or int32
    sent_kept: NDArray[np.int32]  # (S,) kept tokens
    ids: NDArray[np.int32]  # (K,) kept tokens as indices into ``types``
    breaks: NDArray[np.bool_]  # (K,) not adjacent to the previous kept token (Encoded.breaks)
    types: list[str]
    scrub_counts: dict[str, int] = field(default_factory=dict)
    key_texts: dict[int, str] = field(default_factory=dict)
    word_counts: dict[str, int] = field(default_factory=dict)  # Encoded.counts
    names: dict[tuple[str, str], int] = field(default_factory=dict)  # Encoded.names
    person_found: dict[tuple[str, str], int] = field(default_factory=dict)  # PersonNames
    person_named: dict[str, int] = field(default_factory=dict)  # PersonNames.named


class Collected:
    """What the main process keeps from every batch: integer arrays and small tables."""

    def __init__(self) -> None:
        self.tids: list[str] = []
        self.type_ids: dict[str, int] = {}
        self.types: list[str] = []
        self.parts: dict[str, list[NDArray[Any]]] = {
            k: []
            for k in (
                "doc_sentences",
                "doc_roles_removed",
                "doc_scrub_removed",
                "sent_words",
                "sent_keys",
                "sent_stats",
                "sent_kept",
                "tokens",
                "breaks",
            )
        }
        self.turns = 0
        self.turns_dropped = 0
        self.scrub_counts: dict[str, int] = dict.fromkeys(SCRUB_KINDS, 0)
        self.key_texts: dict[int, str] = {}
        self.word_counts: dict[str, int] = {}
        self.names: dict[tuple[str, str], int] = {}
        self.person_found: dict[tuple[str, str], int] = {}
        self.person_named: dict[str, int] = {}

    def add(self, res: BatchResult) -> None:
        """Merge one :class:`BatchResult`."""
        ids = self.type_ids
        glob = np.empty(len(res.types), dtype=np.int32)
        for i, t in enumerate(res.types):
            g = ids.get(t)
            if g is None:
                g = ids[t] = len(self.types)
                self.types.append(t)
            glob[i] = g
        self.tids.extend(res.tids)
        p = self.parts
        p["doc_sentences"].append(res.doc_sentences)
        p["doc_roles_removed"].append(res.doc_roles_removed)
        p["doc_scrub_removed"].append(res.doc_scrub_removed)
        p["sent_words"].append(res.sent_words)
        p["sent_keys"].append(res.sent_keys)
        p["sent_stats"].append(res.sent_stats)
        p["sent_kept"].append(res.sent_kept)
        p["tokens"].append(glob[res.ids] if res.ids.size else res.ids)
        p["breaks"].append(res.breaks)
        self.turns += res.turns
        self.turns_dropped += res.turns_dropped
        for k, v in res.scrub_counts.items():
            self.scrub_counts[k] = self.scrub_counts.get(k, 0) + v
        for k, t in res.key_texts.items():
            self.key_texts.setdefault(k, t)
        for w, n in res.word_counts.items():
            self.word_counts[w] = self.word_counts.get(w, 0) + n
        for name, n in res.names.items():
            self.names[name] = self.names.get(name, 0) + n
        for key, n in res.person_found.items():
            self.person_found[key] = self.person_found.get(key, 0) + n
        for word, n in res.person_named.items():
            self.person_named[word] = self.person_named.get(word, 0) + n

    def array(self, name: str) -> NDArray[Any]:
        """Concatenate (and release) the collected parts of one array."""
        parts = self.parts.pop(name)
        if not parts:
            width = len(STAT_COLUMNS)
            dtype = np.int64 if name == "sent_keys" else bool if name == "breaks" else np.int32
            return np.zeros((0, width) if name == "sent_stats" else 0, dtype=dtype)
        return np.concatenate(parts)
