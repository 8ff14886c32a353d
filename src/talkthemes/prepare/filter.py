"""Step 5, filter: which lemmas are kept, and why the others are dropped.

A token is kept when its lemma (lowercased) is alphabetic, at least ``min_token_length``
characters long, and neither the word as said nor its lemma is a stop word: spaCy's list
for the language, the shipped list of conversational fillers and back-channels
(``talkthemes/data/fillers_<lang>.txt``) and the user's ``extra_stop_words``. With a spaCy
pipeline configured, tokens whose part of speech is not in ``pos_keep`` are dropped too.

Every dropped token carries one reason code, so ``prepare --explain`` can count them. The
checks run in the order of the codes below; a token that is both a spaCy stop word and a
filler counts as a stop word.
"""

from __future__ import annotations

import hashlib
import logging
from collections.abc import Iterable
from dataclasses import dataclass
from importlib import resources

__all__ = [
    "FILLER",
    "KEEP",
    "LEMMATISED",
    "NAME",
    "NON_ALPHA",
    "POS",
    "REASONS",
    "SHORT",
    "STAT_COLUMNS",
    "STOP",
    "USER",
    "TokenFilter",
    "filler_languages",
    "load_fillers",
]

logger = logging.getLogger(__name__)

KEEP = 0
NON_ALPHA = 1
SHORT = 2
STOP = 3
FILLER = 4
USER = 5
POS = 6
#: Not a filter reason: a person's name, removed by the names step (:mod:`.names`).
NAME = 7

#: Reason code → the name shown by ``--explain`` (index = code).
REASONS: tuple[str, ...] = (
    "kept",
    "not alphabetic",
    "too short",
    "spaCy stop word",
    "filler or back-channel",
    "your stop word",
    "part of speech",
    "personal name",
)

#: Columns of the per-sentence step counts: words, then tokens dropped for each reason
#: above (codes 1-7), then kept tokens whose lemma differs from the word as said.
STAT_COLUMNS: tuple[str, ...] = ("words", *REASONS[1:], "lemmatised")
#: Index of the "lemmatised" column of :data:`STAT_COLUMNS`.
LEMMATISED = len(STAT_COLUMNS) - 1


def _parse_word_list(text: str) -> list[str]:
    words = []
    for line in text.splitlines():
        word = line.split("#", 1)[0].strip().lower()
        if word:
            words.append(word)
    return words


def filler_languages() -> list[str]:
    """Language codes for which a fillers list is shipped."""
    folder = resources.files("talkthemes").joinpath("data")
    names = [p.name for p in folder.iterdir() if p.name.startswith("fillers_")]
    return sorted(n.removeprefix("fillers_").removesuffix(".txt") for n in names)


def load_fillers(lang: str) -> frozenset[str]:
    """The shipped fillers and back-channels of a language (empty when none is shipped).

    Parameters
    ----------
    lang : str
        spaCy language code, e.g. ``"en"``.

    Returns
    -------
    frozenset of str
        Lowercase words from ``talkthemes/data/fillers_<lang>.txt``.
    """
    path = resources.files("talkthemes").joinpath("data", f"fillers_{lang}.txt")
    if not path.is_file():
        logger.info("no fillers list shipped for language %r", lang)
        return frozenset()
    return frozenset(_parse_word_list(path.read_text(encoding="utf-8")))


@dataclass(frozen=True)
class TokenFilter:
    """The filter step's rule, as data.

    Attributes
    ----------
    min_length : int
        Lemmas shorter than this are dropped.
    stop_words : frozenset of str
        spaCy's stop words for the language (lowercase).
    fillers : frozenset of str
        Conversational fillers (empty when ``[prepare] fillers = false``).
    user_stop_words : frozenset of str
        The user's ``extra_stop_words`` (lowercase).
    """

    min_length: int
    stop_words: frozenset[str]
    fillers: frozenset[str] = frozenset()
    user_stop_words: frozenset[str] = frozenset()

    @classmethod
    def build(
        cls,
        *,
        min_length: int,
        stop_words: Iterable[str],
        fillers: Iterable[str] = (),
        user_stop_words: Iterable[str] = (),
    ) -> TokenFilter:
        """Build a filter, lowercasing every list."""
        return cls(
            min_length=min_length,
            stop_words=frozenset(w.lower() for w in stop_words),
            fillers=frozenset(w.lower() for w in fillers),
            user_stop_words=frozenset(w.lower() for w in user_stop_words),
        )

    def reason(self, lemma: str, lower: str) -> int:
        """Why a token is dropped, or :data:`KEEP`.

        Parameters
        ----------
        lemma : str
            The token's lemma, lowercased.
        lower : str
            The token as said, lowercased.

        Returns
        -------
        int
            One of :data:`KEEP`, :data:`NON_ALPHA`, :data:`SHORT`, :data:`STOP`,
            :data:`FILLER`, :data:`USER`.
        """
        if not lemma.isalpha():
            return NON_ALPHA
        if len(lemma) < self.min_length:
            return SHORT
        if lower in self.stop_words or lemma in self.stop_words:
            return STOP
        if lower in self.fillers or lemma in self.fillers:
            return FILLER
        if lower in self.user_stop_words or lemma in self.user_stop_words:
            return USER
        return KEEP

    def is_filler(self, lemma: str, lower: str) -> bool:
        """Whether a token is a filler or back-channel (whatever reason drops it).

        Dropping a filler does not part the words around it (see
        :attr:`talkthemes.prepare.lemmas.Encoded.breaks`); a short filler ("um") is
        counted as too short, but is still a filler here.
        """
        return lower in self.fillers or lemma in self.fillers

    def fingerprint(self) -> str:
        """A short hash of the word lists (part of the prep hash)."""
        h = hashlib.sha256()
        for name, words in (
            ("stop", self.stop_words),
            ("fillers", self.fillers),
            ("user", self.user_stop_words),
        ):
            h.update(name.encode())
            for w in sorted(words):
                h.update(b"\0" + w.encode("utf-8"))
        h.update(str(self.min_length).encode())
        return h.hexdigest()[:16]
