"""Applying the headword decisions to the token stream (``resolve_tokens``), against a plain
loop over the tokens that says what it must do: provisional terms become their decided
lemma, or are dropped when the filter drops the lemma; a dropped word that is not a filler
(or that started a run) starts a new run at the next kept token."""

from __future__ import annotations

import random

import numpy as np
import pytest

from talkthemes.prepare.filter import KEEP, LEMMATISED, STAT_COLUMNS
from talkthemes.prepare.headwords import PROVISIONAL, resolve_tokens

STOP, FILLER = 3, 4  # reason columns used by the fake filter below


class FakeFilter:
    """Drops ``the*`` lemmas as stop words and ``um*`` lemmas as fillers."""

    def reason(self, lemma: str, word: str) -> int:
        if lemma.startswith("the"):
            return STOP
        if lemma.startswith("um"):
            return FILLER
        return KEEP

    def is_filler(self, lemma: str, word: str) -> bool:
        return lemma.startswith("um")


def choose(word: str) -> str:
    # a word decides to its stem before "-s" (so "ums" → "um" is dropped as a filler)
    return word[:-1] if word.endswith("s") else word


def reference(types, tokens, breaks, sent_kept):
    out_types = [t for t in types if not t.startswith(PROVISIONAL)]
    index = {t: i for i, t in enumerate(out_types)}
    f = FakeFilter()
    for term in types:  # new lemmas are added in the order of the provisional terms
        if term.startswith(PROVISIONAL):
            word = term[len(PROVISIONAL) :]
            lemma = choose(word)
            if f.reason(lemma, word) == KEEP and lemma not in index:
                index[lemma] = len(out_types)
                out_types.append(lemma)
    out_tokens, out_breaks = [], []
    pending = False
    bounds = np.cumsum(sent_kept)
    per_sentence = [0] * len(sent_kept)
    for pos, t in enumerate(tokens.tolist()):
        sentence = int(np.searchsorted(bounds, pos, side="right"))
        term = types[t]
        if term.startswith(PROVISIONAL):
            word = term[len(PROVISIONAL) :]
            lemma = choose(word)
            if f.reason(lemma, word) != KEEP:
                if not f.is_filler(lemma, word) or breaks[pos]:
                    pending = True
                continue
            term = lemma
        out_tokens.append(index[term])
        out_breaks.append(bool(breaks[pos]) or pending)
        pending = False
        per_sentence[sentence] += 1
    return out_types, out_tokens, out_breaks, per_sentence


@pytest.mark.parametrize("seed", range(12))
def test_matches_a_plain_loop(seed: int) -> None:
    rng = random.Random(seed)
    plain = ["bill", "meter", "late"]
    provisional = [PROVISIONAL + w for w in ("fees", "thes", "ums", "umm", "reads", "then")]
    types = plain[:1] + provisional[:3] + plain[1:] + provisional[3:]
    n = rng.randint(0, 60)
    tokens = np.array([rng.randrange(len(types)) for _ in range(n)], dtype=np.int32)
    breaks = np.array([rng.random() < 0.3 for _ in range(n)], dtype=bool)
    if n:
        breaks[0] = True
    cuts = sorted(rng.randint(0, n) for _ in range(rng.randint(0, 5)))
    sent_kept = np.diff([0, *cuts, n]).astype(np.int64)
    stats = np.zeros((sent_kept.size, len(STAT_COLUMNS)), dtype=np.int32)

    got_types, got_tokens, got_breaks, got_kept = resolve_tokens(
        types, tokens, breaks, sent_kept, choose, FakeFilter(), stats
    )
    want_types, want_tokens, want_breaks, want_kept = reference(types, tokens, breaks, sent_kept)
    assert got_types == want_types
    assert got_tokens.dtype == np.int32
    assert got_tokens.tolist() == want_tokens
    assert got_breaks.tolist() == want_breaks
    assert got_kept.tolist() == want_kept
    # the stats count each dropped word under its reason and each changed form as lemmatised
    dropped = sum(
        1 for t in tokens.tolist() if types[t] in (PROVISIONAL + "thes", PROVISIONAL + "then")
    )
    assert stats[:, STOP].sum() == dropped
    changed = sum(1 for t in tokens.tolist() if types[t] in (PROVISIONAL + "fees",
                                                            PROVISIONAL + "reads"))  # fmt: skip
    assert stats[:, LEMMATISED].sum() == changed
