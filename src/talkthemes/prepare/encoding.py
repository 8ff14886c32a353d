"""Token codes: what the per-transcript phase hands on, and the encoders' shared base.

Both lemma paths (:mod:`talkthemes.prepare.lemmas`, the fast path, and
:mod:`talkthemes.prepare.pipeline`, a spaCy pipeline) hand each token to the filter step
(:class:`~talkthemes.prepare.filter.TokenFilter`) and encode the outcome as one integer per
token (see :func:`decode`), sentence by sentence, in an :class:`Encoded`.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Mapping, Sequence
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import NDArray

from talkthemes.prepare.boilerplate import sentence_key
from talkthemes.prepare.filter import KEEP, TokenFilter
from talkthemes.prepare.headwords import NOUNS_CAPITALISED, PROVISIONAL, Headwords

__all__ = ["Encoded", "Encoder", "decode", "empty_encoded", "kept_breaks", "tally"]


class Encoded(NamedTuple):
    """Token codes of a batch of texts.

    Attributes
    ----------
    codes : ndarray of int64
        One code per token, texts and sentences one after another (see :func:`decode`).
    lengths : ndarray of int64
        Tokens per sentence (sentences without tokens are left out).
    keys : ndarray of int64
        Boilerplate key per sentence (0 when shorter than ``min_words`` words).
    n_sentences : ndarray of int64
        Sentences per text.
    breaks : ndarray of bool
        One per token (meaningful for kept tokens): True when the token does not directly
        follow the previous kept token of its sentence, because a word other than a filler
        was removed between them (a stop word, a number, a word cut off, a part of speech,
        scrubbed text), or because it is the first kept token of its sentence. Fillers do
        not break adjacency: speakers insert them anywhere.
    counts : dict of str to int
        Times each word the lemma decisions need was said, lower-cased (names left out).
    names : dict of (str, str) to int
        Names kept as written whose table lemma differs: ``(name, table lemma)`` → times.
    """

    codes: NDArray[np.int64]
    lengths: NDArray[np.int64]
    keys: NDArray[np.int64]
    n_sentences: NDArray[np.int64]
    breaks: NDArray[np.bool_]
    counts: dict[str, int] = {}  # noqa: RUF012 - a NamedTuple default, never mutated
    names: dict[tuple[str, str], int] = {}  # noqa: RUF012


def decode(code: int) -> tuple[int, int, bool]:
    """Read back a token code.

    Codes are ``2 * term_id + changed`` for a kept token (``changed``: the lemma differs
    from the lowercased word) and ``-reason`` for a dropped one.

    Returns
    -------
    term_id, reason, changed : int, int, bool
        ``term_id`` is -1 for a dropped token.
    """
    if code >= 0:
        return code >> 1, KEEP, bool(code & 1)
    return -1, -code, False


def kept_breaks(
    seen: NDArray[np.integer], kept: NDArray[np.bool_], sentence: NDArray[np.integer]
) -> NDArray[np.bool_]:
    """Which kept tokens do not directly follow the previous kept token of their sentence.

    Parameters
    ----------
    seen : ndarray of int, one per token
        Running count of the pieces that break adjacency, up to and including the token
        (a breaking token counts itself; a kept token never breaks).
    kept : ndarray of bool, one per token
    sentence : ndarray of int, one per token
        The token's sentence (any numbering that changes between sentences).

    Returns
    -------
    ndarray of bool, one per token
        True at kept tokens after a break or first in their sentence (by position among
        the kept tokens); False elsewhere.
    """
    out = np.zeros(kept.size, dtype=bool)
    at = np.flatnonzero(kept)
    if at.size == 0:
        return out
    where = np.asarray(sentence)[at]
    count = np.asarray(seen)[at]
    brk = np.ones(at.size, dtype=bool)
    brk[1:] = (where[1:] != where[:-1]) | (count[1:] != count[:-1])
    out[at] = brk
    return out


def empty_encoded(n_texts: int = 0) -> Encoded:
    z = np.zeros(0, dtype=np.int64)
    return Encoded(z, z, z, np.zeros(n_texts, dtype=np.int64), np.zeros(0, dtype=bool))


def tally(
    index: NDArray[np.integer], keys: Sequence[Any], weights: NDArray[np.integer] | None = None
) -> dict[Any, int]:
    """Counts of ``keys[i]`` for every ``i >= 0`` in ``index`` (each counted ``weights``
    times when given)."""
    index = np.asarray(index)
    use = index >= 0
    if not use.any():
        return {}
    w = None if weights is None else np.asarray(weights)[use]
    found = np.bincount(index[use], weights=w, minlength=len(keys))
    return {keys[i]: int(found[i]) for i in np.flatnonzero(found).tolist()}


class Encoder(ABC):
    """Shared state of both paths: the term table, the sentence keys, the lemma checks.

    Parameters
    ----------
    token_filter : TokenFilter
    lang : str
    min_words : int
    names : bool
        ``[prepare] names`` (off anyway for languages that capitalise every noun).
    exceptions : mapping of str to str
        ``[prepare] lemma_exceptions`` (word as said, lower-cased → lemma).
    headwords : Headwords, optional
        The contested words of the lemma table (fast path only).
    """

    def __init__(
        self,
        token_filter: TokenFilter,
        lang: str,
        min_words: int,
        *,
        names: bool = False,
        exceptions: Mapping[str, str] | None = None,
        headwords: Headwords | None = None,
    ) -> None:
        self.filter = token_filter
        self.lang = lang
        self.min_words = min_words
        self.names = names and lang not in NOUNS_CAPITALISED
        self.exceptions = {k.lower(): v.lower() for k, v in (exceptions or {}).items()}
        self.headwords = headwords or Headwords(ratio=0.0)
        self.types: list[str] = []
        self._ids: dict[str, int] = {}

    def _id(self, term: str) -> int:
        tid = self._ids.get(term)
        if tid is None:
            tid = self._ids[term] = len(self.types)
            self.types.append(term)
        return tid

    def _term(self, lemma: str, lower: str) -> int:
        reason = self.filter.reason(lemma, lower)
        if reason != KEEP:
            return -reason
        return 2 * self._id(lemma) + (lemma != lower)

    def _provisional(self, lower: str, lemma: str) -> int:
        """Code of a contested word: a provisional term unless both outcomes are dropped."""
        reason = self.filter.reason(lemma, lower)
        if reason != KEEP and self.filter.reason(lower, lower) != KEEP:
            return -reason
        return 2 * self._id(PROVISIONAL + lower)

    def choose(self, word: str) -> str:
        """The lemma of a contested word when no corpus counts are known (the table's,
        except where the table's lemma is not a word)."""
        return self.headwords.decide(word, {}).lemma

    @abstractmethod
    def encode(self, texts: Sequence[str]) -> Encoded:
        """Encode texts (one per transcript) into token codes, sentence by sentence."""

    def kept(self, text: str) -> list[str]:
        """The lemmas of a text that the filter keeps, in order (contested words resolved by
        :meth:`choose`)."""
        codes = self.encode([text]).codes
        out = []
        for c in codes[codes >= 0].tolist():
            term = self.types[c >> 1]
            if term.startswith(PROVISIONAL):
                word = term[len(PROVISIONAL) :]
                term = self.choose(word)
                if self.filter.reason(term, word) != KEEP:
                    continue
            out.append(term)
        return out

    def key(self, ws: Sequence[str]) -> int:
        """Boilerplate key of a sentence's words (0 when shorter than ``min_words``)."""
        if len(ws) < self.min_words:
            return 0
        return sentence_key(ws)
