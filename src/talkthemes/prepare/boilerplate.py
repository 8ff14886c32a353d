"""Step 3, boilerplate: sentences that recur across many transcripts are scripts, not topics.

Agents read greetings, verification questions, hold messages and closings from a script; the
same sentences then turn up in a large share of the calls and would become the strongest
"themes" of any topic model. The step drops them:

1. Each turn is split into sentences at ``.``, ``!``, ``?``, ``…`` and line breaks
   (:func:`split_sentences`).
2. A sentence is normalised to its lowercased words (the tokenizer's), so case,
   punctuation and spacing do not matter. Sentences with fewer than
   ``boilerplate_min_words`` words are never boilerplate ("yes, that's right.").
3. The normalised sentence is reduced to a 64-bit key, so counting its document frequency
   over any number of transcripts takes 8 bytes per sentence: each distinct word gets a
   64-bit value from BLAKE2b, and the key is the polynomial hash
   ``sum(value[j] * P**j) mod 2**64`` over the sentence's words. It is computed for a
   whole batch at once with numpy (:func:`sentence_keys`) and agrees with the one-sentence
   form (:func:`sentence_key`).
4. A sentence found in at least ``boilerplate_min_share`` of the transcripts that have text
   (and in at least 2 of them) is boilerplate; every occurrence is dropped.

The report lists each boilerplate sentence (normalised) with the share of transcripts it
appears in.
"""

from __future__ import annotations

import hashlib
import math
import re
from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

__all__ = [
    "find_boilerplate",
    "sentence_key",
    "sentence_keys",
    "split_sentences",
    "word_value",
]

_SENTENCE_BREAK = re.compile(r"[.!?…\n]")


def split_sentences(text: str) -> list[str]:
    """Split a turn's text into sentences (empty pieces dropped).

    A sentence ends at every ``.``, ``!``, ``?``, ``…`` and line break (the mark is
    dropped). A point inside a number or abbreviation ("3.5", "e.g.") splits too, which
    costs nothing: such pieces hold no topic words, and the rule is one character class
    for a fast scan.

    Parameters
    ----------
    text : str

    Returns
    -------
    list of str
    """
    return [s for s in _SENTENCE_BREAK.split(text) if s]


#: Multiplier of the polynomial sentence hash (odd, so powers never vanish mod 2**64).
_P = np.uint64(0x9E3779B97F4A7C15)


def word_value(word: str) -> int:
    """The 64-bit value of a word in sentence keys (BLAKE2b of the lowercased word)."""
    digest = hashlib.blake2b(word.lower().encode("utf-8"), digest_size=8).digest()
    return int.from_bytes(digest, "little")


def sentence_key(words: Sequence[str]) -> int:
    """The key of one sentence: ``sum(word_value(w_j) * P**j) mod 2**64`` as signed int64.

    Stable across processes and runs (unlike :func:`hash`), so worker processes agree.
    Never 0, which is reserved for "too short to be boilerplate".
    """
    total = 0
    power = 1
    p = int(_P)
    for w in words:
        total = (total + word_value(w) * power) % 2**64
        power = (power * p) % 2**64
    key = int(np.uint64(total).view(np.int64))
    return key or 1


def sentence_keys(
    values: NDArray[np.uint64], lengths: NDArray[np.integer], min_words: int
) -> NDArray[np.int64]:
    """:func:`sentence_key` of many sentences at once.

    Parameters
    ----------
    values : ndarray of uint64, shape (n,)
        :func:`word_value` of every word, sentences one after another.
    lengths : ndarray of int, shape (S,)
        Words per sentence (each at least 1).
    min_words : int
        Sentences shorter than this get key 0.

    Returns
    -------
    ndarray of int64, shape (S,)
    """
    lengths = np.asarray(lengths, dtype=np.int64)
    if lengths.size == 0:
        return np.zeros(0, dtype=np.int64)
    starts = np.zeros(lengths.size, dtype=np.int64)
    np.cumsum(lengths[:-1], out=starts[1:])
    position = np.arange(values.size, dtype=np.int64) - np.repeat(starts, lengths)
    longest = int(lengths.max())
    powers = np.ones(longest, dtype=np.uint64)
    with np.errstate(over="ignore"):
        for j in range(1, longest):
            powers[j] = powers[j - 1] * _P
        terms = values.astype(np.uint64, copy=False) * powers[position]
        sums = np.add.reduceat(terms, starts)
    keys = sums.view(np.int64).copy()
    keys[keys == 0] = 1
    keys[lengths < min_words] = 0
    return keys


def find_boilerplate(
    doc_index: NDArray[np.integer],
    keys: NDArray[np.int64],
    n_docs: int,
    min_share: float,
) -> tuple[NDArray[np.int64], NDArray[np.int64]]:
    """Find the sentence keys that occur in at least ``min_share`` of the transcripts.

    Parameters
    ----------
    doc_index : ndarray of int, shape (S,)
        Transcript number of each sentence.
    keys : ndarray of int64, shape (S,)
        :func:`sentence_key` of each sentence; 0 for sentences too short to be boilerplate.
    n_docs : int
        Number of transcripts the share is taken over (those with text).
    min_share : float
        The ``boilerplate_min_share`` setting; 0 switches the step off.

    Returns
    -------
    keys : ndarray of int64
        Boilerplate keys, sorted by document frequency (descending), then key.
    doc_freq : ndarray of int64
        Number of transcripts each one appears in.
    """
    empty = np.zeros(0, dtype=np.int64)
    if min_share <= 0 or n_docs <= 0 or keys.size == 0:
        return empty, empty
    eligible = keys != 0
    docs = np.asarray(doc_index, dtype=np.int64)[eligible]
    ks = np.asarray(keys, dtype=np.int64)[eligible]
    if ks.size == 0:
        return empty, empty
    if docs.size > 1 and bool(np.all(docs[1:] >= docs[:-1])):
        # sentences in transcript order (always, in the chain): a stable sort by key keeps
        # each key's sentences in transcript order (one sort instead of two)
        order = np.argsort(ks, kind="stable")
    else:
        order = np.lexsort((docs, ks))
    docs, ks = docs[order], ks[order]
    first = np.ones(ks.size, dtype=bool)  # first sentence of each (transcript, key) pair
    first[1:] = (docs[1:] != docs[:-1]) | (ks[1:] != ks[:-1])
    kf = ks[first]  # sorted by key
    bounds = np.flatnonzero(np.concatenate([[True], kf[1:] != kf[:-1]]))
    uniq, df = kf[bounds], np.diff(np.append(bounds, kf.size))
    need = max(2, math.ceil(min_share * n_docs - 1e-9))
    hit = df >= need
    uniq, df = uniq[hit], df[hit].astype(np.int64)
    order = np.lexsort((uniq, -df))
    return uniq[order], df[order]
