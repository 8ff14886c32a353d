"""Personal data masked wherever transcript text is shown: viewer, report and exports.

What is masked, by kind (each replaced by a placeholder such as "[name]"):

``email``, ``url``, ``iban``, ``national_id``, ``phone``, ``card``, ``number``, ``tag``
    Everything the preparation chain's scrub step removes
    (:func:`talkthemes.prepare.scrub.scrub`, reused as is: its verdict is recovered span
    by span), widened to the whole word it sits in, so "AC-48213" is masked whole and not
    left as "AC-".
``name``
    Person names: the words of the speaker labels that are not role words ("Dana" in
    "Dana (customer)"); a capitalised word after a cue that introduces or addresses a
    person ("my name's …", "this is … speaking", "thanks, …", "hi …"), set off by commas
    as someone spoken to (", Vikram."), or alone in a turn ("Dougie."), unless it is a
    stop word or a reply ("Sorry", "Okay"); a capitalised word in a first-name list,
    unless it is an everyday word (English stop words and the words of spaCy's lookup
    lemma table, both already used by the preparation chain); and a capitalised word
    right after a masked name (a surname). A name found once is masked everywhere in the
    same transcript. The first-name list is the union of the first names that the
    ``faker`` package (MIT licence) ships for its person providers, in every locale
    written in Latin script.
``address``
    A street address: a house number, up to three capitalised words and a street word
    ("12 Ferry Lane", "4B Old Mill Road"), with the town after it when it follows a comma
    or "in" ("…, Orrin Vale"); and UK-style postcodes ("AB1 2CD").

Masking is on by default; ``[view] original_text = true`` in a workspace's settings shows
the original text to those entitled to it. The text is masked with *placeholders* made of
two private-use characters (never a word, so the theme terms are never found inside one);
:func:`plain` and :func:`html_pieces` turn them into "[name]" text or styled HTML.

A last check guarantees the chain's verdict: if the chain's scrub still finds something in
the text left visible, every word holding a digit or an "@" is masked as well.
"""

from __future__ import annotations

import difflib
import functools
import re
from collections.abc import Collection, Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from talkthemes.prepare.lexicon import lemma_table_words, spacy_stop_words
from talkthemes.prepare.names_corpus import in_use_terms
from talkthemes.prepare.scrub import SCRUB_KINDS, scrub
from talkthemes.text.masked import KINDS, masked_as
from talkthemes.text.names import MONTHS_DAYS, REPLY_WORDS, ROLE_WORDS, first_names

__all__ = [
    "KINDS",
    "PLACEHOLDER",
    "Masker",
    "Span",
    "first_names",
    "html_pieces",
    "mask_text",
    "mask_value",
    "masked_as",
    "masker_for",
    "name_term",
    "plain",
    "prep_words",
]

# The kinds masked (in the order of PLACEHOLDER's table) and how each reads: KINDS,
# masked_as in talkthemes.text.masked.
_KIND_LIST = list(KINDS)
_MARK = "\ue000"  # a private-use character: never a letter, digit or punctuation of text
PLACEHOLDER = re.compile(_MARK + "([\ue001-\ue0ff])")
"""A masked span in masked text: the mark and one character naming the kind."""


def _placeholder(kind: str) -> str:
    return _MARK + chr(0xE001 + _KIND_LIST.index(kind))


def _kind_of(match: re.Match[str]) -> str:
    return _KIND_LIST[ord(match.group(1)) - 0xE001]


_STRAY = re.compile("[\ue000-\ue0ff]")  # half a placeholder left by cutting text short


def plain(masked: str) -> str:
    """Masked text with each placeholder written as "[name]", "[e-mail]"…"""
    return _STRAY.sub("", PLACEHOLDER.sub(lambda m: masked_as(_kind_of(m)), masked))


def html_pieces(masked: str) -> list[tuple[str, str | None]]:
    """Masked text cut into ``(text, kind)`` pieces: ``kind`` is None for plain text,
    else the kind of a placeholder (its text is then how the kind reads)."""
    out: list[tuple[str, str | None]] = []
    pos = 0
    for m in PLACEHOLDER.finditer(masked):
        if m.start() > pos:
            out.append((_STRAY.sub("", masked[pos : m.start()]), None))
        kind = _kind_of(m)
        out.append((KINDS[kind], kind))
        pos = m.end()
    if pos < len(masked) or not out:
        out.append((_STRAY.sub("", masked[pos:]), None))
    return out


# --------------------------------------------------------------------------- word lists
# The first-name list, role words, replies and month and day names live in
# talkthemes.text.names, the stop words and lemma-table words in talkthemes.prepare.lexicon:
# the preparation chain's names step reads the same lists.


@functools.cache
def stop_words() -> frozenset[str]:
    """spaCy's English stop words with month and day names: never a name, even after a
    cue ("it's Monday")."""
    return spacy_stop_words("en") | MONTHS_DAYS


@functools.cache
def everyday_words(lang: str = "en") -> frozenset[str]:
    """Lower-case everyday words: spaCy's stop words and its lookup lemma table's words,
    with month and day names. A capitalised everyday word is masked as a name only after
    a cue."""
    return stop_words() | lemma_table_words(lang)


# --------------------------------------------------------------------------- patterns

_NAME_WORD = r"[A-Z][a-zà-öø-ÿ][a-zà-öø-ÿ'’\-]*"
_CUES = re.compile(
    r"(?i:\b(?:my name(?:'s|’s| is)|name's|name is|this is|it's|it’s|it is|i'm|i’m|i am|"
    r"speaking to|speaking with|through to|thanks|thank you|cheers|hi|hello|hey|bye|"
    r"morning|afternoon|evening|dear|mr\.?|mrs\.?|ms\.?|miss|dr\.?)[,]?\s+)"
    r"(" + _NAME_WORD + r")"
)
_CAPITAL = re.compile(r"\b" + _NAME_WORD)
# A capitalised word spoken to someone, set off by commas: "Thanks for that, Vikram."
_VOCATIVE = re.compile(r"(?<=[,;]\s)(" + _NAME_WORD + r")(?=\s*[,.!?;]|\s*$)")
# A turn that is a name and nothing else ("Dougie."), as answers "can I take your name?"
_ALONE = re.compile(r"^\s*(" + _NAME_WORD + r")\s*[.!]?\s*$")
_STREET_WORDS = (
    "Road|Rd|Street|St|Lane|Ln|Way|Close|Avenue|Ave|Drive|Dr|Court|Ct|Crescent|Cres|Walk|"
    "Row|Yard|Terrace|Rise|Place|Pl|Grove|Gardens|Gdns|Hill|Square|Sq|Boulevard|Blvd|"
    "Parade|Mews|View|Green|Park|Mount|End|Gate|Wharf|Quay|Circle|Highway|Hwy|Vale|"
    "Meadow|Meadows|Drove|Croft|Chase|Parkway|Path|Trail|Alley|Plaza"
)
_ADDRESS = re.compile(
    r"\b\d{1,5}[A-Za-z]?,?\s+(?:[A-Z][A-Za-z'’\-]+\s+){0,3}(?:" + _STREET_WORDS + r")\b\.?"
    r"(?:(?:,\s*|\s+in\s+)[A-Z][A-Za-z'’\-]+(?:\s+[A-Z][A-Za-z'’\-]+)?)?"
)
_POSTCODE = re.compile(r"\b[A-Z]{1,2}\d[A-Z\d]?\s?\d[A-Z]{2}\b")
_CHUNK_EDGE = ".,;:!?)]}\"'’”"
_RISKY = re.compile(r"\S*[\d@]\S*")
_JOINER = re.compile(r"[\s()\-.+]*")


@dataclass(frozen=True)
class Span:
    """A masked stretch of text: ``text[start:end]`` is personal data of ``kind``."""

    start: int
    end: int
    kind: str


def _widen(text: str, start: int, end: int) -> tuple[int, int]:
    """Grow a span to the whole white-space-delimited word(s) it touches, without the
    punctuation that ends a sentence or clause."""
    while start > 0 and not text[start - 1].isspace():
        start -= 1
    while end < len(text) and not text[end].isspace():
        end += 1
    while (
        end > start
        and text[end - 1] in _CHUNK_EDGE
        and not (text[end - 1] == ")" and "(" in text[start:end])
    ):
        end -= 1
    while start < end and text[start] in "[{\"'‘“":
        start += 1
    return start, end


def _chain_spans(text: str, lang: str | None = None) -> list[Span]:
    """Where the chain's scrub removes something, recovered by aligning its output."""
    scrubbed, _ = scrub(text, lang=lang)
    if scrubbed == text:
        return []
    ranges: list[list[int]] = []
    matcher = difflib.SequenceMatcher(None, text, scrubbed, autojunk=False)
    for op, a0, a1, _b0, _b1 in matcher.get_opcodes():
        if op not in ("replace", "delete") or not text[a0:a1].strip():
            continue
        start, end = _widen(text, a0, a1)
        # pieces of one removal that the alignment split ("4111 1111 …", "(555) 010-…")
        if ranges and _JOINER.fullmatch(text[ranges[-1][1] : start]):
            ranges[-1][1] = max(ranges[-1][1], end)
        else:
            ranges.append([start, end])
    spans = []
    for start, end in ranges:
        counts: dict[str, int] = {}
        scrub(text[start:end], counts, lang=lang)
        kind = next((k for k in SCRUB_KINDS if counts.get(k)), "number")
        spans.append(Span(start, end, kind))
    return spans


def _merge(spans: Iterable[Span]) -> list[Span]:
    out: list[Span] = []
    for s in sorted(spans, key=lambda s: (s.start, -s.end)):
        if out and s.start <= out[-1].end:
            last = out[-1]
            if s.end > last.end:
                out[-1] = Span(last.start, s.end, last.kind)
        else:
            out.append(s)
    return out


class Masker:
    """Find and mask personal data in the turns of one transcript.

    Parameters
    ----------
    names : iterable of str
        Names known to belong to people in this transcript (from its speaker labels, or
        found in its other turns); matched as whole words, any case.
    lang : str
        Language of the text, for the everyday words (default English).
    cues : bool
        Read names from cues in the text (off for short values such as a metadata cell,
        where a lone capitalised word is a place or a queue, not someone answering "can
        I take your name?").
    """

    def __init__(self, names: Iterable[str] = (), *, lang: str = "en", cues: bool = True) -> None:
        self.cues = bool(cues)
        self.lang = lang
        self.everyday = everyday_words(lang)
        self.stop = stop_words()
        self.first = first_names()
        self.known: set[str] = set()
        for name in names:
            self.add_name(name)

    def add_name(self, label: str) -> None:
        """Learn the person-name words of a speaker label or a found name."""
        for word in re.findall(r"[^\W\d_][\w'’\-]*", str(label)):
            low = word.lower()
            if len(word) >= 2 and low not in ROLE_WORDS and low not in self.everyday:
                self.known.add(low)

    def _cued(self, text: str) -> list[re.Match[str]]:
        """Capitalised words a cue marks as a person's name (introduced or spoken to)."""
        if not self.cues:
            return []
        found = [*_CUES.finditer(text), *_VOCATIVE.finditer(text), *_ALONE.finditer(text)]
        return [m for m in found if self._cue_ok(m.group(1))]

    def _cue_ok(self, word: str) -> bool:
        low = word.lower()
        return low not in self.stop and low not in ROLE_WORDS and low not in REPLY_WORDS

    def learn(self, text: str) -> None:
        """Learn the names a cue marks in ``text`` (so later turns mask them too)."""
        for m in self._cued(text):
            self.known.add(m.group(1).lower())

    def _is_name(self, word: str) -> bool:
        low = word.lower()
        if low in self.known:
            return True
        return word in self.first and low not in self.everyday

    def spans(self, text: str) -> list[Span]:
        """Every stretch of ``text`` to mask, sorted and not overlapping."""
        spans = _chain_spans(text, self.lang)
        spans += [Span(m.start(), m.end(), "address") for m in _ADDRESS.finditer(text)]
        spans += [Span(m.start(), m.end(), "address") for m in _POSTCODE.finditer(text)]
        spans += [Span(m.start(1), m.end(1), "name") for m in self._cued(text)]
        names: list[Span] = []
        for m in _CAPITAL.finditer(text):
            if self._is_name(m.group()):
                names.append(Span(m.start(), m.end(), "name"))
        for m in re.finditer(r"\b[\w'’\-]+\b", text):
            if m.group().lower() in self.known and m.group()[:1].isalpha():
                names.append(Span(m.start(), m.end(), "name"))
        spans += names
        spans += self._surnames(text, names)
        return _merge(spans)

    def _surnames(self, text: str, names: Sequence[Span]) -> list[Span]:
        out = []
        for s in names:
            m = re.match(r"\s+(" + _NAME_WORD + r")", text[s.end :])
            if m and m.group(1).lower() not in self.everyday:
                out.append(Span(s.end + m.start(1), s.end + m.end(1), "name"))
        return out

    def mask(self, text: str) -> str:
        """``text`` with every span replaced by its placeholder (see :func:`plain`)."""
        out, pos = [], 0
        for s in self.spans(text):
            out.append(text[pos : s.start])
            out.append(_placeholder(s.kind))
            pos = s.end
        out.append(text[pos:])
        masked = "".join(out)
        return _last_check(masked, self.lang)


def _last_check(masked: str, lang: str | None = None) -> str:
    """Mask every word with a digit or "@" if the chain's scrub still finds anything."""
    visible = PLACEHOLDER.sub(" ", masked)
    counts: dict[str, int] = {}
    scrub(visible, counts, lang=lang)
    if not any(counts.get(k) for k in SCRUB_KINDS if k != "tag"):
        return masked
    return _RISKY.sub(lambda m: _placeholder("number"), masked)


def masker_for(turns: Iterable[object], *, lang: str = "en") -> Masker:
    """A :class:`Masker` that knows the names in a transcript's speaker labels and turns.

    ``turns`` are stored turns (anything with ``speaker`` and ``text``).
    """
    turns = list(turns)
    masker = Masker((str(getattr(t, "speaker", "") or "") for t in turns), lang=lang)
    for t in turns:
        masker.learn(str(getattr(t, "text", "") or ""))
    return masker


def name_term(term: str, *, words: Collection[str] = ()) -> bool:
    """Whether a vocabulary term (``priya``, ``priya_speaking``) holds a person's first name.

    A part of the term that, capitalised, is in :func:`first_names`, is not an everyday
    word and is not one of ``words``. Screens leave such terms out of theme names and word
    lists: a safety net for versions prepared without the chain's names step (made before
    it, or with ``[prepare] drop_names`` off), where names reach the vocabulary.

    Parameters
    ----------
    term : str
    words : collection of str
        Lower-case words the version's preparation decided are words, not names
        (:func:`prep_words`): the screens keep the chain's decision.
    """
    everyday = everyday_words()
    names = first_names()
    return any(
        p.capitalize() in names and p not in everyday and p not in words
        for p in str(term).lower().split("_")
        if p
    )


def prep_words(info: Mapping[str, Any]) -> frozenset[str]:
    """The first names a prep decided are words, from its ``prep.json`` (a published
    version keeps one): ``[prepare] not_names`` and the words its names step kept where the
    corpus uses them as words (:func:`talkthemes.prepare.names_corpus.in_use_terms`).
    Lower-case; empty for a prep that recorded neither."""
    settings = info.get("settings") or {}
    out = {str(w).strip().lower() for w in settings.get("not_names") or ()}
    for term in in_use_terms(info):
        out.update(p for p in term.lower().split("_") if p)
    return frozenset(out)


def mask_value(value: str) -> str:
    """A metadata value masked as "[name]" text: the chain's verdict, addresses and names
    from the first-name list, no cues (see :class:`Masker`)."""
    return plain(Masker(cues=False).mask(str(value)))


def mask_text(text: str, *, names: Iterable[str] = ()) -> str:
    """One text masked on its own (a metadata value, a stored excerpt), as "[name]" text."""
    masker = Masker(names)
    masker.learn(text)
    return plain(masker.mask(text))
