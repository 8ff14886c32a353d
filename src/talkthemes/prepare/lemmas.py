"""Step 4, lemmas: words to dictionary forms, with spaCy's resources.

Two paths, chosen by ``[prepare] pipeline``:

Fast path (``pipeline = ""``, the default)
    A compiled regular expression splits a sentence into words (runs of letters, digits and
    underscores, i.e. ``\\w+``; in English ``n't`` is first rewritten to `` not`` so that
    ``don't`` gives ``do`` + ``not`` as spaCy's tokenizer does), and each word is looked up
    in spaCy's lookup lemma table from the ``spacy-lookups-data`` package, the same table
    spaCy's own ``Lemmatizer(mode="lookup")`` reads. Like spaCy, the word is looked up as
    written; a capitalised word the table does not hold (a sentence-initial "Refunds") is
    then looked up in lowercase, which spaCy's lookup mode does not do. The result of each
    distinct word is cached, so the cost per word is one dictionary look-up. Its output
    agrees with ``spacy.blank(lang)`` + the lookup lemmatizer on at least 99.5 % of the kept
    tokens (``tests/external/test_spacy_reference.py``) at many times spaCy's speed.

spaCy pipeline (``pipeline = "<installed pipeline name or folder>"``)
    The named pipeline runs over every sentence through ``nlp.pipe(batch_size=,
    n_process=)``; its tokens and lemmas are used, and tokens whose part of speech is not in
    ``pos_keep`` are dropped (set ``pos_keep = []`` for a pipeline without a tagger).

Both paths hand each token to the filter step (:class:`~talkthemes.prepare.filter.TokenFilter`)
and encode the outcome as one integer per token (see :func:`decode`).
"""

from __future__ import annotations

import logging
import re
from abc import ABC, abstractmethod
from collections.abc import Mapping, Sequence
from functools import cache
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import NDArray

from talkthemes.errors import ConfigError
from talkthemes.prepare.boilerplate import (
    sentence_key,
    sentence_keys,
    split_sentences,
    word_value,
)
from talkthemes.prepare.filter import KEEP, NON_ALPHA, POS, TokenFilter
from talkthemes.prepare.headwords import (
    ALL_CAPS_MIN_WORDS,
    NOUNS_CAPITALISED,
    PROVISIONAL,
    Headwords,
    capitalised,
    name_flags,
)

__all__ = [
    "GAP",
    "TOKEN_PATTERN",
    "Encoded",
    "FastLemmatizer",
    "SpacyLemmatizer",
    "decode",
    "kept_breaks",
    "load_lemma_table",
    "lookup_languages",
    "spacy_stop_words",
    "words",
]

logger = logging.getLogger(__name__)

#: The fast path's word pattern.
TOKEN_PATTERN = re.compile(r"\w+")
# Words and sentence ends in one pass; a sentence ends at . ! ? … before white space, or at
# a line break (the same rule as boilerplate.split_sentences).
# and the separator between transcripts.
_DOC_SEP = "\x00"
_CUT = "\x01"  # follows a word cut off mid-way ("I think- I think")
#: Stands where words were removed before the lemma step (the scrub step puts it in place of
#: what it removes), so that the words on either side are not adjacent.
GAP = "\x02"
_PIECES = re.compile(r"\w+|[.!?…\n\x00\x01\x02]")
_MARK_CHARS = frozenset(".!?…\n")
_KIND_WORD, _KIND_MARK, _KIND_DOC, _KIND_CUT, _KIND_GAP = 0, 1, 2, 3, 4
_CUTOFF = re.compile(r"-(?=\s|$)")


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


def words(sentence: str, lang: str) -> list[str]:
    """Split a sentence into words the way the fast path does.

    Words are runs of letters, digits and underscores (``\\w+``). A hyphen between two
    words splits them (``follow-up``); a word cut off with a hyphen (``think- I``) is
    still a word here, and the fast path drops it as not alphabetic, as spaCy does with
    its token ``think-``.

    Parameters
    ----------
    sentence : str
    lang : str
        spaCy language code; English rewrites ``n't`` to ``not`` first.

    Returns
    -------
    list of str
        The words, as written (case kept).
    """
    if lang == "en":
        sentence = _english_not(sentence)
    return TOKEN_PATTERN.findall(sentence)


def _mark_cutoffs(text: str, mark: str) -> str:
    """Put ``mark`` after each word cut off with a hyphen ("think- I think")."""
    if "-" not in text:
        return text

    def repl(m: re.Match[str]) -> str:
        i = m.start()
        glued = i > 0 and (m.string[i - 1].isalnum() or m.string[i - 1] == "_")
        return mark if glued else "-"

    return _CUTOFF.sub(repl, text)


def _english_not(text: str) -> str:
    """``don't`` → ``do not``, as spaCy's English tokenizer splits ``do`` + ``n't``."""
    if "n't" in text:
        text = text.replace("n't", " not")
    if "n’t" in text:
        text = text.replace("n’t", " not")
    if "N'T" in text:
        text = text.replace("N'T", " NOT")
    return text


@cache
def lookup_languages() -> tuple[str, ...]:
    """Language codes for which ``spacy-lookups-data`` ships a lookup lemma table."""
    from spacy.util import registry

    out = []
    for lang, tables in registry.lookups.get_all().items():
        if isinstance(tables, dict) and "lemma_lookup" in tables:
            out.append(lang)
    return tuple(sorted(out))


def load_lemma_table(lang: str) -> dict[str, str]:
    """spaCy's lookup lemma table for a language, as a plain dict (word as written → lemma).

    Parameters
    ----------
    lang : str
        spaCy language code.

    Returns
    -------
    dict of str to str

    Raises
    ------
    ConfigError
        When ``spacy-lookups-data`` ships no lookup table for the language.
    """
    from spacy.util import load_language_data, registry

    if lang not in lookup_languages():
        raise ConfigError(
            f"[prepare] lang = {lang!r}: spacy-lookups-data ships no lookup lemma table for it "
            f"(languages with one: {', '.join(lookup_languages())}); choose one of those, or set "
            "[prepare] pipeline to an installed spaCy pipeline for the language"
        )
    table = load_language_data(registry.lookups.get(lang)["lemma_lookup"])
    return {str(k): str(v) for k, v in table.items() if isinstance(v, str)}


def spacy_stop_words(lang: str) -> frozenset[str]:
    """spaCy's stop-word list for a language (``Language.Defaults.stop_words``).

    Raises
    ------
    ConfigError
        When spaCy does not know the language.
    """
    import spacy.util

    try:
        cls = spacy.util.get_lang_class(lang)
    except (ImportError, KeyError):
        raise ConfigError(f"[prepare] lang = {lang!r}: not a language code spaCy knows") from None
    return frozenset(w.lower() for w in cls.Defaults.stop_words)


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


class _Encoder(ABC):
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


class _Surface(NamedTuple):
    """What the fast path knows about one distinct piece of text."""

    kind: int
    code: int = 0  # token code where the word is not a name
    name_code: int = 0  # token code where it is a name
    value: int = 0  # its value in sentence keys
    soft: bool = False  # a filler: dropping it does not part its neighbours
    cap: bool = False  # written with a capital
    counted: int = -1  # index into the counted words, or -1
    renamed: int = -1  # index into the names whose lemma would differ, or -1


class FastLemmatizer(_Encoder):
    """The fast path: regular-expression words + spaCy's lookup lemma table.

    Parameters
    ----------
    table : dict of str to str
        spaCy's lookup lemma table (:func:`load_lemma_table`).
    token_filter : TokenFilter
        The filter step's rule.
    lang : str
        spaCy language code.
    min_words : int
        Sentences with fewer words get boilerplate key 0 (never boilerplate).
    case_fallback : bool
        Look a capitalised word up in lowercase when the table does not hold it as written
        (spaCy's lookup mode does not; see the module notes).
    names, exceptions, headwords
        The lemma checks (see :class:`_Encoder` and :mod:`talkthemes.prepare.headwords`).
    """

    def __init__(
        self,
        table: dict[str, str],
        token_filter: TokenFilter,
        lang: str,
        min_words: int = 3,
        *,
        case_fallback: bool = True,
        names: bool = False,
        exceptions: Mapping[str, str] | None = None,
        headwords: Headwords | None = None,
    ) -> None:
        super().__init__(
            token_filter, lang, min_words, names=names, exceptions=exceptions, headwords=headwords
        )
        self.table = table
        self.case_fallback = case_fallback
        # words whose counts the decisions need (and the exceptions, for the report)
        self.counted: list[str] = sorted(self.headwords.relevant | set(self.exceptions))
        self._counted = {w: i for i, w in enumerate(self.counted)}
        self.renamed: list[tuple[str, str]] = []
        # Every distinct piece of text seen (word, sentence end, transcript separator) gets
        # a surface id; the per-surface columns below say what it is, so that everything
        # after the look-up is done by numpy.
        self._sid: dict[str, int] = {}
        self._rows: list[_Surface] = []
        self._columns: list[NDArray[Any]] = [
            np.zeros(0, dtype=t)
            for t in (np.int8, np.int64, np.int64, np.uint64, bool, bool, np.int64, np.int64)
        ]

    def lemma(self, word: str) -> str:
        """The lemma of one word (lowercased) by the table alone: its entry as written, else
        for its lowercase form, else the lowercase word itself."""
        found = self.table.get(word)
        if found is None:
            low = word.lower()
            found = self.table.get(low, low) if self.case_fallback and low != word else word
        return found.lower()

    def _word(self, piece: str) -> _Surface:
        lower = piece.lower()
        if lower in self.exceptions:
            lemma = self.exceptions[lower]
            code = name_code = self._term(lemma, lower)
        else:
            lemma = self.lemma(piece)
            if self.headwords.contested.get(lower) == lemma:
                code = self._provisional(lower, lemma)
            else:
                code = self._term(lemma, lower)
            name_code = self._term(lower, lower) if self.names else code
        renamed = -1
        if self.names and lemma != lower and name_code >= 0 and capitalised(piece):
            renamed = len(self.renamed)
            self.renamed.append((lower, lemma))
        return _Surface(
            _KIND_WORD,
            code,
            name_code,
            word_value(piece),
            self.filter.is_filler(lemma, lower),
            self.names and capitalised(piece),
            self._counted.get(lower, -1),
            renamed,
        )

    def _new_surface(self, piece: str) -> int:
        sid = self._sid[piece] = len(self._rows)
        if piece == _DOC_SEP:
            row = _Surface(_KIND_DOC)
        elif piece == _CUT:
            row = _Surface(_KIND_CUT)
        elif piece == GAP:
            row = _Surface(_KIND_GAP)
        elif piece in _MARK_CHARS:
            row = _Surface(_KIND_MARK)
        else:
            row = self._word(piece)
        self._rows.append(row)
        return sid

    def _tables(self) -> list[NDArray[Any]]:
        """The per-surface columns (kind, code, name_code, value, soft, cap, counted,
        renamed) as arrays, extended with the surfaces seen since the last call."""
        have = self._columns[0].size
        if have < len(self._rows):
            new = list(zip(*self._rows[have:], strict=True))
            self._columns = [
                np.concatenate([col, np.asarray(vals, dtype=col.dtype)])
                for col, vals in zip(self._columns, new, strict=True)
            ]
        return self._columns

    def encode(self, texts: Sequence[str]) -> Encoded:
        """Encode texts (one per transcript) into token codes, sentence by sentence.

        The texts are joined with a separator and split by one regular-expression pass into
        words, sentence ends (see :func:`~talkthemes.prepare.boilerplate.split_sentences`)
        and separators; each piece is looked up once in the surface table, and codes,
        names, sentences and boilerplate keys follow with numpy.
        """
        if not texts:
            return _empty_encoded()
        big = _DOC_SEP.join(t.replace(_DOC_SEP, " ") if _DOC_SEP in t else t for t in texts)
        if self.lang == "en":
            big = _english_not(big)
        big = _mark_cutoffs(big, " " + _CUT)
        pieces = _PIECES.findall(big)
        sids = list(map(self._sid.get, pieces))
        if None in sids:
            sids = [
                s if s is not None else (self._sid[p] if p in self._sid else self._new_surface(p))
                for s, p in zip(sids, pieces, strict=True)
            ]
        arr = np.fromiter(sids, dtype=np.int64, count=len(sids))
        kind_of, code_of, name_code_of, value_of, soft_of, cap_of, counted_of, renamed_of = (
            self._tables()
        )
        kind = kind_of[arr]
        is_doc = kind == _KIND_DOC
        doc = np.cumsum(is_doc)
        sentence = np.cumsum(is_doc | (kind == _KIND_MARK))
        is_word = kind == _KIND_WORD
        cut = np.zeros(kind.size, dtype=bool)  # words followed by the cut-off mark
        cut[:-1] = is_word[:-1] & (kind[1:] == _KIND_CUT)
        at = np.flatnonzero(is_word)
        if at.size == 0:
            return _empty_encoded(len(texts))
        sent = sentence[at]
        first = np.ones(at.size, dtype=bool)
        first[1:] = sent[1:] != sent[:-1]
        starts = np.flatnonzero(first)
        lengths = np.diff(np.append(starts, at.size))
        word = arr[at]
        name = self._name_positions(cap_of[word], first, lengths)
        codes = np.where(name, name_code_of[word], code_of[word])
        cut_word = cut[at]
        codes[cut_word] = -NON_ALPHA
        # a piece breaks adjacency when it is a gap mark or a dropped word (not a filler)
        breaking = kind == _KIND_GAP
        breaking[at] = (codes < 0) & (~soft_of[word] | cut_word)
        return Encoded(
            codes=codes,
            lengths=lengths,
            keys=sentence_keys(value_of[word], lengths, self.min_words),
            n_sentences=np.bincount(doc[at[starts]], minlength=len(texts)),
            breaks=kept_breaks(np.cumsum(breaking)[at], codes >= 0, first),
            counts=_tally(counted_of[word][~name], self.counted),
            names=_tally(renamed_of[word][name], self.renamed),
        )

    def _name_positions(
        self, cap: NDArray[np.bool_], first: NDArray[np.bool_], lengths: NDArray[np.int64]
    ) -> NDArray[np.bool_]:
        """:func:`~talkthemes.prepare.headwords.name_flags` over every sentence at once."""
        if not self.names or not cap.any():
            return np.zeros(cap.size, dtype=bool)
        # the next word is capitalised and in the same sentence
        next_cap = np.zeros(cap.size, dtype=bool)
        next_cap[:-1] = cap[1:] & ~first[1:]
        sentence = np.cumsum(first) - 1
        caps = np.bincount(sentence, weights=cap, minlength=lengths.size)
        all_caps = (caps == lengths) & (lengths >= ALL_CAPS_MIN_WORDS)
        return cap & (~first | next_cap) & ~all_caps[sentence]


def _tally(index: NDArray[np.int64], keys: Sequence[Any]) -> dict[Any, int]:
    """Counts of ``keys[i]`` for every ``i >= 0`` in ``index``."""
    index = index[index >= 0]
    if index.size == 0:
        return {}
    found = np.bincount(index, minlength=len(keys))
    return {keys[i]: int(found[i]) for i in np.flatnonzero(found).tolist()}


def kept_breaks(
    seen: NDArray[np.integer], kept: NDArray[np.bool_], first: NDArray[np.bool_]
) -> NDArray[np.bool_]:
    """Which kept tokens do not directly follow the previous kept token of their sentence.

    Parameters
    ----------
    seen : ndarray of int, one per token
        Running count of the pieces that break adjacency, up to and including the token
        (a breaking token counts itself; a kept token never breaks).
    kept : ndarray of bool, one per token
    first : ndarray of bool, one per token
        True at the first token of each sentence.

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
    sentence = np.cumsum(first)[at]
    count = np.asarray(seen)[at]
    brk = np.ones(at.size, dtype=bool)
    brk[1:] = (sentence[1:] != sentence[:-1]) | (count[1:] != count[:-1])
    out[at] = brk
    return out


def _empty_encoded(n_texts: int = 0) -> Encoded:
    z = np.zeros(0, dtype=np.int64)
    return Encoded(z, z, z, np.zeros(n_texts, dtype=np.int64), np.zeros(0, dtype=bool))


class SpacyLemmatizer(_Encoder):
    """The spaCy pipeline path: a loaded pipeline's tokens, lemmas and parts of speech.

    Parameters
    ----------
    nlp : spacy.language.Language
        The loaded pipeline.
    token_filter : TokenFilter
    pos_keep : sequence of str
        Universal parts of speech kept; empty keeps every part of speech.
    batch_size, n_process : int
        Passed to ``nlp.pipe``.
    min_words : int
        As for :class:`FastLemmatizer`.
    name : str
        The pipeline's name, for messages.
    names, exceptions
        The lemma checks (see :class:`_Encoder`); the headword check is for the lookup
        table only (a pipeline tells parts of speech apart).
    """

    def __init__(
        self,
        nlp: Any,
        token_filter: TokenFilter,
        *,
        pos_keep: Sequence[str] = (),
        batch_size: int = 1000,
        n_process: int = 1,
        min_words: int = 3,
        name: str = "",
        names: bool = False,
        exceptions: Mapping[str, str] | None = None,
    ) -> None:
        super().__init__(token_filter, str(nlp.lang), min_words, names=names, exceptions=exceptions)
        self.nlp = nlp
        self.pos_keep = frozenset(pos_keep)
        self.batch_size = batch_size
        self.n_process = n_process
        self.name = name or str(nlp.meta.get("name", "pipeline"))
        self._pos_checked = not self.pos_keep

    @classmethod
    def load(
        cls,
        name: str,
        token_filter: TokenFilter,
        *,
        lang: str,
        pos_keep: Sequence[str] = (),
        batch_size: int = 1000,
        n_process: int = 1,
        min_words: int = 3,
        names: bool = False,
        exceptions: Mapping[str, str] | None = None,
    ) -> SpacyLemmatizer:
        """Load an installed spaCy pipeline (a package name or a folder) for the chain.

        Raises
        ------
        ConfigError
            When no such pipeline is installed, or it is for another language.
        """
        import spacy
        import spacy.util

        try:
            nlp = spacy.load(name, exclude=["parser", "ner"])
        except OSError:
            installed = sorted(spacy.util.get_installed_models())
            listed = ", ".join(installed) if installed else "none"
            raise ConfigError(
                f"[prepare] pipeline = {name!r}: no installed spaCy pipeline or pipeline folder "
                f"of that name (installed pipelines: {listed}). Install it with pip "
                '(no download happens here), or set pipeline = "" for the fast path'
            ) from None
        if nlp.lang != lang:
            raise ConfigError(
                f"[prepare] pipeline = {name!r} is for language {nlp.lang!r}, "
                f"but [prepare] lang = {lang!r}"
            )
        return cls(
            nlp,
            token_filter,
            pos_keep=pos_keep,
            batch_size=batch_size,
            n_process=n_process,
            min_words=min_words,
            name=name,
            names=names,
            exceptions=exceptions,
        )

    def encode(self, texts: Sequence[str]) -> Encoded:
        """Encode texts (as :meth:`FastLemmatizer.encode`) with the spaCy pipeline.

        Texts are split into sentences by the same rule as the fast path, and each sentence
        goes through ``nlp.pipe``. Lengths count spaCy's tokens (punctuation included,
        counted as not alphabetic); boilerplate keys use the fast path's words, so both
        paths find the same boilerplate sentences.
        """
        sentences: list[str] = []
        keys: list[int] = []
        n_sentences: list[int] = []
        for text in texts:
            before = len(sentences)
            for sentence in split_sentences(text):
                ws = words(sentence, self.lang)
                if ws:
                    sentences.append(sentence)
                    keys.append(self.key(ws))
            n_sentences.append(len(sentences) - before)
        codes: list[int] = []
        lengths: list[int] = []
        breaks: list[bool] = []
        docs = self.nlp.pipe(
            [s.replace(GAP, f" {GAP} ") if GAP in s else s for s in sentences],
            batch_size=self.batch_size,
            n_process=self.n_process,
        )
        pos_keep = self.pos_keep
        candidates = tagged = 0
        renamed: dict[tuple[str, str], int] = {}
        for doc in docs:
            n = 0
            gap = True  # the first kept token of a sentence starts a run
            spoken = [t for t in doc if not (t.is_space or t.is_punct or t.text == GAP)]
            named = {
                t.i for t, f in zip(spoken, name_flags([t.text for t in spoken]), strict=True) if f
            }
            for tok in doc:
                if tok.text == GAP:
                    gap = True
                    continue
                n += 1
                if tok.is_space or tok.is_punct:
                    # punctuation is not a word: it neither joins nor parts words
                    codes.append(-NON_ALPHA)
                    breaks.append(False)
                    continue
                lower = tok.lower_
                lemma = (tok.lemma_ or tok.text).lower()
                if lower in self.exceptions:
                    lemma = self.exceptions[lower]
                elif self.names and tok.i in named and lemma != lower:
                    key = (lower, lemma)
                    renamed[key] = renamed.get(key, 0) + 1
                    lemma = lower
                code = self._term(lemma, lower)
                if code >= 0 and pos_keep:
                    candidates += 1
                    tagged += bool(tok.pos_)
                    if tok.pos_ not in pos_keep:
                        code = -POS
                codes.append(code)
                breaks.append(gap and code >= 0)
                if code >= 0:
                    gap = False
                elif not self.filter.is_filler(lemma, lower):
                    gap = True
            lengths.append(n)
        if pos_keep and not self._pos_checked and candidates:
            if not tagged:
                raise ConfigError(
                    f"[prepare] pipeline = {self.name!r} assigns no part of speech, so the "
                    "part-of-speech filter would drop every token: use a pipeline with a tagger, "
                    "or set [prepare] pos_keep = [] to keep every part of speech"
                )
            self._pos_checked = True
        return Encoded(
            np.asarray(codes, dtype=np.int64),
            np.asarray(lengths, dtype=np.int64),
            np.asarray(keys, dtype=np.int64),
            np.asarray(n_sentences, dtype=np.int64),
            np.asarray(breaks, dtype=bool),
            {},
            renamed,
        )
