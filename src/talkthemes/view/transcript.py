"""The data behind reading a transcript: terms highlighted, turns, HTML, excerpts.

Highlighting terms in the original text
---------------------------------------
Terms are lemmas after filtering (``bill``, ``pay``) and phrases joined by an underscore
(``direct_debit``), while a transcript holds what was said ("Bills", "paid",
"direct-debit"). :class:`TermHighlighter` matches on the original text without changing
it: it splits the text into words (runs of letters and digits, as the prepare step does)
and keeps every character in between, so the segments always join back to the original
text. A word matches a term when any of its *keys* equals the term (or a phrase part):

1. the word in lower case;
2. its lemma from the lookup table the prepare step used (spaCy's lookup lemmas, from
   :func:`lemma_table`, passed in as ``lemmas``), looked up as written and in lower case;
3. a small inflection tolerance for words of four letters or more (stems of at least
   three letters): the lower-case word
   without a plural or verb ending (``-s``, ``-es``, ``-ies``→``-y``, ``-ed``, ``-ing``,
   ``-ed``/``-ing``→``-e``, and a doubled final consonant before ``-ed``/``-ing``).

A single-word term highlights each matching word. A phrase highlights a run of words whose
keys match its parts in order, allowing up to ``max_gap`` other words between two parts
(stop words removed before phrases were joined, e.g. "pay *the* bill" for ``pay_bill``);
the whole run, gap words included, is highlighted; a run never crosses punctuation. Phrase
parts alone are not highlighted, so ``late_fee`` does not light up every "late".

Transcript text is untrusted: the HTML built here (:func:`segments_html`,
:func:`transcript_html`) is made only of :func:`talkthemes.text.html_text`-escaped pieces
and our own tags.
"""

from __future__ import annotations

import functools
import logging
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from talkthemes.errors import InputError, TalkthemesError
from talkthemes.prepare.lexicon import load_lemma_table
from talkthemes.privacy import html_pieces, masker_for, plain
from talkthemes.text import html_text
from talkthemes.versions.load import Version
from talkthemes.workspace import Workspace

__all__ = [
    "ROLE_NAMES",
    "Segment",
    "TermHighlighter",
    "TurnView",
    "excerpt",
    "lemma_table",
    "load_transcript",
    "original_allowed",
    "role_name",
    "segments_html",
    "segments_text",
    "transcript_html",
    "turn_views",
    "version_lang",
    "version_lemmas",
]

log = logging.getLogger(__name__)

Segment = tuple[str, bool]
"""A piece of original text and whether it is highlighted."""

#: How each role is written on every screen, whatever the transcript's own speaker labels
#: were ("AGENT", "agent 2", a person's name): one spelling, and no name on screen.
ROLE_NAMES: dict[str, str] = {"agent": "Agent", "customer": "Customer", "unknown": "Speaker"}


def role_name(role: str) -> str:
    """The name a turn's speaker is shown by: its role (``"Agent"``, ``"Customer"``)."""
    return ROLE_NAMES.get(str(role).strip().lower(), ROLE_NAMES["unknown"])


# --------------------------------------------------------------------------- lemmas


def version_lang(version: Version) -> str:
    """The language a version's transcripts were prepared in (``"en"`` when not recorded)."""
    return str((version.info.get("prepare_settings") or {}).get("lang") or "en")


def lemma_table(lang: str) -> dict[str, str]:
    """The lookup lemma table the prepare step uses for ``lang`` (word as written → lemma).

    This is the one place the viewer and the report ask the prepare step for its lemmas
    (spaCy's lookup table, :func:`talkthemes.prepare.lemmas.load_lemma_table`). The table
    is read once per process and shared; do not change it.

    Returns
    -------
    dict of str to str
        Empty when no lookup table ships for ``lang``: terms are then matched on the
        words as written and their simple inflections only.
    """
    try:
        return _lemma_table(lang)
    except TalkthemesError as exc:
        log.info("highlighting without lemmas for %s: %s", lang, exc)
        return {}


@functools.cache
def _lemma_table(lang: str) -> dict[str, str]:
    return load_lemma_table(lang)


def version_lemmas(version: Version) -> dict[str, str]:
    """:func:`lemma_table` for the language ``version`` was prepared in."""
    return lemma_table(version_lang(version))


# --------------------------------------------------------------------------- highlighting

_WORD = re.compile(r"[^\W_]+")  # letters and digits; "_" and punctuation separate words
_VOWELS = frozenset("aeiouy")
_BREAK = re.compile(r"[,.;:!?…()\[\]\n]")


def _inflection_keys(word: str) -> set[str]:
    """Possible base forms of a lower-case word (a simple, documented tolerance)."""
    keys = {word}
    if len(word) < 4:
        return keys
    if word.endswith("ies"):
        keys.add(word[:-3] + "y")
    if word.endswith("es"):
        keys.add(word[:-2])
    if word.endswith("s") and not word.endswith("ss"):
        keys.add(word[:-1])
    for suffix in ("ed", "ing"):
        if word.endswith(suffix) and len(word) - len(suffix) >= 3:
            stem = word[: -len(suffix)]
            keys.update({stem, stem + "e"})
            if len(stem) >= 3 and stem[-1] == stem[-2] and stem[-1] not in _VOWELS:
                keys.add(stem[:-1])  # stopped → stop, planning → plan
    return keys


class TermHighlighter:
    """Find a theme's terms in original transcript text (see the module notes).

    Parameters
    ----------
    terms : iterable of str
        Vocabulary terms: lemmas, and phrases joined by ``_``.
    lemmas : mapping of str to str, optional
        Lookup lemma table (word as written → lemma), e.g. :func:`version_lemmas`.
    max_gap : int
        Most other words allowed between two parts of a phrase.
    """

    def __init__(
        self,
        terms: Iterable[str],
        *,
        lemmas: Mapping[str, str] | None = None,
        max_gap: int = 2,
    ) -> None:
        self.terms = [t for t in (str(t).strip().lower() for t in terms) if t]
        self.lemmas = lemmas or {}
        self.max_gap = int(max_gap)
        self.unigrams = {t for t in self.terms if "_" not in t}
        self.phrases = [tuple(p for p in t.split("_") if p) for t in self.terms if "_" in t]
        self.phrases = [p for p in self.phrases if p]
        self._vocab = self.unigrams | {p for ph in self.phrases for p in ph}
        self._cache: dict[str, frozenset[str]] = {}

    def keys(self, word: str) -> frozenset[str]:
        """The forms of ``word`` compared with terms (only those that are term parts)."""
        hit = self._cache.get(word)
        if hit is not None:
            return hit
        lower = word.lower()
        keys = _inflection_keys(lower)
        for form in (word, lower):
            lemma = self.lemmas.get(form)
            if lemma:
                keys.add(lemma.lower())
        hit = frozenset(keys & self._vocab)
        self._cache[word] = hit
        return hit

    def spans(self, text: str) -> list[tuple[int, int]]:
        """Character spans ``[start, end)`` of highlighted runs, sorted, not overlapping."""
        words = [(m.start(), m.end(), m.group()) for m in _WORD.finditer(text)]
        keys = [self.keys(w) for _, _, w in words]
        marked: list[tuple[int, int]] = []
        for i, k in enumerate(keys):
            if k & self.unigrams:
                marked.append((words[i][0], words[i][1]))
        for phrase in self.phrases:
            i = 0
            while i < len(words):
                end = self._match_phrase(text, words, keys, i, phrase)
                if end is None:
                    i += 1
                    continue
                marked.append((words[i][0], words[end][1]))
                i = end + 1
        return _merge_spans(marked)

    def _match_phrase(
        self,
        text: str,
        words: list[tuple[int, int, str]],
        keys: list[frozenset[str]],
        i: int,
        phrase: tuple[str, ...],
    ) -> int | None:
        """Index of the last word of ``phrase`` starting at word ``i``, or None."""
        if phrase[0] not in keys[i]:
            return None
        at = i
        for part in phrase[1:]:
            nxt = None
            for j in range(at + 1, min(len(keys), at + 2 + self.max_gap)):
                if _BREAK.search(text, words[at][1], words[j][0]):
                    break  # a phrase does not run across punctuation
                if part in keys[j]:
                    nxt = j
                    break
            if nxt is None:
                return None
            at = nxt
        return at

    def segments(self, text: str) -> list[Segment]:
        """``text`` cut into (piece, highlighted) pairs that join back to ``text``."""
        out: list[Segment] = []
        pos = 0
        for start, end in self.spans(text):
            if start > pos:
                out.append((text[pos:start], False))
            out.append((text[start:end], True))
            pos = end
        if pos < len(text) or not out:
            out.append((text[pos:], False))
        return out

    def count(self, text: str) -> int:
        """Number of highlighted runs in ``text``."""
        return len(self.spans(text))


def _merge_spans(spans: list[tuple[int, int]]) -> list[tuple[int, int]]:
    merged: list[tuple[int, int]] = []
    for start, end in sorted(spans):
        if merged and start <= merged[-1][1]:
            merged[-1] = (merged[-1][0], max(end, merged[-1][1]))
        else:
            merged.append((start, end))
    return merged


@dataclass(frozen=True)
class TurnView:
    """One turn ready to show: who spoke, when, and the text cut into segments."""

    seq: int
    speaker: str
    role: str
    start: float | None
    segments: list[Segment]

    @property
    def hits(self) -> int:
        """Highlighted runs in the turn."""
        return sum(1 for _, h in self.segments if h)


def turn_views(
    turns: Iterable[Any], highlighter: TermHighlighter, *, masked: bool = True
) -> list[TurnView]:
    """Cut stored turns (:class:`talkthemes.store.StoredTurn`) into highlighted segments.

    With ``masked`` (the default) personal data is masked first
    (:func:`talkthemes.privacy.masker_for`, which learns the names in the speaker labels
    and turns of the transcript): the segments then hold placeholders, which
    :func:`segments_html` and :func:`segments_text` show as "[name]", "[e-mail]"…
    """
    turns = list(turns)
    masker = masker_for(turns) if masked else None
    return [
        TurnView(
            int(t.seq),
            str(t.speaker),
            str(t.role),
            t.start,
            highlighter.segments(masker.mask(t.text) if masker is not None else t.text),
        )
        for t in turns
    ]


def original_allowed(ws: Workspace) -> bool:
    """Whether the workspace allows the original text (``[view] original_text``)."""
    return bool(ws.settings().view.original_text)


def load_transcript(
    ws: Workspace, tid: str, highlighter: TermHighlighter, *, masked: bool | None = None
) -> list[TurnView]:
    """A stored transcript's turns with the highlighter's terms marked.

    Personal data is masked unless ``masked`` is False or, when it is None (the
    default), the workspace allows the original text (:func:`original_allowed`).

    Raises
    ------
    InputError
        When no transcript has this id.
    """
    with ws.store() as store:
        turns = store.get_turns(tid)
    if not turns:
        raise InputError(f"there is no transcript {tid!r} in the workspace")
    if masked is None:
        masked = not original_allowed(ws)
    return turn_views(turns, highlighter, masked=masked)


def _piece_html(text: str) -> str:
    return "".join(
        html_text(piece)
        if kind is None
        else f'<span class="tt-masked" title="masked: {html_text(piece)}" '
        f'style="{_MASKED_STYLE}">{html_text(piece)}</span>'
        for piece, kind in html_pieces(text)
    )


_MASKED_STYLE = "background:#ececec;color:#4a4a4a;border-radius:3px;padding:0 3px;font-size:0.85em"


def segments_html(segments: Iterable[Segment], *, mark_class: str = "tt-hit") -> str:
    """HTML for segments, built only from :func:`talkthemes.text.html_text`-escaped pieces.

    Highlighted pieces are wrapped in ``<mark class="...">``; masked personal data shows
    as a grey "name", "e-mail"… tag; nothing of the text is ever interpreted as markup.
    """
    cls = html_text(mark_class)
    return "".join(
        f'<mark class="{cls}">{_piece_html(text)}</mark>' if hit else _piece_html(text)
        for text, hit in segments
    )


def segments_text(segments: Iterable[Segment]) -> str:
    """Segments as plain text, masked data written as "[name]", "[e-mail]"…"""
    return plain("".join(text for text, _ in segments))


def _clock(seconds: float | None) -> str:
    if seconds is None or not np.isfinite(seconds):
        return ""
    s = int(seconds)
    return (
        f"{s // 3600:d}:{s % 3600 // 60:02d}:{s % 60:02d}"
        if s >= 3600
        else f"{s // 60}:{s % 60:02d}"
    )


# Okabe–Ito blue and vermillion, as in the charts, and the soft ink for an unknown role.
_ROLE_COLOURS = {"agent": "#0072B2", "customer": "#D55E00", "unknown": "#6b6b6b"}


def transcript_html(turns: Sequence[TurnView]) -> str:
    """A transcript as HTML: one block per turn with speaker, time and text.

    Every piece of transcript text and every speaker label is escaped; the only markup
    is ours (``div``, ``span``, ``mark`` with inline styles).
    """
    parts = ['<div class="tt-transcript" style="line-height:1.55;font-size:0.95rem">']
    for t in turns:
        colour = _ROLE_COLOURS.get(t.role, _ROLE_COLOURS["unknown"])
        when = _clock(t.start)
        parts.append(
            '<div class="tt-turn" style="margin:0 0 0.6rem 0">'
            f'<span class="tt-speaker" style="font-weight:600;color:{colour}">'
            f"{html_text(role_name(t.role))}</span>"
            + (
                f' <span style="color:#6b6b6b;font-size:0.8rem">{html_text(when)}</span>'
                if when
                else ""
            )
            + f'<div class="tt-text">{segments_html(t.segments)}</div></div>'
        )
    parts.append("</div>")
    return "".join(parts)


def excerpt(turns: Sequence[TurnView], *, max_chars: int = 280) -> tuple[str, list[Segment]]:
    """The turn with the most highlighted terms, trimmed around its first highlight.

    Returns
    -------
    speaker : str
        The turn's role name (:func:`role_name`).
    segments : list of Segment
        At most about ``max_chars`` characters, with "…" where text was cut.
    """
    if not turns:
        return "", []
    best = max(turns, key=lambda t: (t.hits, -t.seq))
    text = "".join(s for s, _ in best.segments)
    if len(text) <= max_chars:
        return role_name(best.role), list(best.segments)
    first = 0
    pos = 0
    for s, hit in best.segments:
        if hit:
            first = pos
            break
        pos += len(s)
    start = max(0, first - max_chars // 4)
    if start > 0:
        space = text.rfind(" ", 0, start)
        start = space + 1 if space >= 0 else start
    end = min(len(text), start + max_chars)
    if end < len(text):
        space = text.rfind(" ", start, end)
        end = space if space > start else end
    out: list[Segment] = [("… ", False)] if start > 0 else []
    pos = 0
    for s, hit in best.segments:
        a, b = max(pos, start), min(pos + len(s), end)
        if a < b:
            out.append((s[a - pos : b - pos], hit))
        pos += len(s)
    if end < len(text):
        out.append((" …", False))
    return role_name(best.role), out
