"""Words: how the chain splits text into sentences' words, the same way on every path.

Words are runs of letters, digits and underscores (``\\w+``); in English ``n't`` is first
rewritten to `` not`` so that ``don't`` gives ``do`` + ``not`` as spaCy's tokenizer does. The
fast path reads words, sentence ends and a few marks in one regular-expression pass
(:data:`PIECES`); :func:`words` is the same split for one sentence.
"""

from __future__ import annotations

import re

__all__ = [
    "CUT",
    "DOC_SEP",
    "GAP",
    "KIND_CUT",
    "KIND_DOC",
    "KIND_GAP",
    "KIND_MARK",
    "KIND_WORD",
    "MARK_CHARS",
    "PIECES",
    "TOKEN_PATTERN",
    "english_not",
    "mark_cutoffs",
    "words",
]

#: The fast path's word pattern.
TOKEN_PATTERN = re.compile(r"\w+")
#: Separates transcripts joined for one pass.
DOC_SEP = "\x00"
CUT = "\x01"  # follows a word cut off mid-way ("I think- I think")
#: Stands where words were removed before the lemma step (the scrub step puts it in place of
#: what it removes), so that the words on either side are not adjacent.
GAP = "\x02"
#: Words, sentence ends (. ! ? … and line breaks, the rule of
#: :func:`~talkthemes.prepare.boilerplate.split_sentences`) and the marks above, in one pass.
PIECES = re.compile(r"\w+|[.!?…\n\x00\x01\x02]")
MARK_CHARS = frozenset(".!?…\n")
#: What a piece of :data:`PIECES` is.
KIND_WORD, KIND_MARK, KIND_DOC, KIND_CUT, KIND_GAP = 0, 1, 2, 3, 4
_CUTOFF = re.compile(r"-(?=\s|$)")


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
        sentence = english_not(sentence)
    return TOKEN_PATTERN.findall(sentence)


def mark_cutoffs(text: str, mark: str) -> str:
    """Put ``mark`` after each word cut off with a hyphen ("think- I think")."""
    if "-" not in text:
        return text

    def repl(m: re.Match[str]) -> str:
        i = m.start()
        glued = i > 0 and (m.string[i - 1].isalnum() or m.string[i - 1] == "_")
        return mark if glued else "-"

    return _CUTOFF.sub(repl, text)


def english_not(text: str) -> str:
    """``don't`` → ``do not``, as spaCy's English tokenizer splits ``do`` + ``n't``."""
    if "n't" in text:
        text = text.replace("n't", " not")
    if "n’t" in text:
        text = text.replace("n’t", " not")
    if "N'T" in text:
        text = text.replace("N'T", " NOT")
    return text
