"""A batch of transcripts prepared like a version's corpus (:mod:`.frozen`)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

__all__ = ["AppliedBatch"]


@dataclass
class AppliedBatch:
    """A batch of transcripts prepared like a version's corpus.

    Attributes
    ----------
    doc_ids : list of str
    counts : scipy.sparse.csr_matrix of int32, shape (D, V)
        Term counts over the version's vocabulary.
    tokens : ndarray of int32
        Token stream in spoken order, :data:`~talkthemes.prepare.corpus.OOV` for terms
        outside the vocabulary.
    offsets : ndarray of int64, shape (D + 1,)
    known : ndarray of int64, shape (D,)
        Tokens in the vocabulary per transcript.
    reasons : list of str or None
        Why a transcript has no token in the vocabulary (None when it has some).
    """

    doc_ids: list[str]
    counts: sp.csr_matrix
    tokens: np.ndarray
    offsets: np.ndarray
    known: np.ndarray
    reasons: list[str | None]

    @staticmethod
    def concat(parts: Sequence[AppliedBatch], n_terms: int) -> AppliedBatch:
        """Join batches one after another."""
        if not parts:
            return AppliedBatch(
                [],
                sp.csr_matrix((0, n_terms), dtype=np.int32),
                np.zeros(0, np.int32),
                np.zeros(1, np.int64),
                np.zeros(0, np.int64),
                [],
            )
        offsets = [np.zeros(1, np.int64)]
        base = 0
        for p in parts:
            offsets.append(p.offsets[1:] + base)
            base += int(p.offsets[-1])
        return AppliedBatch(
            doc_ids=[d for p in parts for d in p.doc_ids],
            counts=sp.vstack([p.counts for p in parts], format="csr").astype(np.int32),
            tokens=np.concatenate([p.tokens for p in parts]).astype(np.int32),
            offsets=np.concatenate(offsets),
            known=np.concatenate([p.known for p in parts]),
            reasons=[r for p in parts for r in p.reasons],
        )
