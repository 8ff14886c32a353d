"""Topic coherence: C_V, C_NPMI, C_UCI and U_Mass, counted once per sweep.

The four measures follow the four-stage framework of Röder et al. (2015) —
segmentation, probability estimation, confirmation, aggregation — with exactly the
stages, window sizes and ε that gensim 4.4.0's ``CoherenceModel`` uses, so the numbers
are comparable with that library. One difference is deliberate: the Boolean sliding
window counts a word as present in every window that holds at least one copy of it.
gensim 4.4.0 marks a word absent as soon as one copy leaves the window, even when
another copy is still inside, and so undercounts words that repeat within a window
(see ``docs/methods.md``).

Co-occurrence statistics are counted once, for the union of every topic set that will be
scored (a sweep's cells), into a :class:`CoherenceReference`; any number of topic sets
is then scored from it cheaply with :func:`score`.

Counting works on the prepared token stream: ``tokens`` holds every transcript's kept
tokens in order, ``offsets`` (length D+1) marks where transcript ``d`` starts and ends,
and ``-1`` is a placeholder that takes a window slot but is never counted. Windows never
cross transcripts; a transcript shorter than the window is one window; an empty
transcript still counts as one (empty) window; N is the number of windows.

References
----------
Röder, M., Both, A., Hinneburg, A. (2015). Exploring the Space of Topic Coherence
Measures. WSDM '15.
Mimno, D., Wallach, H., Talley, E., Leenders, M., McCallum, A. (2011). Optimizing
Semantic Coherence in Topic Models. EMNLP 2011.
Newman, D., Lau, J. H., Grieser, K., Baldwin, T. (2010). Automatic Evaluation of Topic
Coherence. NAACL-HLT 2010.
Bouma, G. (2009). Normalized (Pointwise) Mutual Information in Collocation Extraction.
GSCL 2009.
"""

from __future__ import annotations

import logging
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np
import scipy.sparse as sp

from talkthemes.errors import InputError

__all__ = [
    "DEFAULT_WINDOWS",
    "EPSILON",
    "MEASURES",
    "CoherencePipeline",
    "CoherenceReference",
    "CoherenceResult",
    "CooccurrenceCounts",
    "build_reference",
    "c_npmi",
    "c_uci",
    "c_v",
    "document_counts",
    "score",
    "u_mass",
    "union_of_topics",
    "window_counts",
]

logger = logging.getLogger(__name__)

EPSILON = 1e-12
"""Smoothing added to joint probabilities (gensim 4.4.0 ``direct_confirmation_measure``)."""

DEFAULT_WINDOWS: Mapping[str, int] = MappingProxyType({"c_v": 110, "c_uci": 10, "c_npmi": 10})
"""Boolean sliding-window sizes per measure (gensim 4.4.0 ``SLIDING_WINDOW_SIZES``)."""

_CHUNK_TOKENS = 500_000
_DENSE_MAX_WORDS = 4096  # pair counts kept in a dense U×U array up to this many words
_PAIR_BLOCK = 4_000_000  # word pairs expanded at a time


# --------------------------------------------------------------------------------------
# Statistics
# --------------------------------------------------------------------------------------


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


class _PairCounter:
    """Accumulates co-occurrence counts of U words over chunks.

    Word pairs arrive one way round with weights; they are summed in a dense U×U array
    up to ``_DENSE_MAX_WORDS`` words and in a sparse matrix beyond, then symmetrised with
    the occurrences on the diagonal.
    """

    def __init__(self, n_words: int) -> None:
        self.n = n_words
        self.one_way: np.ndarray | sp.csr_array
        if n_words <= _DENSE_MAX_WORDS:  # float64 holds integer counts exactly up to 2**53
            self.one_way = np.zeros(n_words * n_words, dtype=np.float64)
        else:
            self.one_way = sp.csr_array((n_words, n_words), dtype=np.int64)
        self.occurrences = np.zeros(n_words, dtype=np.int64)

    def add_pairs(self, wi: np.ndarray, wj: np.ndarray, weight: np.ndarray) -> None:
        """Add ``weight`` units to each pair (wi, wj), wi != wj."""
        if wi.size == 0:
            return
        if isinstance(self.one_way, np.ndarray):
            self.one_way += np.bincount(wi * self.n + wj, weights=weight, minlength=self.n**2)
        else:
            pairs = sp.coo_array((weight.astype(np.int64), (wi, wj)), shape=(self.n, self.n))
            self.one_way = self.one_way + pairs.tocsr()

    def result(self) -> sp.csr_array:
        """The symmetric co-occurrence matrix with the occurrences on the diagonal."""
        if isinstance(self.one_way, np.ndarray):
            half = sp.csr_array(self.one_way.reshape(self.n, self.n).astype(np.int64))
        else:
            half = self.one_way
        diag = sp.diags_array(self.occurrences, format="csr", dtype=np.int64)
        out = sp.csr_array(half + half.T + diag)
        out.sum_duplicates()
        out.eliminate_zeros()
        return out


def _chunks(lengths: np.ndarray, chunk_tokens: int) -> Iterator[slice]:
    """Split consecutive transcripts into slices holding about ``chunk_tokens`` tokens."""
    n = lengths.size
    ends = np.cumsum(lengths)
    start = 0
    while start < n:
        base = ends[start - 1] if start else 0
        stop = int(np.searchsorted(ends, base + chunk_tokens, side="right"))
        stop = max(stop, start + 1)
        yield slice(start, stop)
        start = stop


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


def _gather(
    tok: np.ndarray,
    rows: np.ndarray,
    starts: np.ndarray,
    lengths: np.ndarray,
    lut: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return (local doc, position, union index) of counted tokens, grouped by (doc, word).

    Within a (doc, word) group the positions are ascending.
    """
    total = int(lengths.sum())
    before = np.cumsum(lengths) - lengths
    doc = np.repeat(np.arange(lengths.size, dtype=np.int64), lengths)
    pos = np.arange(total, dtype=np.int64) - np.repeat(before, lengths)
    t = tok[np.repeat(starts - before, lengths) + np.arange(total, dtype=np.int64)]
    n_terms = lut.size - 1
    if t.size and (int(t.min()) < -1 or int(t.max()) >= n_terms):
        bad = int(np.flatnonzero((t < -1) | (t >= n_terms))[0])
        raise InputError(
            f"coherence tokens: transcript {int(rows[doc[bad]])}, token {int(pos[bad])} has "
            f"id {int(t[bad])}, outside -1..{n_terms - 1}"
        )
    w = lut[t]  # lut[-1] == -1 maps the placeholder
    keep = w >= 0
    doc, pos, w = doc[keep], pos[keep], w[keep]
    # Tokens come ordered by (doc, position); a stable sort by (doc, word) keeps that order.
    order = np.argsort(doc * lut.size + w, kind="stable")
    return doc[order], pos[order], w[order]


def _runs(
    doc: np.ndarray, pos: np.ndarray, word: np.ndarray, n_win: np.ndarray, window: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Maximal runs of consecutive windows holding a word, per (doc, word).

    The occurrence at position p lies in windows max(0, p-s+1)..min(p, n_win-1). Both
    ends grow with p, so within a (doc, word) group an occurrence starts a new run
    exactly when its first window lies past the previous occurrence's last window + 1.
    O(tokens): the windows themselves are never listed.
    """
    lo = np.maximum(pos - window + 1, 0)
    hi = np.minimum(pos, n_win[doc] - 1)
    first = np.ones(doc.size, dtype=bool)
    first[1:] = (doc[1:] != doc[:-1]) | (word[1:] != word[:-1])
    prev_hi = np.empty_like(hi)
    prev_hi[:1] = -1
    prev_hi[1:] = hi[:-1]
    begin = np.flatnonzero(first | (lo > prev_hi + 1))
    last = np.empty_like(begin)
    last[:-1] = begin[1:] - 1
    last[-1:] = doc.size - 1
    return doc[begin], word[begin], lo[begin], hi[last]


def _overlapping_runs(
    r_doc: np.ndarray, r_word: np.ndarray, a: np.ndarray, b: np.ndarray, span: int
) -> Iterator[tuple[np.ndarray, np.ndarray, np.ndarray]]:
    """Every pair of runs of one transcript that share windows, and how many they share.

    With runs sorted by (transcript, first window), the partners of run i are the
    following runs of the same transcript that start no later than run i ends. Runs of
    one word are disjoint, so each pair joins two different words; the windows holding
    both words of a pair are the sum of the overlaps of their runs. Pairs are yielded in
    blocks of about ``_PAIR_BLOCK`` to bound memory.
    """
    key = r_doc * span + a
    order = np.argsort(key, kind="stable")
    r_word, a, b, key = r_word[order], a[order], b[order], key[order]
    n = key.size
    partners = np.searchsorted(key, r_doc[order] * span + b, side="right") - np.arange(n) - 1
    ends = np.cumsum(partners)
    start = 0
    while start < n:
        base = ends[start - 1] if start else 0
        stop = max(int(np.searchsorted(ends, base + _PAIR_BLOCK, side="right")), start + 1)
        part = partners[start:stop]
        # run i pairs with runs i+1 .. i+partners[i]
        first = np.arange(start + 1, stop + 1) - (np.cumsum(part) - part)
        j = np.arange(int(part.sum()), dtype=np.int64) + np.repeat(first, part)
        shared = np.minimum(np.repeat(b[start:stop], part), b[j]) - a[j] + 1
        yield np.repeat(r_word[start:stop], part), r_word[j], shared
        start = stop


def _count_chunk(
    pairs: _PairCounter,
    doc: np.ndarray,
    pos: np.ndarray,
    word: np.ndarray,
    n_win: np.ndarray,
    window: int,
) -> None:
    """Add one chunk's window counts for one window size."""
    if doc.size == 0:
        return
    r_doc, r_word, a, b = _runs(doc, pos, word, n_win, window)
    held = np.bincount(r_word, weights=b - a + 1, minlength=pairs.n)
    pairs.occurrences += held.astype(np.int64)
    span = int(n_win.max()) + 1
    for block in _overlapping_runs(r_doc, r_word, a, b, span):
        pairs.add_pairs(*block)


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
    u = ids.size
    lut = np.full(n_terms + 1, -1, dtype=np.int64)
    lut[ids] = np.arange(u, dtype=np.int64)

    pairs = {s: _PairCounter(u) for s in sizes}
    n_units = dict.fromkeys(sizes, 0)
    for part in _chunks(lengths, chunk_tokens):
        doc, pos, word = _gather(tok, r[part], starts[part], lengths[part], lut)
        for s in sizes:
            n_win = np.where(lengths[part] >= s, lengths[part] - s + 1, 1).astype(np.int64)
            n_units[s] += int(n_win.sum())
            _count_chunk(pairs[s], doc, pos, word, n_win, s)
    result = {}
    for s in sizes:
        logger.debug("window %d: %d windows over %d transcripts", s, n_units[s], r.size)
        counted = pairs[s]
        result[s] = CooccurrenceCounts(ids, counted.occurrences, counted.result(), n_units[s], s)
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
# Stages: segmentation, probability estimation, confirmation, aggregation
# --------------------------------------------------------------------------------------


def one_pre(n: int) -> tuple[np.ndarray, np.ndarray]:
    """One-preceding segmentation: pairs (w_i, w_j) for i > j; w_j is higher ranked.

    Returns index arrays (W′, W*) in gensim's ``s_one_pre`` order.
    """
    prime, star = zip(*[(i, j) for i in range(1, n) for j in range(i)], strict=True)
    return np.array(prime), np.array(star)


def one_one(n: int) -> tuple[np.ndarray, np.ndarray]:
    """One-one segmentation: every ordered pair (w_i, w_j), i ≠ j (gensim ``s_one_one``)."""
    prime, star = zip(*[(i, j) for i in range(n) for j in range(n) if i != j], strict=True)
    return np.array(prime), np.array(star)


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


def log_conditional(tc: TopicProbabilities, prime: np.ndarray, star: np.ndarray) -> np.ndarray:
    """m_lc = ln((P(W′, W*) + ε) / P(W*)) per pair (Mimno et al. 2011, gensim form)."""
    joint = tc.p_pair[:, prime, star]
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.log((joint + EPSILON) / tc.p_word[:, star])
    out[tc.missing[:, star]] = np.nan
    return out


def log_ratio(tc: TopicProbabilities, prime: np.ndarray, star: np.ndarray) -> np.ndarray:
    """PMI: m_lr = ln((P(W′, W*) + ε) / (P(W′) P(W*))) per pair."""
    joint = tc.p_pair[:, prime, star]
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.log((joint + EPSILON) / (tc.p_word[:, prime] * tc.p_word[:, star]))
    out[tc.missing[:, prime] | tc.missing[:, star]] = np.nan
    return out


def normalized_log_ratio(tc: TopicProbabilities, prime: np.ndarray, star: np.ndarray) -> np.ndarray:
    """NPMI: m_nlr = m_lr / (−ln(P(W′, W*) + ε)) per pair (Bouma 2009, gensim form)."""
    joint = tc.p_pair[:, prime, star]
    with np.errstate(divide="ignore", invalid="ignore"):
        return log_ratio(tc, prime, star) / (-np.log(joint + EPSILON))


def indirect_cosine(tc: TopicProbabilities) -> np.ndarray:
    """C_V confirmation: cosine between each word's NPMI context vector and the topic's.

    With one-set segmentation, v(w_i)_j = NPMI(w_i, w_j) (γ = 1, the self-entry uses
    P(w_i, w_i) = P(w_i)) and v(W) = Σ_i v(w_i). Returns shape (K, N).
    """
    n = tc.p_word.shape[1]
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    npmi = normalized_log_ratio(tc, i.ravel(), j.ravel()).reshape(-1, n, n)
    whole = npmi.sum(axis=1)  # (K, N): v(W)
    with np.errstate(divide="ignore", invalid="ignore"):
        dots = np.einsum("kij,kj->ki", npmi, whole)
        norms = np.sqrt((npmi**2).sum(axis=2)) * np.sqrt((whole**2).sum(axis=1))[:, None]
        return dots / norms


def arithmetic_mean(segment_scores: np.ndarray) -> np.ndarray:
    """Aggregation: mean of a topic's segment scores, one value per topic."""
    return segment_scores.mean(axis=1)


# --------------------------------------------------------------------------------------
# Pipelines and the registry
# --------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class CoherenceResult:
    """Coherence of one topic set under one measure.

    Attributes
    ----------
    measure : str
        Measure name (``"c_v"``, ``"c_npmi"``, ``"c_uci"`` or ``"u_mass"``).
    per_topic : ndarray of float64, shape (K,)
        Score of each topic; NaN when a top word never occurs in the reference.
    mean : float
        Mean over topics (NaN if any topic is NaN, as gensim's ``get_coherence``).
    """

    measure: str
    per_topic: np.ndarray
    mean: float


@dataclass(frozen=True)
class CoherencePipeline:
    """A coherence measure as a composition of named stages (Röder et al. 2015).

    Attributes
    ----------
    name : str
        Measure name.
    window : int or None
        Default window size of the Boolean sliding window; ``None`` = Boolean document.
    segment_scores : Callable[[TopicProbabilities], ndarray]
        Segmentation + confirmation: maps estimated probabilities to scores of shape
        (K, n_segments).
    aggregate : Callable[[ndarray], ndarray]
        Aggregation of segment scores into one score per topic.
    """

    name: str
    window: int | None
    segment_scores: Callable[[TopicProbabilities], np.ndarray]
    aggregate: Callable[[np.ndarray], np.ndarray] = arithmetic_mean

    def run(
        self, reference: CoherenceReference, topics: np.ndarray, window: int | None = None
    ) -> CoherenceResult:
        """Score a topic set against a reference (window defaults to the measure's)."""
        if self.window is None and window is not None:
            raise InputError(f"coherence measure {self.name} counts documents, not windows")
        top = _check_topics(topics, reference.word_ids)
        stats = reference.counts(self.window if window is None else window)
        tc = estimate(stats, top)
        per_topic = self.aggregate(self.segment_scores(tc)).astype(np.float64)
        n_undefined = int(np.isnan(per_topic).sum())
        if n_undefined:
            logger.warning(
                "%s: %d of %d topics have an undefined coherence (NaN), because a top word "
                "never occurs in the reference corpus",
                self.name,
                n_undefined,
                top.shape[0],
            )
        return CoherenceResult(self.name, per_topic, float(np.mean(per_topic)))


def _direct(
    segmentation: Callable[[int], tuple[np.ndarray, np.ndarray]],
    confirmation: Callable[[TopicProbabilities, np.ndarray, np.ndarray], np.ndarray],
) -> Callable[[TopicProbabilities], np.ndarray]:
    def segment_scores(tc: TopicProbabilities) -> np.ndarray:
        prime, star = segmentation(tc.p_word.shape[1])
        return confirmation(tc, prime, star)

    return segment_scores


MEASURES: Mapping[str, CoherencePipeline] = MappingProxyType(
    {
        "c_v": CoherencePipeline("c_v", DEFAULT_WINDOWS["c_v"], indirect_cosine),
        "c_npmi": CoherencePipeline(
            "c_npmi", DEFAULT_WINDOWS["c_npmi"], _direct(one_one, normalized_log_ratio)
        ),
        "c_uci": CoherencePipeline("c_uci", DEFAULT_WINDOWS["c_uci"], _direct(one_one, log_ratio)),
        "u_mass": CoherencePipeline("u_mass", None, _direct(one_pre, log_conditional)),
    }
)
"""The coherence measures by name (gensim 4.4.0 ``COHERENCE_MEASURES`` stages)."""


def _check_topics(topics: np.ndarray, word_ids: np.ndarray) -> np.ndarray:
    top = np.asarray(topics)
    if top.ndim != 2 or (top.size and not np.issubdtype(top.dtype, np.integer)):
        raise InputError("coherence topics: expected a 2-D integer array (topics × top words)")
    if top.shape[0] == 0 or top.shape[1] < 2:
        raise InputError(
            f"coherence topics: need at least one topic of at least 2 words, got {top.shape}"
        )
    top = top.astype(np.int64)
    srt = np.sort(top, axis=1)
    dup = np.flatnonzero((srt[:, 1:] == srt[:, :-1]).any(axis=1))
    if dup.size:
        raise InputError(f"coherence topics: topic {int(dup[0])} lists a term id twice")
    pos = np.clip(np.searchsorted(word_ids, top), 0, max(word_ids.size - 1, 0))
    absent = (word_ids[pos] != top) if word_ids.size else np.ones(top.shape, dtype=bool)
    if absent.any():
        k, i = (int(x[0]) for x in np.nonzero(absent))
        raise InputError(
            f"coherence topics: topic {k} word {i} (term id {int(top[k, i])}) is not in the "
            "reference's word set; build the reference from the union of all topic sets"
        )
    return top


def score(
    reference: CoherenceReference,
    topics: np.ndarray,
    measure: str,
    *,
    window: int | None = None,
) -> CoherenceResult:
    """Score a topic set with a named coherence measure.

    Parameters
    ----------
    reference : CoherenceReference
        Counts built by :func:`build_reference`.
    topics : ndarray of int, shape (K, N)
        Term ids of each topic's top words, most probable first (order matters for U_Mass).
    measure : str
        One of :data:`MEASURES`.
    window : int, optional
        Override the measure's window size (the reference must hold counts for it).

    Returns
    -------
    CoherenceResult
    """
    if measure not in MEASURES:
        raise InputError(
            f"coherence measure {measure!r} is unknown; choose one of {', '.join(MEASURES)}"
        )
    return MEASURES[measure].run(reference, topics, window)


def c_v(
    reference: CoherenceReference, topics: np.ndarray, *, window: int | None = None
) -> CoherenceResult:
    """C_V: one-set segmentation, sliding window 110, indirect cosine over NPMI, mean.

    Parameters and result as :func:`score` (``window`` overrides the default size).

    References
    ----------
    Röder, M., Both, A., Hinneburg, A. (2015). Exploring the Space of Topic Coherence
    Measures. WSDM '15.
    """
    return MEASURES["c_v"].run(reference, topics, window)


def c_npmi(
    reference: CoherenceReference, topics: np.ndarray, *, window: int | None = None
) -> CoherenceResult:
    """C_NPMI: mean NPMI over all word pairs, sliding window 10.

    Parameters and result as :func:`score` (``window`` overrides the default size).

    References
    ----------
    Bouma, G. (2009). Normalized (Pointwise) Mutual Information in Collocation
    Extraction. GSCL 2009. Röder, Both & Hinneburg (2015), WSDM '15.
    """
    return MEASURES["c_npmi"].run(reference, topics, window)


def c_uci(
    reference: CoherenceReference, topics: np.ndarray, *, window: int | None = None
) -> CoherenceResult:
    """C_UCI: mean PMI over all word pairs, sliding window 10.

    Parameters and result as :func:`score` (``window`` overrides the default size).

    References
    ----------
    Newman, D., Lau, J. H., Grieser, K., Baldwin, T. (2010). Automatic Evaluation of
    Topic Coherence. NAACL-HLT 2010.
    """
    return MEASURES["c_uci"].run(reference, topics, window)


def u_mass(reference: CoherenceReference, topics: np.ndarray) -> CoherenceResult:
    """U_Mass: mean over one-preceding pairs of ln((P(w′, w*) + ε) / P(w*)), by documents.

    gensim's form: a mean with ε on the probability, not the original sum with +1 count
    smoothing, so the values are comparable with gensim, not with the paper. Parameters
    and result as :func:`score`; word order matters (most probable first).

    References
    ----------
    Mimno, D., Wallach, H., Talley, E., Leenders, M., McCallum, A. (2011). Optimizing
    Semantic Coherence in Topic Models. EMNLP 2011.
    """
    return MEASURES["u_mass"].run(reference, topics, None)
