"""Co-occurrence counts for topic coherence: the probability-estimation stage, counted once.

Coherence (:mod:`talkthemes.metrics.coherence`) follows the four-stage framework of Röder et al.
(2015): segmentation, probability estimation, confirmation, aggregation. This module holds the
counting behind the probability-estimation stage — Boolean document counts (U_Mass) and
Boolean sliding-window counts (C_V, C_UCI, C_NPMI) of a set of words — and the estimation of
P(w) and P(w_i, w_j) from them; the measures themselves live in the coherence module, and
the sliding-window counting kernel in :mod:`talkthemes.metrics.windows`.

Co-occurrence statistics are counted once, for the union of every topic set that will be
scored (a sweep's cells), into a :class:`CoherenceReference`; any number of topic sets is then
scored from it cheaply.

Counting works on the prepared token stream: ``tokens`` holds every transcript's kept tokens
in order, ``offsets`` (length D+1) marks where transcript ``d`` starts and ends, and ``-1`` is
a placeholder that takes a window slot but is never counted. Windows never cross transcripts;
a transcript shorter than the window is one window; an empty transcript still counts as one
(empty) window; N is the number of windows. The Boolean sliding window counts a word as present
in every window that holds at least one copy of it (gensim 4.4.0 undercounts words that repeat
within a window; see docs/methods_metrics.md).

References
----------
Röder, M., Both, A., Hinneburg, A. (2015). Exploring the Space of Topic Coherence
Measures. WSDM '15.
Mimno, D., Wallach, H., Talley, E., Leenders, M., McCallum, A. (2011). Optimizing
Semantic Coherence in Topic Models. EMNLP 2011.
"""

from __future__ import annotations

import logging
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np
import scipy.sparse as sp

from talkthemes.errors import InputError
from talkthemes.metrics.windows import count_windows

__all__ = [
    "DEFAULT_WINDOWS",
    "CoherenceReference",
    "CooccurrenceCounts",
    "TopicProbabilities",
    "build_reference",
    "document_counts",
    "estimate",
    "union_of_topics",
    "window_counts",
]

logger = logging.getLogger(__name__)

DEFAULT_WINDOWS: Mapping[str, int] = MappingProxyType({"c_v": 110, "c_uci": 10, "c_npmi": 10})
"""Boolean sliding-window sizes per measure (gensim 4.4.0 ``SLIDING_WINDOW_SIZES``)."""

_CHUNK_TOKENS = 500_000


@dataclass(frozen=True, eq=False)
class CooccurrenceCounts:
    """Boolean occurrence and co-occurrence counts of a word set over counting units.

    Attributes
    ----------
    word_ids : ndarray of int64, shape (U,)
        Term ids counted, sorted ascending; row/column ``i`` of the matrices is ``word_ids[i]``.
    occurrences : ndarray of int64, shape (U,)
        Number of units (windows or documents) holding each word.
    cooccurrences : scipy.sparse.csr_array of int64, shape (U, U)
        Number of units holding both words; symmetric, with ``occurrences`` on the diagonal.
    n_units : int
        Number of units N (windows, or documents for ``window=None``).
    window : int or None
        Sliding-window size, or ``None`` when the units are whole documents.
    """

    word_ids: np.ndarray
    occurrences: np.ndarray
    cooccurrences: sp.csr_array
    n_units: int
    window: int | None


@dataclass(frozen=True, eq=False)
class CoherenceReference:
    """Everything needed to score coherence: document counts and sliding-window counts.

    Attributes
    ----------
    word_ids : ndarray of int64, shape (U,)
        The union of top words the counts cover, sorted ascending.
    documents : CooccurrenceCounts or None
        Boolean-document counts (U_Mass), or ``None`` when not built.
    windows : Mapping[int, CooccurrenceCounts]
        Boolean sliding-window counts by window size.
    """

    word_ids: np.ndarray
    documents: CooccurrenceCounts | None
    windows: Mapping[int, CooccurrenceCounts]

    def counts(self, window: int | None) -> CooccurrenceCounts:
        """Return the counts for a window size, or the document counts for ``None``.

        Raises
        ------
        InputError
            When the reference was built without those counts.
        """
        if window is None:
            if self.documents is None:
                raise InputError(
                    "coherence reference: no document counts (U_Mass needs the term-count matrix)"
                )
            return self.documents
        if window not in self.windows:
            built = ", ".join(str(w) for w in sorted(self.windows)) or "none"
            raise InputError(
                f"coherence reference: no counts for window {window} (built for: {built})"
            )
        return self.windows[window]


def union_of_topics(topic_sets: Iterable[np.ndarray]) -> np.ndarray:
    """Return the sorted union of the term ids of several topic sets.

    Parameters
    ----------
    topic_sets : iterable of ndarray of int
        Each an array of term ids, typically of shape (K, N).

    Returns
    -------
    ndarray of int64
        Unique term ids, ascending.
    """
    parts = [np.asarray(t, dtype=np.int64).ravel() for t in topic_sets]
    if not parts:
        return np.zeros(0, dtype=np.int64)
    return np.unique(np.concatenate(parts))


def _check_word_ids(word_ids: np.ndarray, n_terms: int | None) -> np.ndarray:
    ids = np.asarray(word_ids)
    if ids.ndim != 1 or (ids.size and not np.issubdtype(ids.dtype, np.integer)):
        raise InputError("coherence word ids: expected a 1-D array of integer term ids")
    ids = np.unique(ids.astype(np.int64))
    if ids.size and ids[0] < 0:
        raise InputError(f"coherence word ids: negative term id {int(ids[0])}")
    if ids.size and n_terms is not None and ids[-1] >= n_terms:
        raise InputError(
            f"coherence word ids: term id {int(ids[-1])} is outside the vocabulary of "
            f"{n_terms} terms"
        )
    return ids


def _check_rows(rows: np.ndarray | None, n_docs: int, what: str) -> np.ndarray:
    if rows is None:
        return np.arange(n_docs, dtype=np.int64)
    r = np.asarray(rows)
    if r.ndim != 1 or (r.size and not np.issubdtype(r.dtype, np.integer)):
        raise InputError(f"{what}: rows must be a 1-D array of transcript indices")
    r = r.astype(np.int64)
    bad = np.flatnonzero((r < 0) | (r >= n_docs))
    if bad.size:
        raise InputError(
            f"{what}: rows[{int(bad[0])}] = {int(r[bad[0]])} is not a transcript index "
            f"(0..{n_docs - 1})"
        )
    return r


def document_counts(
    counts: sp.sparray | sp.spmatrix,
    word_ids: np.ndarray,
    *,
    rows: np.ndarray | None = None,
) -> CooccurrenceCounts:
    """Count Boolean document occurrence and co-occurrence (the U_Mass probabilities).

    Parameters
    ----------
    counts : scipy sparse matrix, shape (D, V)
        Term counts per transcript; a term is present where its count is positive.
    word_ids : ndarray of int
        Term ids to count (duplicates are ignored).
    rows : ndarray of int, optional
        Transcripts to count (all when omitted).

    Returns
    -------
    CooccurrenceCounts
        With ``window=None`` and ``n_units`` = number of transcripts counted.
    """
    if not sp.issparse(counts) or counts.ndim != 2:
        raise InputError(
            "coherence counts: expected a 2-D scipy sparse matrix (transcripts × terms)"
        )
    n_docs, n_terms = counts.shape
    ids = _check_word_ids(word_ids, n_terms)
    r = _check_rows(rows, n_docs, "coherence counts")
    sub = sp.csr_array(counts)[r][:, ids]
    sub.sum_duplicates()
    sub.data = (sub.data > 0).astype(np.int64)
    sub.eliminate_zeros()
    co = sp.csr_array(sub.T @ sub)
    co.sum_duplicates()
    occ = np.bincount(sub.indices, minlength=ids.size).astype(np.int64)
    return CooccurrenceCounts(ids, occ, co, int(r.size), None)


def _check_stream(tokens: np.ndarray, offsets: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    tok = np.asarray(tokens)
    off = np.asarray(offsets)
    if tok.ndim != 1 or (tok.size and not np.issubdtype(tok.dtype, np.integer)):
        raise InputError("coherence tokens: expected a 1-D integer array")
    if off.ndim != 1 or off.size < 1 or not np.issubdtype(off.dtype, np.integer):
        raise InputError("coherence offsets: expected a 1-D integer array of length D+1")
    off = off.astype(np.int64)
    steps = np.diff(off)
    if steps.size and steps.min() < 0:
        d = int(np.flatnonzero(steps < 0)[0])
        raise InputError(f"coherence offsets: transcript {d} ends before it starts")
    if off[0] < 0 or off[-1] > tok.size:
        raise InputError(
            f"coherence offsets: span {int(off[0])}..{int(off[-1])} is outside the "
            f"{tok.size} tokens"
        )
    return tok, off


def _window_counts_many(
    tokens: np.ndarray,
    offsets: np.ndarray,
    word_ids: np.ndarray,
    windows: Sequence[int],
    rows: np.ndarray | None,
    n_terms: int | None,
    chunk_tokens: int,
) -> dict[int, CooccurrenceCounts]:
    tok, off = _check_stream(tokens, offsets)
    n_docs = off.size - 1
    ids = _check_word_ids(word_ids, n_terms)
    if n_terms is None:  # no vocabulary size given: large enough for every id seen
        n_terms = max(int(tok.max()) + 1 if tok.size else 0, int(ids[-1]) + 1 if ids.size else 0)
    sizes = sorted({int(s) for s in windows})
    if any(s < 1 for s in sizes):
        raise InputError(f"coherence windows: sizes must be positive, got {sizes}")
    if chunk_tokens < 1:
        raise InputError(f"coherence chunk_tokens must be positive, got {chunk_tokens}")
    r = _check_rows(rows, n_docs, "coherence tokens")
    if not sizes:
        return {}
    starts = off[r]
    lengths = off[r + 1] - starts
    lut = np.full(n_terms + 1, -1, dtype=np.int64)
    lut[ids] = np.arange(ids.size, dtype=np.int64)
    counted = count_windows(tok, r, starts, lengths, lut, sizes, chunk_tokens)
    result = {}
    for s, (occurrences, cooccurrences, n_units) in counted.items():
        logger.debug("window %d: %d windows over %d transcripts", s, n_units, r.size)
        result[s] = CooccurrenceCounts(ids, occurrences, cooccurrences, n_units, s)
    return result


def window_counts(
    tokens: np.ndarray,
    offsets: np.ndarray,
    word_ids: np.ndarray,
    window: int,
    *,
    rows: np.ndarray | None = None,
    n_terms: int | None = None,
    chunk_tokens: int = _CHUNK_TOKENS,
) -> CooccurrenceCounts:
    """Count Boolean sliding-window occurrence and co-occurrence of a word set.

    A word is present in a window when at least one copy of it lies inside the window.

    Parameters
    ----------
    tokens : ndarray of int, shape (T,)
        Concatenated token ids of all transcripts; ``-1`` marks a placeholder.
    offsets : ndarray of int, shape (D+1,)
        Transcript ``d`` is ``tokens[offsets[d]:offsets[d+1]]``.
    word_ids : ndarray of int
        Term ids to count.
    window : int
        Window size s.
    rows : ndarray of int, optional
        Transcripts to count (all when omitted).
    n_terms : int, optional
        Vocabulary size, to check the token ids against.
    chunk_tokens : int, optional
        Tokens processed per chunk; bounds memory.

    Returns
    -------
    CooccurrenceCounts
    """
    got = _window_counts_many(tokens, offsets, word_ids, [window], rows, n_terms, chunk_tokens)
    return got[int(window)]


def build_reference(
    tokens: np.ndarray,
    offsets: np.ndarray,
    counts: sp.sparray | sp.spmatrix | None,
    word_ids: np.ndarray,
    *,
    windows: Sequence[int] | None = None,
    rows: np.ndarray | None = None,
    chunk_tokens: int = _CHUNK_TOKENS,
) -> CoherenceReference:
    """Count everything the coherence measures need, once, for a union of top words.

    Parameters
    ----------
    tokens, offsets : ndarray of int
        The prepared token stream (see :func:`window_counts`).
    counts : scipy sparse matrix of shape (D, V), or None
        Term counts per transcript, for U_Mass; ``None`` skips the document counts.
    word_ids : ndarray of int
        Union of the top words of every topic set to be scored (see
        :func:`union_of_topics`).
    windows : sequence of int, optional
        Sliding-window sizes to count; by default those of :data:`DEFAULT_WINDOWS`
        (110 for C_V, 10 for C_UCI and C_NPMI). An empty sequence counts documents only.
    rows : ndarray of int, optional
        Transcripts forming the reference corpus (all when omitted).
    chunk_tokens : int, optional
        Tokens processed per chunk; bounds memory.

    Returns
    -------
    CoherenceReference
    """
    tok, off = _check_stream(tokens, offsets)
    n_terms = None
    documents = None
    if counts is not None:
        if not sp.issparse(counts) or counts.ndim != 2:
            raise InputError("coherence counts: expected a 2-D scipy sparse matrix")
        if counts.shape[0] != off.size - 1:
            raise InputError(
                f"coherence counts: {counts.shape[0]} rows but the token stream has "
                f"{off.size - 1} transcripts"
            )
        n_terms = int(counts.shape[1])
        documents = document_counts(counts, word_ids, rows=rows)
    if windows is None:
        windows = sorted(set(DEFAULT_WINDOWS.values()))
    by_window = _window_counts_many(tok, off, word_ids, windows, rows, n_terms, chunk_tokens)
    ids = _check_word_ids(word_ids, n_terms)
    return CoherenceReference(ids, documents, MappingProxyType(by_window))


# --------------------------------------------------------------------------------------
# Probability estimation
# --------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class TopicProbabilities:
    """Probability-estimation stage output for a topic set of shape (K, N).

    ``p_word[k, i]`` = P(w_ki) and ``p_pair[k, i, j]`` = P(w_ki, w_kj), both count / N.
    ``missing[k, i]`` is True when word ``w_ki`` never occurs in the reference.
    """

    p_word: np.ndarray
    p_pair: np.ndarray
    missing: np.ndarray


def estimate(stats: CooccurrenceCounts, topics: np.ndarray) -> TopicProbabilities:
    """Boolean probability estimation: P(w) and P(w_i, w_j) from counts over N units."""
    pos = np.searchsorted(stats.word_ids, topics)
    uniq, inverse = np.unique(pos, return_inverse=True)
    sub = stats.cooccurrences[uniq][:, uniq].toarray()
    inv = inverse.reshape(topics.shape)
    n = float(stats.n_units)
    occ = stats.occurrences[uniq][inv]
    pair = sub[inv[:, :, None], inv[:, None, :]]
    return TopicProbabilities(occ / n, pair / n, occ == 0)
