"""Step 7, vocabulary: which terms the models see, and which transcripts are long enough.

Three cuts, by document frequency (the number of transcripts a term occurs in):

- ``vocab_min_docs``: terms in fewer transcripts are dropped (too rare to form a theme);
- ``vocab_max_doc_share``: terms in a larger share of the transcripts are dropped (they say
  nothing about what sets one call apart);
- ``vocab_max_size``: of the rest, the most frequent are kept (ties broken by the term,
  alphabetically).

Then transcripts with fewer than ``min_tokens`` vocabulary tokens are excluded from
training. Excluding transcripts changes document frequencies, so cuts and exclusion repeat
on what is left until nothing changes (terms are never added back): at the end every term
meets the three cuts on the transcripts kept, and every transcript kept has at least
``min_tokens`` tokens.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp
from numpy.typing import NDArray

from talkthemes.prepare.pieces import unit_chunks

__all__ = ["VocabularyCut", "doc_term_matrix", "prune_vocabulary"]


def doc_term_matrix(
    tokens: NDArray[np.integer], doc_lengths: NDArray[np.integer], n_terms: int
) -> sp.csr_matrix:
    """Counts of each term in each transcript.

    Parameters
    ----------
    tokens : ndarray of int, shape (n,)
        Term ids (all >= 0), transcripts one after another.
    doc_lengths : ndarray of int, shape (D,)
        Tokens per transcript.
    n_terms : int

    Returns
    -------
    scipy.sparse.csr_matrix of int32, shape (D, n_terms)
        Canonical (sorted indices, no duplicates).
    """
    doc_lengths = np.asarray(doc_lengths, dtype=np.int64)
    d = int(doc_lengths.size)
    blocks = []
    # in pieces of whole transcripts (bounded memory; see talkthemes.prepare.pieces)
    for a, b, da, db in unit_chunks(doc_lengths) if d else []:
        rows = np.repeat(np.arange(db - da, dtype=np.int32), doc_lengths[da:db])
        data = np.ones(b - a, dtype=np.int32)
        x = sp.coo_matrix((data, (rows, tokens[a:b])), shape=(db - da, n_terms)).tocsr()
        x.sum_duplicates()
        x.sort_indices()
        blocks.append(x)
    if len(blocks) == 1:
        return blocks[0]
    x = sp.vstack(blocks, format="csr") if blocks else sp.csr_matrix((d, n_terms), dtype=np.int32)
    x.sort_indices()
    return x


@dataclass
class VocabularyCut:
    """The outcome of :func:`prune_vocabulary`.

    Attributes
    ----------
    terms : ndarray of int64
        Kept term ids, most frequent first (document frequency, then term).
    docs : ndarray of bool, shape (D,)
        Transcripts kept for training.
    doc_freq : ndarray of int64
        Document frequency of each kept term over the kept transcripts.
    before : int
        Distinct terms in the transcripts that had any token.
    removed : dict of str to int
        Terms removed by each cut (``min_docs``, ``max_doc_share``, ``max_size``, and
        ``after_exclusion`` for later rounds).
    short_docs : ndarray of bool, shape (D,)
        Transcripts excluded by ``min_tokens`` (had tokens, but too few in the vocabulary).
    rounds : int
        Rounds until nothing changed.
    """

    terms: NDArray[np.int64]
    docs: NDArray[np.bool_]
    doc_freq: NDArray[np.int64]
    before: int
    removed: dict[str, int] = field(default_factory=dict)
    short_docs: NDArray[np.bool_] = field(default_factory=lambda: np.zeros(0, dtype=bool))
    rounds: int = 0


def _doc_freq(x: sp.csr_matrix, docs: NDArray[np.bool_]) -> NDArray[np.int64]:
    sub = x[np.flatnonzero(docs)]
    return np.bincount(sub.indices, minlength=x.shape[1]).astype(np.int64)


def prune_vocabulary(
    x: sp.csr_matrix,
    types: list[str],
    *,
    min_docs: int,
    max_doc_share: float,
    max_size: int,
    min_tokens: int,
) -> VocabularyCut:
    """Apply the vocabulary cuts and the minimum transcript length, until stable.

    Parameters
    ----------
    x : scipy.sparse.csr_matrix, shape (D, T)
        Term counts per transcript (:func:`doc_term_matrix`).
    types : list of str
        Term strings by id (ties in the size cut are broken by them).
    min_docs, max_doc_share, max_size, min_tokens
        The ``[prepare]`` settings of the same names (``vocab_`` prefix dropped).

    Returns
    -------
    VocabularyCut
    """
    n_terms = x.shape[1]
    rank = np.empty(n_terms, dtype=np.int64)
    rank[np.argsort(np.asarray(types, dtype=object), kind="stable")] = np.arange(n_terms)
    doc_tokens = np.asarray(x.sum(axis=1)).ravel()
    docs = doc_tokens > 0
    df = _doc_freq(x, docs)
    candidate = df > 0
    before = int(candidate.sum())
    removed = {"min_docs": 0, "max_doc_share": 0, "max_size": 0, "after_exclusion": 0}
    rounds = 0
    while True:
        rounds += 1
        n = int(docs.sum())
        rare = candidate & (df < min_docs)
        common = candidate & ~rare & (df > max_doc_share * n)
        keep = candidate & ~rare & ~common
        kept_ids = np.flatnonzero(keep)
        if kept_ids.size > max_size:
            order = np.lexsort((rank[kept_ids], -df[kept_ids]))
            cut = np.zeros(n_terms, dtype=bool)
            cut[kept_ids[order[max_size:]]] = True
            keep &= ~cut
            n_cut = int(cut.sum())
        else:
            n_cut = 0
        if rounds == 1:
            removed["min_docs"] = int(rare.sum())
            removed["max_doc_share"] = int(common.sum())
            removed["max_size"] = n_cut
        else:
            removed["after_exclusion"] += int((candidate & ~keep).sum())
        in_vocab = np.asarray(x[:, np.flatnonzero(keep)].sum(axis=1)).ravel()
        new_docs = docs & (in_vocab >= min_tokens)
        stable = np.array_equal(keep, candidate) and np.array_equal(new_docs, docs)
        candidate, docs = keep, new_docs
        df = _doc_freq(x, docs)
        if stable or not candidate.any() or not docs.any():
            break
    terms = np.flatnonzero(candidate)
    terms = terms[np.lexsort((rank[terms], -df[terms]))]
    short = (doc_tokens > 0) & ~docs
    return VocabularyCut(
        terms=terms.astype(np.int64),
        docs=docs,
        doc_freq=df[terms],
        before=before,
        removed=removed,
        short_docs=short,
        rounds=rounds,
    )
