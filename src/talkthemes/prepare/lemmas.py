"""Step 4, lemmas: words to dictionary forms, with spaCy's resources.

Two paths, chosen by ``[prepare] pipeline``:

Fast path (``pipeline = ""``, the default; this module)
    A compiled regular expression splits the text into words (:mod:`.words`), and each word
    is looked up in spaCy's lookup lemma table from the ``spacy-lookups-data`` package
    (:mod:`.lexicon`), the same table spaCy's own ``Lemmatizer(mode="lookup")`` reads. Like
    spaCy, the word is looked up as written; a capitalised word the table does not hold (a
    sentence-initial "Refunds") is then looked up in lowercase, which spaCy's lookup mode
    does not do. The table is checked for headwords it maps to other words and for names
    (:mod:`.headwords`). The result of each distinct word is cached, so the cost per word
    is one dictionary look-up. Its output agrees with ``spacy.blank(lang)`` + the lookup
    lemmatizer on at least 99.5 % of the kept tokens
    (``tests/external/test_spacy_reference.py``) at many times spaCy's speed.

spaCy pipeline (``pipeline = "<installed pipeline name or folder>"``)
    :class:`~talkthemes.prepare.pipeline.SpacyLemmatizer`.

Both paths encode each token as one integer (:mod:`.encoding`).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import NDArray

from talkthemes.prepare.boilerplate import sentence_keys, word_value
from talkthemes.prepare.encoding import (
    Encoded,
    Encoder,
    PersonNames,
    empty_encoded,
    kept_breaks,
    tally,
)
from talkthemes.prepare.filter import NON_ALPHA, TokenFilter
from talkthemes.prepare.headwords import Headwords, capitalised
from talkthemes.prepare.names import NameLexicon, all_caps, rule_positions, title_case
from talkthemes.prepare.names_mark import NameColumns
from talkthemes.prepare.scan import PieceScanner
from talkthemes.prepare.words import (
    CUT,
    DOC_SEP,
    GAP,
    KIND_CUT,
    KIND_DOC,
    KIND_GAP,
    KIND_MARK,
    KIND_WORD,
    MARK_CHARS,
    english_not,
    mark_cutoffs,
)

__all__ = [
    "FastLemmatizer",
]


#: The pieces of :data:`~talkthemes.prepare.words.PIECES` that are one character on their own.
_MARKS = "".join(sorted(MARK_CHARS)) + DOC_SEP + CUT + GAP


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
    # for the names step (talkthemes.prepare.names), when it is on
    title: bool = False  # capitalised, not all in capitals
    upper: bool = False  # all in capitals
    low: int = -1  # id of the lower-cased word
    cls: int = 0  # cue class
    nameable: bool = False
    first: bool = False  # in the first-name list
    ordinary: bool = False  # an ordinary word of the language


class FastLemmatizer(Encoder):
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
        The lemma checks (see :class:`Encoder` and :mod:`talkthemes.prepare.headwords`).
    person_names : NameLexicon, optional
        The names step (:mod:`talkthemes.prepare.names`); off when omitted.
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
        person_names: NameLexicon | None = None,
    ) -> None:
        super().__init__(
            token_filter,
            lang,
            min_words,
            names=names,
            exceptions=exceptions,
            headwords=headwords,
            person_names=person_names,
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
        self._scanner = PieceScanner(_MARKS)
        self._rows: list[_Surface] = []
        self._columns: list[NDArray[Any]] = [
            np.zeros(0, dtype=t)
            for t in (
                *(np.int8, np.int64, np.int64, np.uint64, bool, bool, np.int64, np.int64),
                *(bool, bool, np.int64, np.int64, bool, bool, bool),
            )
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
            KIND_WORD,
            code,
            name_code,
            word_value(piece),
            self.filter.is_filler(lemma, lower),
            self.names and capitalised(piece),
            self._counted.get(lower, -1),
            renamed,
            *self._name_columns(piece, lower),
        )

    def _name_columns(
        self, piece: str, lower: str
    ) -> tuple[bool, bool, int, int, bool, bool, bool]:
        """The names step's per-surface columns (title, upper, low, cls, nameable, first,
        ordinary)."""
        lex = self.person_names
        if lex is None:
            return (False, False, -1, 0, False, False, False)
        return (
            title_case(piece),
            all_caps(piece),
            self.low_id(lower),
            lex.word_class(lower),
            lex.nameable(lower),
            lower in lex.first,
            lower in lex.ordinary,
        )

    def _surface_id(self, piece: str) -> int:
        sid = self._sid.get(piece)
        return self._new_surface(piece) if sid is None else sid

    def _new_surface(self, piece: str) -> int:
        sid = self._sid[piece] = len(self._rows)
        if piece == DOC_SEP:
            row = _Surface(KIND_DOC)
        elif piece == CUT:
            row = _Surface(KIND_CUT)
        elif piece == GAP:
            row = _Surface(KIND_GAP)
        elif piece in MARK_CHARS:
            row = _Surface(KIND_MARK)
        else:
            row = self._word(piece)
        self._rows.append(row)
        return sid

    def _tables(self) -> list[NDArray[Any]]:
        """The per-surface columns (the fields of ``_Surface``) as arrays, extended with the
        surfaces seen since the last call."""
        have = self._columns[0].size
        if have < len(self._rows):
            new = list(zip(*self._rows[have:], strict=True))
            self._columns = [
                np.concatenate([col, np.asarray(vals, dtype=col.dtype)])
                for col, vals in zip(self._columns, new, strict=True)
            ]
        return self._columns

    def encode(
        self, texts: Sequence[str], labels: Sequence[Iterable[str]] | None = None
    ) -> Encoded:
        """Encode texts (one per transcript) into token codes, sentence by sentence.

        The texts are joined with a separator and split by one regular-expression pass into
        words, sentence ends (see :func:`~talkthemes.prepare.boilerplate.split_sentences`)
        and separators; each piece is looked up once in the surface table, and codes,
        names, sentences and boilerplate keys follow with numpy. ``labels`` holds, per
        text, the names in its speaker labels (for the names step).
        """
        if not texts:
            return empty_encoded()
        big = DOC_SEP.join(t.replace(DOC_SEP, " ") if DOC_SEP in t else t for t in texts)
        if self.lang == "en":
            big = english_not(big)
        big = mark_cutoffs(big, " " + CUT)
        arr = self._scanner.ids(big, self._surface_id)
        columns = self._tables()
        kind_of, code_of, name_code_of, value_of, soft_of, cap_of, counted_of, renamed_of = columns[
            :8
        ]
        kind = kind_of[arr]
        is_doc = kind == KIND_DOC
        doc = np.cumsum(is_doc)
        sentence = np.cumsum(is_doc | (kind == KIND_MARK))
        is_word = kind == KIND_WORD
        cut = np.zeros(kind.size, dtype=bool)  # words followed by the cut-off mark
        cut[:-1] = is_word[:-1] & (kind[1:] == KIND_CUT)
        at = np.flatnonzero(is_word)
        if at.size == 0:
            return empty_encoded(len(texts))
        sent = sentence[at]
        first = np.ones(at.size, dtype=bool)
        first[1:] = sent[1:] != sent[:-1]
        starts = np.flatnonzero(first)
        lengths = np.diff(np.append(starts, at.size))
        word = arr[at]
        codes = code_of[word]
        named = self._names(cap_of, word, first, starts, lengths)
        if named.size:
            codes[named] = name_code_of[word[named]]
        cut_word = cut[at]
        codes[cut_word] = -NON_ALPHA
        person: PersonNames | None = None
        if self.person_names is not None:
            nl = self._sid.get("\n", -1)
            title_of = columns[8]
            if self.names:  # the names rule's positions, title-case ones
                flagged = named[title_of[word[named]]]
            else:
                flagged = rule_positions(title_of[word], first, starts, lengths)
            person = self.find_names(
                codes,
                word,
                NameColumns(*columns[8:]),
                flagged=flagged,
                sent=sent,
                line=np.cumsum(is_doc | (arr == nl))[at],
                doc=doc[at],
                n_docs=len(texts),
                labels=labels,
            )
        # a word breaks adjacency when it is dropped (and not a filler), and so does a gap
        # mark (rare: counted before each word by a binary search)
        seen = np.cumsum((codes < 0) & (~soft_of[word] | cut_word))
        gaps = np.flatnonzero(kind == KIND_GAP)
        if gaps.size:
            seen += np.searchsorted(gaps, at)
        return Encoded(
            codes=codes,
            lengths=lengths,
            keys=sentence_keys(value_of[word], lengths, self.min_words),
            n_sentences=np.bincount(doc[at[starts]], minlength=len(texts)),
            breaks=kept_breaks(seen, codes >= 0, sent),
            counts=self._counts(counted_of, word, named),
            names=tally(renamed_of[word[named]], self.renamed),
            person=person,
        )

    def _counts(
        self, counted_of: NDArray[np.int64], word: NDArray[np.int64], named: NDArray[np.int64]
    ) -> dict[str, int]:
        """Times each counted word was said outside names (per surface, then per word)."""
        if not self.counted:
            return {}
        per_surface = np.bincount(word, minlength=counted_of.size)
        if named.size:
            per_surface -= np.bincount(word[named], minlength=counted_of.size)
        return tally(counted_of, self.counted, per_surface)

    def _names(
        self,
        cap_of: NDArray[np.bool_],
        word: NDArray[np.int64],
        first: NDArray[np.bool_],
        starts: NDArray[np.int64],
        lengths: NDArray[np.int64],
    ) -> NDArray[np.int64]:
        """Positions of the names (:func:`~talkthemes.prepare.headwords.name_flags` over
        every sentence at once; only the capitalised words are looked at)."""
        cap = cap_of[word] if self.names else np.zeros(0, dtype=bool)
        return rule_positions(cap, first, starts, lengths)
