"""Step 2b, names: keep people's names out of the vocabulary (``[prepare] drop_names``).

Agents introduce themselves, callers give their names, both address each other; without this
step those names become terms (``priya``, ``power_dmitri``) and even themes. The step runs
with the lemmas, on the token stream of each batch (:func:`mark_names`, vectorised like the
rest of the fast path), and finishes in the corpus phase (:mod:`.names_corpus`), before
headwords, boilerplate and phrases. A removed name leaves a gap: the words on either side are
not adjacent for the phrases step.

Where names come from
    * **Speaker labels** of the transcript: the words of ``Agent (Priya)``, ``Priya:``,
      ``Dana (customer)`` that are not role words (``agent``, ``caller`` …), stop words or
      ordinary words (an ordinary word counts when it is also in the first-name list:
      ``Agent Grace``) — :func:`label_names`.
    * **Cues** in the text: a word introduced by "my name is / my name's …", "… speaking",
      "this is … speaking", "you're through to …", "speaking with …"; a word after "it's",
      "this is", "I'm"; a word addressed after "thanks", "thank you", "hi", "hello", "bye",
      "sorry" …; and the answer to a name question ("can I take your name?" → "Um, Dana.").
    * **The first-name list** (:func:`talkthemes.text.names.first_names`, from the ``faker``
      package) for names that no label or cue gives away.

What is ordinary
    A word is *ordinary* when the lexicon of the language holds it: spaCy's stop words, the
    words of its lookup lemma table (both sides), the verbs, adjectives and adverbs of its
    lemma index, the shipped fillers, and (English) month and day names. ``bill``, ``will``,
    ``grace``, ``mark``, ``june`` are ordinary; ``priya`` is not.

The rule, token by token (a *cased* transcript has some word written with a capital; text
from speech recognisers is often all lower case)
    1. A word at a cue is removed (strong cues accept a capitalised word, a first name or a
       word that is not ordinary; "it's …" and greetings need more evidence, see
       :func:`mark_names`), and so is a capitalised surname right after it.
    2. A name of the transcript (from its labels or cues) is removed where it is written
       with a capital; written otherwise it is *suspect*.
    3. A first name that is not ordinary is suspect where it is written with a capital or
       the transcript is not cased; in lower case in a cased transcript it is used as a
       word and counts as such.
    4. Any other capitalised word that does not start a sentence (the names rule of the
       lemma step) is *capitalised*: removed when the corpus knows it as a name — given by
       a label or a cue in at least :data:`MIN_NAMED_TRANSCRIPTS` transcripts.
    5. The corpus decides the suspects: a suspect is kept only where the corpus uses the
       word as a word, in at least ``vocab_min_docs`` transcripts outside rules 1–3.
    ``[prepare] not_names`` lists words never taken for names.

So in all-lower-case text only label names, cue names and first names that are not ordinary
words are removed, and an ordinary word survives in lower-case use unless it is a name of
that very transcript and the corpus never uses it as a word.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from functools import cache

import numpy as np
from numpy.typing import NDArray

from talkthemes.prepare.headwords import ALL_CAPS_MIN_WORDS, NOUNS_CAPITALISED, lemma_index_by_pos
from talkthemes.prepare.lexicon import lemma_table_words, spacy_stop_words
from talkthemes.prepare.names_mark import CAPITAL, CLASSES, CUE, KNOWN, SUSPECT
from talkthemes.text.names import MONTHS_DAYS, REPLY_WORDS, ROLE_WORDS, first_names

__all__ = [
    "CAPITAL",
    "CUE",
    "KNOWN",
    "MIN_NAMED_TRANSCRIPTS",
    "NAME_MARK",
    "SUSPECT",
    "NameLexicon",
    "all_caps",
    "label_names",
    "name_type",
    "parse_name_type",
    "rule_positions",
    "title_case",
]

#: A word must be given as a name (by a label or a cue) in at least this many transcripts
#: before its capitalised uses elsewhere are removed (rule 4).
MIN_NAMED_TRANSCRIPTS = 2

#: Starts the term of a suspect or capitalised token: ``NAME_MARK + kind + word + NAME_MARK
#: + term`` (kind ``s`` or ``c``); the corpus phase resolves it to ``term`` or drops it.
NAME_MARK = "\x1e"

_LABEL_WORD = re.compile(r"[^\W\d_]+")


@dataclass(frozen=True)
class NameLexicon:
    """The word lists the step decides with.

    Attributes
    ----------
    first : frozenset of str
        First names, lower-cased (:func:`~talkthemes.text.names.first_names`).
    ordinary : frozenset of str
        The ordinary words of the language (see the module notes), lower-cased.
    never : frozenset of str
        Words never taken for names: stop words, fillers, role words, replies, month and
        day names, and ``[prepare] not_names``.
    capitals : bool
        Whether a capital tells a name (not in languages that capitalise every noun).
    """

    first: frozenset[str]
    ordinary: frozenset[str]
    never: frozenset[str]
    capitals: bool = True
    classes: dict[str, int] = field(default_factory=lambda: dict(CLASSES), repr=False)

    @classmethod
    def build(
        cls, lang: str, *, fillers: Iterable[str] = (), not_names: Iterable[str] = ()
    ) -> NameLexicon:
        """The lexicon of a language (see the module notes).

        Parameters
        ----------
        lang : str
            spaCy language code.
        fillers : iterable of str
            The chain's fillers list (ordinary words, never names).
        not_names : iterable of str
            ``[prepare] not_names``.
        """
        stop = spacy_stop_words(lang)
        fill = frozenset(w.lower() for w in fillers)
        ordinary = set(stop) | fill | lemma_table_words(lang)
        by_pos = lemma_index_by_pos(lang)
        for pos in ("verb", "adj", "adv"):
            ordinary |= by_pos.get(pos, frozenset())
        if lang == "en":
            ordinary |= MONTHS_DAYS
        never = (
            stop
            | fill
            | ROLE_WORDS
            | REPLY_WORDS
            | (MONTHS_DAYS if lang == "en" else frozenset())
            | frozenset(w.strip().lower() for w in not_names)
        )
        return cls(
            first=_first_lower(),
            ordinary=frozenset(ordinary),
            never=frozenset(never),
            capitals=lang not in NOUNS_CAPITALISED,
        )

    def nameable(self, lower: str) -> bool:
        """Whether a word (lower-cased) can be a name at all."""
        return len(lower) >= 2 and lower.isalpha() and lower not in self.never

    def word_class(self, lower: str) -> int:
        """The cue class of a word (0: none)."""
        return self.classes.get(lower, 0)


@cache
def _first_lower() -> frozenset[str]:
    return frozenset(n.lower() for n in first_names())


def title_case(word: str) -> bool:
    """Whether a word is written with a capital and not all in capitals (``Priya``, not
    ``PRIYA`` nor the pronoun ``I``)."""
    return word[:1].isupper() and not word.isupper()


def all_caps(word: str) -> bool:
    """Whether a word of two letters or more is written all in capitals (``AC``)."""
    return len(word) > 1 and word.isupper()


def rule_positions(
    cap: NDArray[np.bool_],
    first: NDArray[np.bool_],
    starts: NDArray[np.int64],
    lengths: NDArray[np.int64],
) -> NDArray[np.int64]:
    """Positions of the capitalised words the names rule of the lemma step takes for names
    (:func:`~talkthemes.prepare.headwords.name_flags` over every sentence at once).

    Parameters
    ----------
    cap : ndarray of bool, one per word
        Capitalised words.
    first : ndarray of bool
        First words of their sentences.
    starts, lengths : ndarray of int64
        Position of each sentence's first word, and its number of words.
    """
    at = np.flatnonzero(cap)
    if at.size == 0:
        return at
    sentence = np.searchsorted(starts, at, side="right") - 1
    all_caps = (np.bincount(sentence, minlength=lengths.size) == lengths) & (
        lengths >= ALL_CAPS_MIN_WORDS
    )
    # a sentence's first word is a name only when the next word is a capitalised one
    after = np.minimum(at + 1, cap.size - 1)
    next_cap = (at + 1 < cap.size) & cap[after] & ~first[after]
    return at[(~first[at] | next_cap) & ~all_caps[sentence]]


def label_names(label: str, lexicon: NameLexicon) -> frozenset[str]:
    """The names (lower-cased) in a speaker label: ``"Agent (Priya)"`` → ``{"priya"}``.

    A word of the label is a name when it can be one (:meth:`NameLexicon.nameable`: not a
    role word, stop word or reply) and is not an ordinary word, or is one that is also a
    first name (``Agent Grace``; but not ``Customer Service``).
    """
    out = set()
    for word in _LABEL_WORD.findall(label):
        low = word.lower()
        if lexicon.nameable(low) and (low not in lexicon.ordinary or low in lexicon.first):
            out.add(low)
    return frozenset(out)


def name_type(kind: str, word: str, term: str) -> str:
    """The term string of a suspect (``kind = "s"``) or capitalised (``"c"``) token."""
    return f"{NAME_MARK}{kind}{word}{NAME_MARK}{term}"


def parse_name_type(t: str) -> tuple[str, str, str] | None:
    """``(kind, word, term)`` of a term made by :func:`name_type`, else None."""
    if not t.startswith(NAME_MARK):
        return None
    head, _, term = t[1:].partition(NAME_MARK)
    return head[:1], head[1:], term
