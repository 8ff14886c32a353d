"""Step 6, phrases: join collocations such as ``late_fee`` into one term.

Scoring is gensim's ``Phrases`` with ``scoring="npmi"``: for a pair of adjacent terms
*a b*, with *N* the number of tokens the model was trained on,

    NPMI(a, b) = ln( P(a,b) / (P(a) P(b)) ) / -ln P(a,b),   P(x) = count(x) / N

(Bouma 2009), which lies in [-1, 1]. A pair seen at least ``phrase_min_count`` times whose
NPMI exceeds ``phrase_threshold`` becomes a phrase. The model is trained once on the whole
corpus (after boilerplate and stop words are gone), frozen (gensim's ``FrozenPhrases``) and
applied to every transcript.

**Only adjacent words.** A pair is counted, and joined, only where its two words were next to
each other in a sentence: the token stream is cut into *runs* of adjacent kept words, and a
removed word (stop word, number, word cut off, scrubbed text) ends a run; fillers do not, as
speakers insert them anywhere. Sentences and turns end runs too. So "forth, like, the day"
never yields ``forth_like``; this is gensim's ``Phrases`` with each run given as a sentence
(``tests/external/test_phrases_npmi.py`` checks exactly that). Unigram probabilities still
count every kept token. See ``docs/prepare.md`` ("phrases") for why stop words are not used as
connector words.

How the work is split: unigram and bigram counts are taken with numpy over the integer token
stream (the same counts gensim's ``Phrases.add_vocab`` collects, without its vocabulary
pruning); only bigrams that can pass ``min_count`` are scored, with the float operations of
gensim's ``npmi_scorer`` in the same order and kept when the score exceeds the threshold, as
``Phrases.freeze()`` does (gensim itself takes a second to import, which a prepare run of
20,000 calls would feel; the tests compare with it). Applying the frozen model
follows gensim's ``analyze_sentence`` exactly (left to right; a joined pair is not reused),
vectorised over the token stream. ``tests/prepare/test_phrases.py`` checks the result
against gensim trained and applied the ordinary way.

References
----------
Bouma, G. (2009). Normalized (pointwise) mutual information in collocation extraction.
Proceedings of the Biennial GSCL Conference 2009, 31–40.
Mikolov, T., Sutskever, I., Chen, K., Corrado, G., Dean, J. (2013). Distributed
representations of words and phrases and their compositionality. NIPS 2013.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from talkthemes.prepare.pieces import unit_chunks

__all__ = [
    "DELIMITER",
    "PhraseModel",
    "apply_phrases",
    "join_runs",
    "learn_phrases",
    "run_lengths",
    "unit_bigrams",
]

DELIMITER = "_"


@dataclass(frozen=True)
class PhraseModel:
    """A frozen phrase model over term ids.

    Attributes
    ----------
    pairs : ndarray of int64, shape (P, 2)
        Term ids of each phrase's first and second word.
    scores : ndarray of float64, shape (P,)
        NPMI of each phrase.
    names : list of str
        ``first_second``, as gensim writes them.
    bigram_counts : ndarray of int64, shape (P,)
        Occurrences of each pair in the training stream.
    """

    pairs: NDArray[np.int64]
    scores: NDArray[np.float64]
    names: list[str]
    bigram_counts: NDArray[np.int64]

    def __len__(self) -> int:
        return len(self.names)


def unit_bigrams(
    tokens: NDArray[np.integer], lengths: NDArray[np.integer]
) -> tuple[NDArray[np.int64], NDArray[np.int64], NDArray[np.bool_]]:
    """Adjacent token pairs that lie inside one unit (sentence).

    Returns
    -------
    first, second : ndarray of int64, shape (n - 1,)
        ``tokens[i]`` and ``tokens[i + 1]``.
    inside : ndarray of bool, shape (n - 1,)
        True when both belong to the same unit.
    """
    n = int(tokens.size)
    if n < 2:
        z = np.zeros(0, dtype=np.int64)
        return z, z, np.zeros(0, dtype=bool)
    # a pair crosses into the next unit where that unit starts (no per-token unit array)
    inside = np.ones(n - 1, dtype=bool)
    starts = np.cumsum(np.asarray(lengths, dtype=np.int64))[:-1]
    inside[starts[(starts > 0) & (starts < n)] - 1] = False
    t = tokens.astype(np.int64, copy=False)
    return t[:-1], t[1:], inside


def _bigram_counts(
    tokens: NDArray[np.integer], lengths: NDArray[np.integer], n_types: int
) -> tuple[NDArray[np.int64], NDArray[np.int64]]:
    """Distinct in-unit pairs (``first * n_types + second``, sorted) and their counts,
    counted piece by piece (:func:`unit_chunks`) so memory follows the distinct pairs."""
    uniq = np.zeros(0, dtype=np.int64)
    counts = np.zeros(0, dtype=np.int64)
    for a, b, ua, ub in unit_chunks(lengths):
        first, second, inside = unit_bigrams(tokens[a:b], lengths[ua:ub])
        u, c = np.unique(first[inside] * n_types + second[inside], return_counts=True)
        del first, second, inside
        if uniq.size == 0:
            uniq, counts = u, c.astype(np.int64)
            continue
        merged, inverse = np.unique(np.concatenate([uniq, u]), return_inverse=True)
        total = np.zeros(merged.size, dtype=np.int64)
        np.add.at(total, inverse, np.concatenate([counts, c]))
        uniq, counts = merged, total
    return uniq, counts


def learn_phrases(
    tokens: NDArray[np.integer],
    lengths: NDArray[np.integer],
    types: list[str],
    *,
    threshold: float,
    min_count: int,
) -> tuple[PhraseModel, dict[str, float]]:
    """Train the NPMI phrase model (gensim's) on a token stream and freeze it.

    Parameters
    ----------
    tokens : ndarray of int, shape (n,)
        Term ids, units (sentences) one after another.
    lengths : ndarray of int, shape (U,)
        Tokens per unit; sums to n.
    types : list of str
        Term strings by id (alphabetic, so they never contain :data:`DELIMITER`).
    threshold : float
        NPMI a pair must exceed (gensim ``threshold``).
    min_count : int
        Occurrences a pair needs (gensim ``min_count``).

    Returns
    -------
    model : PhraseModel
    phrasegrams : dict of str to float
        Phrase strings → scores, as gensim's frozen model's ``phrasegrams``.
    """
    n_types = len(types)
    uniq, counts = _bigram_counts(tokens, lengths, n_types)
    keep = counts >= min_count
    uniq, counts = uniq[keep], counts[keep]
    unigram = np.bincount(np.asarray(tokens, dtype=np.int64), minlength=n_types)

    total = float(int(tokens.size))  # gensim's corpus_word_count
    phrasegrams: dict[str, float] = {}
    by_name: dict[str, tuple[int, int, int]] = {}
    for key, count in zip(uniq.tolist(), counts.tolist(), strict=True):
        a, b = divmod(key, n_types)
        score = _npmi(int(unigram[a]), int(unigram[b]), count, total)
        if score > threshold:
            name = f"{types[a]}{DELIMITER}{types[b]}"
            phrasegrams[name] = score
            by_name[name] = (a, b, count)

    names = sorted(phrasegrams)
    pairs = np.array([by_name[n][:2] for n in names], dtype=np.int64).reshape(-1, 2)
    scores = np.array([phrasegrams[n] for n in names], dtype=np.float64)
    bigram_counts = np.array([by_name[n][2] for n in names], dtype=np.int64)
    return PhraseModel(pairs, scores, names, bigram_counts), phrasegrams


def _npmi(count_a: int, count_b: int, count_ab: int, total: float) -> float:
    """NPMI of a pair, with the operations of gensim's ``npmi_scorer`` in its order (so the
    same floats, and the same pairs pass the threshold)."""
    pa = count_a / total
    pb = count_b / total
    pab = count_ab / total
    try:
        return math.log(pab / (pa * pb)) / -math.log(pab)
    except (ValueError, ZeroDivisionError):  # a zero count (never here): never a phrase
        return -math.inf


def apply_phrases(
    tokens: NDArray[np.integer],
    lengths: NDArray[np.integer],
    model: PhraseModel,
    n_types: int,
) -> tuple[NDArray[np.int32], NDArray[np.int64], NDArray[np.int64]]:
    """Join the model's phrases in a token stream, as gensim's ``FrozenPhrases`` does.

    Left to right, a pair that is a phrase becomes one token with id ``n_types + p``
    (``p`` = the phrase's index in ``model``); its second word cannot start another
    phrase.

    Parameters
    ----------
    tokens : ndarray of int, shape (n,)
    lengths : ndarray of int, shape (U,)
        Tokens per unit; pairs never span units.
    model : PhraseModel
    n_types : int
        Number of term ids in use before phrases.

    Returns
    -------
    tokens : ndarray of int32
        The new stream.
    lengths : ndarray of int64
        The new tokens per unit.
    joined : ndarray of int64, shape (P,)
        Times each phrase was joined.
    """
    tokens = np.asarray(tokens)
    lengths = np.asarray(lengths, dtype=np.int64)
    joined = np.zeros(len(model), dtype=np.int64)
    if len(model) == 0 or tokens.size < 2:
        return tokens.astype(np.int32), lengths.copy(), joined
    model_keys = model.pairs[:, 0] * n_types + model.pairs[:, 1]
    order = np.argsort(model_keys)
    sorted_keys = model_keys[order]
    starts = np.zeros(n_types, dtype=bool)  # words that start a phrase
    starts[model.pairs[:, 0]] = True
    outs, new_lengths = [], []
    for a, b, ua, ub in unit_chunks(lengths):  # pairs never span units: piece by piece
        out, piece_lengths, piece_joined = _apply_piece(
            tokens[a:b], lengths[ua:ub], order, sorted_keys, starts, n_types, len(model)
        )
        outs.append(out)
        new_lengths.append(piece_lengths)
        joined += piece_joined
    return np.concatenate(outs), np.concatenate(new_lengths), joined


def _apply_piece(
    tokens: NDArray[np.integer],
    lengths: NDArray[np.int64],
    order: NDArray[np.int64],
    sorted_keys: NDArray[np.int64],
    starts: NDArray[np.bool_],
    n_types: int,
    n_phrases: int,
) -> tuple[NDArray[np.int32], NDArray[np.int64], NDArray[np.int64]]:
    """:func:`apply_phrases` on whole units (``sorted_keys``: the model's pair keys sorted,
    ``order``: their phrase numbers, ``starts``: the words that start a phrase)."""
    if tokens.size < 2:
        return tokens.astype(np.int32), lengths.copy(), np.zeros(n_phrases, dtype=np.int64)
    first, second, inside = unit_bigrams(tokens, lengths)
    # only pairs whose first word starts a phrase are looked up (a small share)
    cand = np.flatnonzero(inside & starts[first])
    keys = first[cand] * n_types + second[cand]
    del first, second, inside
    found = np.minimum(np.searchsorted(sorted_keys, keys), sorted_keys.size - 1)
    is_hit = sorted_keys[found] == keys
    hit = np.zeros(tokens.size - 1, dtype=bool)
    hit[cand[is_hit]] = True
    at = np.zeros(tokens.size - 1, dtype=np.int64)
    at[cand] = found
    # gensim's greedy pass: within a run of consecutive hits, take every other one.
    pos = np.arange(hit.size)
    run_start = hit.copy()
    run_start[1:] &= ~hit[:-1]
    last_start = np.maximum.accumulate(np.where(run_start, pos, -1))
    take = hit & ((pos - last_start) % 2 == 0)
    del pos, run_start, last_start, hit
    phrase = order[at[take]]
    out = tokens.astype(np.int32, copy=True)
    out[:-1][take] = (n_types + phrase).astype(np.int32)
    drop = np.zeros(tokens.size, dtype=bool)
    drop[1:][take] = True
    # the unit of each joined pair's first token, found from the units' ends
    unit_of_pair = np.searchsorted(np.cumsum(lengths), np.flatnonzero(take), side="right")
    new_lengths = lengths - np.bincount(unit_of_pair, minlength=lengths.size)
    joined = np.bincount(phrase, minlength=n_phrases).astype(np.int64)
    return out[~drop], new_lengths, joined


def run_lengths(breaks: NDArray[np.bool_]) -> NDArray[np.int64]:
    """Lengths of the runs of adjacent tokens; a run starts at every True of ``breaks``.

    ``breaks`` is True at the first kept token of every sentence (and after every removed
    word that is not a filler), so runs never span sentences.
    """
    breaks = np.asarray(breaks, dtype=bool)
    if breaks.size == 0:
        return np.zeros(0, dtype=np.int64)
    if not breaks[0]:
        raise ValueError("the first token must start a run")
    starts = np.flatnonzero(breaks)
    return np.diff(np.append(starts, breaks.size)).astype(np.int64)


def join_runs(
    tokens: NDArray[np.integer],
    breaks: NDArray[np.bool_],
    sent_kept: NDArray[np.integer],
    model: PhraseModel,
    n_types: int,
) -> tuple[NDArray[np.int32], NDArray[np.bool_], NDArray[np.int64], NDArray[np.int64]]:
    """Join a model's phrases inside runs of adjacent tokens, keeping the sentence layout.

    The one place where phrases are applied: the chain (:mod:`talkthemes.prepare.assemble`)
    and a frozen prep (:mod:`talkthemes.prepare.frozen`) both call it.

    Parameters
    ----------
    tokens : ndarray of int, shape (n,)
    breaks : ndarray of bool, shape (n,)
        Run starts (see :func:`run_lengths`).
    sent_kept : ndarray of int, shape (S,)
        Tokens per sentence (sentences with none included); sums to n.
    model : PhraseModel
    n_types : int

    Returns
    -------
    tokens : ndarray of int32
    breaks : ndarray of bool
        Run starts in the new stream (a joined pair is one token of its run).
    sent_kept : ndarray of int64
        New tokens per sentence.
    joined : ndarray of int64, shape (P,)
        Times each phrase was joined.
    """
    sent_kept = np.asarray(sent_kept, dtype=np.int64)
    lengths = run_lengths(breaks)
    if lengths.size == 0 or len(model) == 0:
        return (
            np.asarray(tokens).astype(np.int32),
            np.asarray(breaks, dtype=bool).copy(),
            sent_kept.copy(),
            np.zeros(len(model), dtype=np.int64),
        )
    starts = np.cumsum(lengths) - lengths
    # the sentence each run starts in, from the sentences' ends (no per-token array)
    run_sentence = np.searchsorted(np.cumsum(sent_kept), starts, side="right")
    out, new_lengths, joined = apply_phrases(tokens, lengths, model, n_types)
    new_breaks = np.zeros(out.size, dtype=bool)
    new_breaks[np.cumsum(new_lengths) - new_lengths] = True
    new_kept = np.bincount(run_sentence, weights=new_lengths, minlength=sent_kept.size)
    return out, new_breaks, new_kept.astype(np.int64), joined
