"""Step 2b, names, per batch: which tokens are names (rules 1–4 of :mod:`.names`).

:func:`mark_names` works on a batch's token stream with numpy. Every rule needs a word that
could be a name (not a stop word, filler, role word or reply; and a first name, a word the
lexicon does not know, or a capitalised word), so only those positions are looked at; the
words around them are read by index. The cue words are given as small integer classes
(:data:`CLASSES`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from itertools import chain

import numpy as np
from numpy.typing import NDArray

__all__ = [
    "CAPITAL",
    "CLASSES",
    "CUE",
    "KNOWN",
    "NONE",
    "SUSPECT",
    "NameColumns",
    "NameMarks",
    "mark_names",
]

#: What :func:`mark_names` does with a token: nothing; removed at a cue; a name of the
#: transcript, capitalised: removed; suspect; capitalised (both decided by the corpus).
NONE, CUE, KNOWN, SUSPECT, CAPITAL = 0, 1, 2, 3, 4

(
    _MY,
    _NAME,
    _IS,
    _S,
    _THE,
    _THIS,
    _IT,
    _I,
    _M,
    _AM,
    _YOU,
    _RE,
    _ARE,
    _THROUGH,
    _TO,
    _WITH,
    _SPEAKING,
    _AFTER,  # here, from: "it's Dana here"
    _GREET,  # thanks, cheers, hi, hello …
    _THANK,
    _YOUR,
    _WHO,
    _CALLING,
    _SKIP,  # words an answer to "your name?" may start with: um, yeah, oh …
) = range(1, 25)

#: Words that introduce, address or ask for a name → their class (lower-case, as the word
#: pattern splits them: "name's" is "name" + "s", "you're" is "you" + "re"; spaCy keeps
#: the apostrophe: "'s").
CLASSES: dict[str, int] = {}
for _words, _class in (
    ("my", _MY),
    ("name", _NAME),
    ("is", _IS),
    ("s 's ’s", _S),
    ("the", _THE),
    ("this", _THIS),
    ("it", _IT),
    ("i", _I),
    ("m 'm ’m", _M),
    ("am", _AM),
    ("you", _YOU),
    ("re 're ’re", _RE),
    ("are", _ARE),
    ("through", _THROUGH),
    ("to", _TO),
    ("with", _WITH),
    ("speaking", _SPEAKING),
    ("here from", _AFTER),
    ("thanks cheers hi hello hey bye goodbye morning afternoon evening sorry dear", _GREET),
    ("thank", _THANK),
    ("your", _YOUR),
    ("who", _WHO),
    ("calling", _CALLING),
    ("um uh erm er oh yeah yes yep so well right okay ok", _SKIP),
):
    for _w in _words.split():
        CLASSES[_w] = _class
# words an answer may start with ("Yeah, it's Dana", "My name's Dana", "Hi, Dana here")
_ANSWER_SKIP = np.zeros(_SKIP + 1, dtype=bool)
_ANSWER_SKIP[[_SKIP, _GREET, _IT, _S, _IS, _MY, _NAME, _I, _M, _AM, _THIS]] = True
_QUESTION_WORD = np.zeros(_SKIP + 1, dtype=bool)
_QUESTION_WORD[[_NAME, _WHO]] = True


@dataclass(frozen=True)
class NameColumns:
    """What the names step knows of each distinct word (a surface of the fast path, or each
    word of the pipeline path); every array has one entry per word.

    Attributes
    ----------
    title : ndarray of bool
        Written with a capital and not all in capitals ("Priya", not "PRIYA" or "I").
    upper : ndarray of bool
        Written all in capitals, two letters or more: in a cased transcript an acronym
        ("AC"), never a name.
    low : ndarray of int64
        An id of the lower-cased word.
    cls : ndarray of int64
        Cue class (:data:`CLASSES`; 0 for none).
    nameable, first, ordinary : ndarray of bool
        Can be a name at all; in the first-name list; an ordinary word.
    """

    title: NDArray[np.bool_]
    upper: NDArray[np.bool_]
    low: NDArray[np.int64]
    cls: NDArray[np.int64]
    nameable: NDArray[np.bool_]
    first: NDArray[np.bool_]
    ordinary: NDArray[np.bool_]


@dataclass
class NameMarks:
    """What :func:`mark_names` found in a batch.

    Attributes
    ----------
    action : ndarray of int8, one per token
        :data:`NONE`, :data:`CUE`, :data:`KNOWN`, :data:`SUSPECT` or :data:`CAPITAL`.
    named : ndarray of int64, shape (k, 2)
        The names of each transcript (from its labels and cues): distinct
        ``(transcript, lower-case id)`` rows.
    """

    action: NDArray[np.int8]
    named: NDArray[np.int64]


def mark_names(
    word: NDArray[np.int64],
    cols: NameColumns,
    *,
    flagged: NDArray[np.int64],
    sent: NDArray[np.int64],
    line: NDArray[np.int64],
    doc: NDArray[np.int64],
    n_docs: int,
    labels: Sequence[Sequence[int]] = (),
    capitals: bool = True,
) -> NameMarks:
    """Decide, token by token, what the names step does (rules 1–4 of :mod:`.names`).

    Parameters
    ----------
    word : ndarray of int64, one per token
        Index of each token's word into ``cols``.
    cols : NameColumns
    flagged : ndarray of int64
        Positions of the capitalised words that do not start a sentence (the names rule of
        the lemma step, over title-case words).
    sent, line, doc : ndarray of int64, one per token
        Sentence, line (turn) and transcript (0-based) of each token.
    n_docs : int
    labels : sequence of sequence of int
        Per transcript, the lower-case ids of its label names.
    capitals : bool
        False for languages that capitalise every noun: no word counts as capitalised.

    Returns
    -------
    NameMarks
    """
    n = word.size
    action = np.zeros(n, dtype=np.int8)
    per_doc = np.fromiter(map(len, labels), dtype=np.int64, count=len(labels))
    label_doc = np.repeat(np.arange(per_doc.size, dtype=np.int64), per_doc)
    label_low = np.fromiter(chain.from_iterable(labels), dtype=np.int64, count=int(per_doc.sum()))
    if n == 0:
        return NameMarks(action, _pairs(label_doc, label_low))
    title_w = cols.title if capitals else np.zeros(cols.title.size, dtype=bool)
    plausible = cols.nameable & (cols.first | ~cols.ordinary | title_w)
    at = np.flatnonzero(plausible[word])  # the only positions any rule looks at
    # a cased transcript has a word written with a capital (the stream is in doc order)
    starts = np.searchsorted(doc, np.arange(n_docs))
    cased = np.maximum.reduceat(title_w[word], np.minimum(starts, n - 1)) & (starts < n)
    cased[:-1] &= starts[:-1] < starts[1:]  # a transcript without words is not cased
    w = word[at]
    title, first, ordinary = title_w[w], cols.first[w], cols.ordinary[w]
    ok = ~(cols.upper[w] & cased[doc[at]])  # an acronym in a cased transcript: not a name
    likely = ok & (first | ~ordinary)

    sa = sent[at]

    def near(k: int) -> NDArray[np.int64]:
        """Cue class of the token ``k`` before each position (after, when negative), 0
        outside the sentence."""
        j = at - k
        inside = (j >= 0) & (j < n)
        j = np.clip(j, 0, n - 1)
        return np.where(inside & (sent[j] == sa), cols.cls[word[j]], 0)

    p1, p2, p3, nx = near(1), near(2), near(3), near(-1)
    last = (at + 1 == n) | (sent[np.minimum(at + 1, n - 1)] != sa)
    start = (at == 0) | (sent[np.maximum(at - 1, 0)] != sa)
    after = last | (nx == _AFTER) | (nx == _SPEAKING) | (nx == _CALLING)
    # "my name is …", "… speaking": a capitalised word is enough
    introduced = (
        ((p3 == _MY) & (p2 == _NAME) & ((p1 == _IS) | (p1 == _S)))
        | ((p3 == _THE) & (p2 == _NAME) & (p1 == _S))
        | ((nx == _SPEAKING) & (start | ((p2 == _THIS) & (p1 == _IS)) | title))
    )
    # "you're through to …", "speaking with …": also said of teams ("through to Billing")
    reached = ((p2 == _THROUGH) & (p1 == _TO) & ((p3 == _RE) | (p3 == _ARE))) | (
        (p2 == _SPEAKING) & ((p1 == _TO) | (p1 == _WITH))
    )
    # "it's …", "this is …", "I'm …": also said of anything ("it's fine", "I'm calling")
    said = (
        ((p2 == _THIS) & (p1 == _IS))
        | ((p2 == _IT) & ((p1 == _S) | (p1 == _IS)))
        | ((p2 == _I) & ((p1 == _M) | (p1 == _AM)))
    )
    # "thanks …", "hi …", "thank you …": a first name, or a capitalised word that ends the
    # sentence ("Good morning, Tallowmere, this is …" is not a name)
    greeted = (p1 == _GREET) | ((p2 == _THANK) & (p1 == _YOU))
    accept = ok & (
        (introduced & (likely | title))
        | (reached & ((first & ok) | (likely & (after | ~title))))
        | (said & ((title & first) | (likely & after)))
        | (greeted & ((title & (first | last)) | (~title & first & ~ordinary)))
    )
    accept |= _answers(word, cols, at, likely, sent, line, doc)
    cued = at[accept]
    # a capitalised word right after a name found at a cue is a surname
    nxt = cued + 1
    nxt = nxt[nxt < n]
    slot = np.minimum(np.searchsorted(at, nxt), at.size - 1)
    nxt = nxt[(sent[nxt] == sent[nxt - 1]) & (at[slot] == nxt)]
    nxt = nxt[title_w[word[nxt]]]
    cued = np.union1d(cued, nxt)
    action[cued] = CUE
    named = _pairs(
        np.concatenate([label_doc, doc[cued]]), np.concatenate([label_low, cols.low[word[cued]]])
    )
    # names of the transcript elsewhere in it
    free = at[action[at] == NONE]
    if named.size and free.size:
        base = int(cols.low.max()) + 1
        keys = doc[free] * base + cols.low[word[free]]
        known = free[np.isin(keys, named[:, 0] * base + named[:, 1])]
        is_title = title_w[word[known]]
        action[known[is_title]] = KNOWN
        action[known[~is_title]] = SUSPECT
    # first names that are not ordinary words
    free = at[action[at] == NONE]
    wf = word[free]
    candidate = free[cols.first[wf] & ~cols.ordinary[wf]]
    action[candidate[title_w[word[candidate]] | ~cased[doc[candidate]]]] = SUSPECT
    # any other capitalised word inside a sentence
    if capitals and flagged.size:
        rest = flagged[(action[flagged] == NONE) & plausible[word[flagged]]]
        action[rest[title_w[word[rest]]]] = CAPITAL
    return NameMarks(action, named)


def _answers(
    word: NDArray[np.int64],
    cols: NameColumns,
    at: NDArray[np.int64],
    likely: NDArray[np.bool_],
    sent: NDArray[np.int64],
    line: NDArray[np.int64],
    doc: NDArray[np.int64],
) -> NDArray[np.bool_]:
    """Which of the positions ``at`` answer a name question: the first sentence of the next
    line holds, after words such as "um", "yeah", "it's", one or two words (a name and a
    surname), the first of them ``likely`` a name."""
    out = np.zeros(at.size, dtype=bool)
    n = word.size
    cls = cols.cls
    qpos = np.flatnonzero(_QUESTION_WORD[np.minimum(cls, _SKIP)][word])
    if qpos.size == 0 or at.size == 0:
        return out

    def near(k: int) -> NDArray[np.int64]:
        j = np.clip(qpos + k, 0, n - 1)
        inside = (qpos + k >= 0) & (qpos + k < n) & (sent[j] == sent[qpos])
        return np.where(inside, cls[word[j]], 0)

    c, b1, a1, a2, a3 = cls[word[qpos]], near(-1), near(1), near(2), near(3)
    # "your name", "who's calling", "who is this", "who am I speaking with"
    asks = ((c == _NAME) & (b1 == _YOUR)) | (
        (c == _WHO)
        & (
            (((a1 == _S) | (a1 == _IS)) & ((a2 == _CALLING) | (a2 == _THIS)))
            | ((a1 == _AM) & (a3 == _SPEAKING))
        )
    )
    qpos = qpos[asks]
    if qpos.size == 0:
        return out
    # the first word of the next line, in the same transcript
    starts = np.searchsorted(line, line[qpos] + 1, side="left")
    found = starts < n
    qpos, starts = qpos[found], starts[found]
    good = (doc[starts] == doc[qpos]) & (line[starts] == line[qpos] + 1)
    skip = _ANSWER_SKIP[np.minimum(cls, _SKIP)]
    for i in starts[good].tolist():
        s = sent[i]
        j = i
        while j < n and sent[j] == s and skip[word[j]]:
            j += 1
        end = j
        while end < n and end - j <= 2 and sent[end] == s:
            end += 1
        slot = int(np.searchsorted(at, j))
        if j < end and end - j <= 2 and slot < at.size and at[slot] == j and likely[slot]:
            out[slot] = True
    return out


def _pairs(docs: NDArray[np.int64], lows: NDArray[np.int64]) -> NDArray[np.int64]:
    """Distinct ``(transcript, lower-case id)`` rows."""
    if docs.size == 0:
        return np.zeros((0, 2), dtype=np.int64)
    keys = np.unique((docs << 32) | lows)
    return np.stack([keys >> 32, keys & 0xFFFFFFFF], axis=1)
