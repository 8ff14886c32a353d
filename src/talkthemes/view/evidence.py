"""The sentence of a call that best shows its theme, for the Calls list at a glance.

Until the version stores evidence sentences (picked at publish time), a call's best
sentence is scored here, on the fly, by the theme's term weights: a sentence's score is
the sum of the weights φ_kw of the distinct theme terms it contains (found as
:class:`~talkthemes.view.transcript.TermHighlighter` finds them, lemmas and phrases
included). The customer's sentences come first: an agent's sentence is picked only when
no customer sentence holds a theme term, and then counts half (the agent's script
repeats in every call). Sentences of fewer than four words are skipped; ties go
to the earlier sentence. Text is masked (:mod:`talkthemes.privacy`) before it is scored,
so no personal data can be picked.

:func:`best_sentences` is the one function the Calls section calls; swap its body for a
look-up of the stored evidence sentences when they exist.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

from talkthemes.privacy import masker_for, plain
from talkthemes.versions.load import Version
from talkthemes.view.themes import term_rows
from talkthemes.view.transcript import TermHighlighter, version_lemmas
from talkthemes.workspace import Workspace

__all__ = ["AGENT_WEIGHT", "EVIDENCE_TERMS", "best_sentence", "best_sentences", "sentences"]

#: How many of the theme's terms (by relevance) score a sentence.
EVIDENCE_TERMS = 30
#: An agent's sentence scores this fraction of a customer's with the same terms.
AGENT_WEIGHT = 0.5
_MIN_WORDS = 4
_MAX_CHARS = 220
_SENTENCE = re.compile(r"[^.!?…]+(?:[.!?…]+|$)")
_WORDS = re.compile(r"[^\W_]+")


def sentences(text: str) -> list[str]:
    """``text`` cut into sentences (at ``. ! ? …``), stripped, empty ones dropped."""
    return [s.strip() for s in _SENTENCE.findall(text) if s.strip()]


def best_sentence(
    turns: Iterable[tuple[str, str]],
    weights: Mapping[str, float],
    highlighter: TermHighlighter,
) -> str:
    """The sentence of a call that carries its theme most (see the module notes).

    Parameters
    ----------
    turns : iterable of (role, text)
        The call's turns, text already masked if it is to be shown.
    weights : mapping of str to float
        Theme term → weight (φ_kw).
    highlighter : TermHighlighter
        Finds the terms in the text (built on the same terms).

    Returns
    -------
    str
        The best sentence, cut to about 220 characters with "…"; "" when no sentence
        holds a theme term.
    """
    best, best_score = "", 0.0
    turns = list(turns)
    # the customer's sentences first: an agent's only when no customer sentence scores
    ordered = [t for t in turns if t[0] != "agent"] + [t for t in turns if t[0] == "agent"]
    for i, (role, text) in enumerate(ordered):
        if role == "agent" and best_score > 0 and (i == 0 or ordered[i - 1][0] != "agent"):
            break
        factor = AGENT_WEIGHT if role == "agent" else 1.0
        for sentence in sentences(text):
            if len(_WORDS.findall(sentence)) < _MIN_WORDS:
                continue
            found: set[str] = set()
            for start, end in highlighter.spans(sentence):
                piece = sentence[start:end]
                found.update(t for t in weights if _holds(highlighter, piece, t))
            score = factor * sum(weights[t] for t in found)
            if score > best_score:
                best, best_score = sentence, score
    if len(best) > _MAX_CHARS:
        cut = best.rfind(" ", 0, _MAX_CHARS)
        best = best[: cut if cut > 0 else _MAX_CHARS].rstrip(" ,;:") + " …"
    return best


def _holds(highlighter: TermHighlighter, piece: str, term: str) -> bool:
    """Whether a highlighted run of text is (or holds) ``term``."""
    keys = [highlighter.keys(w) for w in _WORDS.findall(piece)]
    parts = term.split("_")
    if len(parts) == 1:
        return any(term in k for k in keys)
    at = 0
    for part in parts:
        while at < len(keys) and part not in keys[at]:
            at += 1
        if at == len(keys):
            return False
        at += 1
    return True


def best_sentences(
    ws: Workspace,
    version: Version,
    transcript_ids: Sequence[str],
    positions: Sequence[int],
    *,
    lam: float = 0.6,
    masked: bool = True,
) -> list[str]:
    """Each call's best sentence for a theme (its lead theme, usually), masked by default.

    Parameters
    ----------
    ws : Workspace
    version : Version
    transcript_ids : sequence of str
    positions : sequence of int
        For each call, the row of the theme whose sentence to find.
    lam : float
        Relevance weight ranking the theme's terms.
    masked : bool
        Mask personal data before picking (pass False only where the workspace allows
        the original text).

    Returns
    -------
    list of str
        One sentence per call ("" when none holds a theme term or the call is gone).
    """
    lemmas = version_lemmas(version)
    per_theme: dict[int, tuple[dict[str, float], TermHighlighter]] = {}
    out: list[str] = []
    with ws.store() as store:
        for tid, pos in zip(transcript_ids, positions, strict=True):
            pos = int(pos)
            if pos not in per_theme:
                rows = term_rows(version, pos, n=EVIDENCE_TERMS, lam=lam)
                weights = dict(zip(rows["term"], rows["weight"].astype(float), strict=True))
                per_theme[pos] = (weights, TermHighlighter(weights, lemmas=lemmas))
            weights, highlighter = per_theme[pos]
            turns: list[Any] = store.get_turns(str(tid))
            if masked:  # placeholders are no words: they never score
                masker = masker_for(turns)
                texts = [(t.role, masker.mask(t.text)) for t in turns]
            else:
                texts = [(t.role, t.text) for t in turns]
            out.append(plain(best_sentence(texts, weights, highlighter)))
    return out
