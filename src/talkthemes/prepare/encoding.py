"""Token codes: what the per-transcript phase hands on, and the encoders' shared base.

Both lemma paths (:mod:`talkthemes.prepare.lemmas`, the fast path, and
:mod:`talkthemes.prepare.pipeline`, a spaCy pipeline) hand each token to the filter step
(:class:`~talkthemes.prepare.filter.TokenFilter`) and encode the outcome as one integer per
token (see :func:`decode`), sentence by sentence, in an :class:`Encoded`.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import NDArray

from talkthemes.prepare.boilerplate import sentence_key
from talkthemes.prepare.filter import KEEP, NAME, TokenFilter
from talkthemes.prepare.headwords import NOUNS_CAPITALISED, PROVISIONAL, Headwords
from talkthemes.prepare.names import NameLexicon, name_type, parse_name_type
from talkthemes.prepare.names_mark import (
    CAPITAL,
    CUE,
    KNOWN,
    SUSPECT,
    NameColumns,
    mark_names,
)

__all__ = [
    "Encoded",
    "Encoder",
    "PersonNames",
    "decode",
    "empty_encoded",
    "kept_breaks",
    "tally",
]


@dataclass
class PersonNames:
    """What the names step found in a batch (see :mod:`talkthemes.prepare.names`).

    Attributes
    ----------
    found : dict of (str, str) to int
        Tokens removed, by ``(source, word)``: source ``cue`` (at a cue) or ``known`` (a
        name of the transcript, written with a capital).
    named : dict of str to int
        Words given as names (by a label or a cue) → transcripts of the batch.
    """

    found: dict[tuple[str, str], int] = field(default_factory=dict)
    named: dict[str, int] = field(default_factory=dict)


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
    person : PersonNames or None
        What the names step found (None when it is off).
    """

    codes: NDArray[np.int64]
    lengths: NDArray[np.int64]
    keys: NDArray[np.int64]
    n_sentences: NDArray[np.int64]
    breaks: NDArray[np.bool_]
    counts: dict[str, int] = {}  # noqa: RUF012 - a NamedTuple default, never mutated
    names: dict[tuple[str, str], int] = {}  # noqa: RUF012
    person: PersonNames | None = None


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
    person_names : NameLexicon, optional
        The names step (:mod:`talkthemes.prepare.names`); off when omitted.
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
        person_names: NameLexicon | None = None,
    ) -> None:
        self.filter = token_filter
        self.lang = lang
        self.min_words = min_words
        self.names = names and lang not in NOUNS_CAPITALISED
        self.exceptions = {k.lower(): v.lower() for k, v in (exceptions or {}).items()}
        self.headwords = headwords or Headwords(ratio=0.0)
        self.types: list[str] = []
        self._ids: dict[str, int] = {}
        self.person_names = person_names
        self._low_ids: dict[str, int] = {}
        self.lows: list[str] = []
        self._name_codes: dict[tuple[int, int, int], int] = {}
        self._label_cache: dict[frozenset[str], tuple[int, ...]] = {}

    def low_id(self, lower: str) -> int:
        """An id of a lower-cased word (for the names step)."""
        i = self._low_ids.get(lower)
        if i is None:
            i = self._low_ids[lower] = len(self.lows)
            self.lows.append(lower)
        return i

    def find_names(
        self,
        codes: NDArray[np.int64],
        word: NDArray[np.int64],
        cols: NameColumns,
        *,
        labels: Sequence[Iterable[str]] | None,
        doc: NDArray[np.int64],
        n_docs: int,
        **where: Any,
    ) -> PersonNames:
        """Run the names step over a batch's tokens and change their codes in place.

        Names removed get code ``-NAME``; suspect and capitalised tokens (that the filter
        keeps) get a provisional name term (:func:`~talkthemes.prepare.names.name_type`)
        for the corpus to decide. ``word``, ``cols`` and ``where`` (``flagged``, ``sent``,
        ``line``) are as :func:`~talkthemes.prepare.names_mark.mark_names` takes them.
        """
        lex = self.person_names
        assert lex is not None
        label_ids = [self._label_ids(ws) for ws in labels] if labels else []
        label_ids += [()] * (n_docs - len(label_ids))
        marks = mark_names(
            word, cols, doc=doc, n_docs=n_docs, labels=label_ids, capitals=lex.capitals, **where
        )
        action = marks.action
        touched = np.flatnonzero(action)
        act = action[touched]
        kept = codes[touched] >= 0
        low = cols.low[word[touched]]
        out = PersonNames()
        for source, kind in (("cue", CUE), ("known", KNOWN)):
            hit = (act == kind) & kept
            if hit.any():
                ids, counts = np.unique(low[hit], return_counts=True)
                for w, c in zip(ids.tolist(), counts.tolist(), strict=True):
                    out.found[(source, self.lows[w])] = c
                codes[touched[hit]] = -NAME
        for kind, tag in ((SUSPECT, "s"), (CAPITAL, "c")):
            hit = touched[(act == kind) & kept]
            if hit.size:
                # one provisional code per distinct (word, code) pair
                keys, inverse = np.unique(
                    (cols.low[word[hit]] << 32) | codes[hit], return_inverse=True
                )
                new = [self._name_code(tag, k >> 32, k & 0xFFFFFFFF) for k in keys.tolist()]
                codes[hit] = np.asarray(new, dtype=np.int64)[inverse.ravel()]
        if marks.named.size:
            ids, counts = np.unique(marks.named[:, 1], return_counts=True)
            out.named = {
                self.lows[w]: c for w, c in zip(ids.tolist(), counts.tolist(), strict=True)
            }
        return out

    def _label_ids(self, names: Iterable[str]) -> tuple[int, ...]:
        key = names if isinstance(names, frozenset) else frozenset(names)
        found = self._label_cache.get(key)
        if found is None:
            found = self._label_cache[key] = tuple(self.low_id(w) for w in key)
        return found

    def _name_code(self, kind: str, low: int, code: int) -> int:
        """The code of a suspect or capitalised token whose own code is ``code``."""
        key = (ord(kind), low, code)
        found = self._name_codes.get(key)
        if found is None:
            term = self.types[code >> 1]
            found = 2 * self._id(name_type(kind, self.lows[low], term)) + (code & 1)
            self._name_codes[key] = found
        return found

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
    def encode(
        self, texts: Sequence[str], labels: Sequence[Iterable[str]] | None = None
    ) -> Encoded:
        """Encode texts (one per transcript) into token codes, sentence by sentence;
        ``labels`` holds, per text, the names in its speaker labels (names step)."""

    def kept(self, text: str) -> list[str]:
        """The lemmas of a text that the filter keeps, in order (contested words resolved by
        :meth:`choose`; with no corpus to decide them, suspect names are removed and
        capitalised words kept)."""
        codes = self.encode([text]).codes
        out = []
        for c in codes[codes >= 0].tolist():
            term = self.types[c >> 1]
            parsed = parse_name_type(term)
            if parsed is not None:
                if parsed[0] == "s":
                    continue
                term = parsed[2]
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
