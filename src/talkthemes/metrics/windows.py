"""Boolean sliding-window counting, the kernel behind the coherence window counts.

The public entry is :func:`talkthemes.metrics.cooccurrence.window_counts` (and
``build_reference`` there), which checks the token stream and calls :func:`count_windows`
here with the transcripts to count as start offsets and lengths into ``tokens``, ``-1`` a
placeholder that takes a window slot but is never counted, and a lookup table from term id
to the index of the word in the counted set. Windows never cross transcripts; a transcript
shorter than the window is one window; an empty transcript still counts as one (empty)
window. A word is present in every window that holds at least one copy of it.

Counting is linear in the number of tokens: each occurrence of a word extends a run of
windows, and two words share a window wherever their runs overlap; the windows themselves
are never listed. Transcripts are counted in chunks and word pairs expanded in blocks, to
bound memory.

References
----------
Röder, M., Both, A., Hinneburg, A. (2015). Exploring the Space of Topic Coherence
Measures. WSDM '15.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence

import numpy as np
import scipy.sparse as sp

from talkthemes.errors import InputError

__all__ = ["count_windows"]

_DENSE_MAX_WORDS = 4096  # pair counts kept in a dense U×U array up to this many words
_PAIR_BLOCK = 4_000_000  # word pairs expanded at a time


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


def count_windows(
    tok: np.ndarray,
    rows: np.ndarray,
    starts: np.ndarray,
    lengths: np.ndarray,
    lut: np.ndarray,
    sizes: Sequence[int],
    chunk_tokens: int,
) -> dict[int, tuple[np.ndarray, sp.csr_array, int]]:
    """Count Boolean sliding-window occurrence and co-occurrence for several window sizes.

    Parameters
    ----------
    tok : ndarray of int, shape (T,)
        Concatenated token ids; ``-1`` marks a placeholder.
    rows : ndarray of int, shape (R,)
        The transcripts counted (their indices, for error messages).
    starts, lengths : ndarray of int, shape (R,)
        Where each counted transcript starts in ``tok`` and how many tokens it holds.
    lut : ndarray of int, shape (V+1,)
        Term id → index in the counted word set, ``-1`` for words not counted (and at
        ``lut[-1]``, for the placeholder).
    sizes : sequence of int
        Positive window sizes.
    chunk_tokens : int
        Tokens processed per chunk.

    Returns
    -------
    dict
        Window size → (occurrences of shape (U,), symmetric co-occurrence matrix of shape
        (U, U) with the occurrences on its diagonal, number of windows).
    """
    n_words = int(lut.max()) + 1  # the counted words are 0..U-1 in the table
    pairs = {s: _PairCounter(n_words) for s in sizes}
    n_units = dict.fromkeys(sizes, 0)
    for part in _chunks(lengths, chunk_tokens):
        doc, pos, word = _gather(tok, rows[part], starts[part], lengths[part], lut)
        for s in sizes:
            n_win = np.where(lengths[part] >= s, lengths[part] - s + 1, 1).astype(np.int64)
            n_units[s] += int(n_win.sum())
            _count_chunk(pairs[s], doc, pos, word, n_win, s)
    return {s: (pairs[s].occurrences, pairs[s].result(), n_units[s]) for s in sizes}
