"""Phrases: our numpy counting + gensim's frozen NPMI model equals gensim used directly."""

from __future__ import annotations

import random

import numpy as np
import pytest
from gensim.models.phrases import Phrases

from talkthemes.prepare.phrases import apply_phrases, learn_phrases, unit_bigrams


def random_sentences(seed: int, n: int = 400) -> list[list[str]]:
    """Invented sentences over a small vocabulary with a few planted collocations."""
    rng = random.Random(seed)
    words = [f"w{i}" for i in range(30)]
    planted = [("late", "fee"), ("smart", "meter"), ("direct", "debit")]
    out = []
    for _ in range(n):
        s: list[str] = []
        for _ in range(rng.randint(0, 12)):
            if rng.random() < 0.25:
                s.extend(rng.choice(planted))
            else:
                s.append(rng.choice(words))
        out.append(s)
    return out


def encode(sentences: list[list[str]]):
    types: list[str] = []
    ids: dict[str, int] = {}
    tokens = [ids.setdefault(w, len(ids)) for s in sentences for w in s]
    types = sorted(ids, key=ids.get)
    lengths = np.array([len(s) for s in sentences], dtype=np.int64)
    return np.array(tokens, dtype=np.int32), lengths, types


@pytest.mark.parametrize(
    ("seed", "threshold", "min_count"), [(1, 0.3, 5), (2, 0.0, 3), (3, 0.6, 10)]
)
def test_same_phrases_and_output_as_gensim(seed: int, threshold: float, min_count: int):
    sentences = random_sentences(seed)
    tokens, lengths, types = encode(sentences)
    model, frozen = learn_phrases(tokens, lengths, types, threshold=threshold, min_count=min_count)

    reference = Phrases(sentences, min_count=min_count, threshold=threshold, scoring="npmi")
    ref_frozen = reference.freeze()
    assert set(model.names) == set(ref_frozen.phrasegrams)
    for name, score in zip(model.names, model.scores, strict=True):
        assert score == pytest.approx(ref_frozen.phrasegrams[name], abs=1e-12)
    assert frozen.phrasegrams.keys() == ref_frozen.phrasegrams.keys()

    out, new_lengths, joined = apply_phrases(tokens, lengths, model, len(types))
    names = types + model.names
    expected = [ref_frozen[s] for s in sentences]
    got = []
    pos = 0
    for n in new_lengths.tolist():
        got.append([names[i] for i in out[pos : pos + n].tolist()])
        pos += n
    assert got == expected
    assert joined.sum() == sum(w.count("_") for s in expected for w in s)


def test_planted_collocations_are_found():
    sentences = random_sentences(4, 600)
    tokens, lengths, types = encode(sentences)
    model, _ = learn_phrases(tokens, lengths, types, threshold=0.5, min_count=10)
    assert {"late_fee", "smart_meter", "direct_debit"} <= set(model.names)


def test_greedy_join_takes_every_other_pair_in_a_run():
    # a b a b a with phrase (a, b) and (b, a): gensim joins a_b, a_b, then leaves a
    tokens = np.array([0, 1, 0, 1, 0], dtype=np.int32)
    lengths = np.array([5])
    from talkthemes.prepare.phrases import PhraseModel

    model = PhraseModel(
        pairs=np.array([[0, 1], [1, 0]]),
        scores=np.array([0.9, 0.8]),
        names=["a_b", "b_a"],
        bigram_counts=np.array([2, 2]),
    )
    out, new_lengths, joined = apply_phrases(tokens, lengths, model, 2)
    assert out.tolist() == [2, 2, 0]
    assert new_lengths.tolist() == [3]
    assert joined.tolist() == [2, 0]


def test_pairs_never_span_sentences():
    tokens = np.array([0, 1, 0, 1], dtype=np.int32)
    first, second, inside = unit_bigrams(tokens, np.array([1, 2, 1]))
    assert inside.tolist() == [False, True, False]
    assert first.tolist() == [0, 1, 0] and second.tolist() == [1, 0, 1]


def test_empty_input():
    tokens = np.zeros(0, dtype=np.int32)
    model, _ = learn_phrases(tokens, np.zeros(0, dtype=np.int64), [], threshold=0.5, min_count=1)
    assert len(model) == 0
    out, lengths, joined = apply_phrases(tokens, np.zeros(0, dtype=np.int64), model, 0)
    assert out.size == 0 and lengths.size == 0 and joined.size == 0
