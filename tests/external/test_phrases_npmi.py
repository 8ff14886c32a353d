"""NPMI phrase scoring against Bouma (2009) and gensim's ``npmi_scorer``.

Sources:
- Bouma, G. (2009). Normalized (pointwise) mutual information in collocation extraction.
  Proceedings of GSCL 2009, 31-40: npmi(x;y) = ln(p(x,y) / (p(x) p(y))) / -ln p(x,y),
  with npmi = 1 for complete co-occurrence, 0 for independence, -1 in the limit of never
  co-occurring.
- gensim 4.4.0, ``gensim.models.phrases.npmi_scorer`` (reference library), probabilities
  taken as counts divided by the corpus word count; and ``gensim.models.phrases.Phrases``
  (``scoring="npmi"``) trained and applied the ordinary way on the stream of adjacent words,
  built here by a plain loop over the text, independently of the chain's numpy code.
"""

from __future__ import annotations

import math
import re
from collections import Counter

import gensim
import numpy as np
import pytest
from gensim.models.phrases import Phrases, npmi_scorer

from talkthemes.config import PrepareSettings
from talkthemes.demo.calls import iter_demo_calls
from talkthemes.prepare.boilerplate import split_sentences
from talkthemes.prepare.chain import build_processor, prepare_corpus
from talkthemes.prepare.filter import KEEP
from talkthemes.prepare.headwords import name_flags
from talkthemes.prepare.phrases import learn_phrases
from talkthemes.prepare.words import GAP


def test_reference_library_version():
    assert gensim.__version__.startswith("4.4")


def test_worked_example_by_hand():
    # 20 tokens; "late" 4 times, "fee" 5 times, "late fee" 3 times.
    # p(late) = 4/20 = 0.2, p(fee) = 5/20 = 0.25, p(late, fee) = 3/20 = 0.15
    # pmi  = ln(0.15 / (0.2 * 0.25)) = ln 3 = 1.0986123
    # npmi = 1.0986123 / -ln 0.15 = 1.0986123 / 1.8971200 = 0.5790948
    by_hand = 0.5790948
    assert math.log(3) / -math.log(0.15) == pytest.approx(by_hand, abs=1e-7)
    assert npmi_scorer(4, 5, 3, 0, 1, 20) == pytest.approx(by_hand, abs=1e-7)

    # the same counts as a token stream through our phrase learner
    types = ["late", "fee", "other", "word"]
    sentences = [[0, 1], [0, 1], [0, 1], [0, 2], [1, 3], [1, 3]]
    filler = [[2, 2, 2, 2], [3, 3, 3, 3]]  # 8 more tokens, no late/fee, no strong pair
    units = sentences + filler
    tokens = np.array([t for u in units for t in u], dtype=np.int32)
    lengths = np.array([len(u) for u in units])
    assert tokens.size == 20
    assert (tokens == 0).sum() == 4 and (tokens == 1).sum() == 5
    model, _ = learn_phrases(tokens, lengths, types, threshold=0.5, min_count=3)
    assert model.names == ["late_fee"]
    assert model.scores[0] == pytest.approx(by_hand, abs=1e-7)
    assert model.bigram_counts.tolist() == [3]


def test_bouma_bounds():
    # complete co-occurrence: both words only ever appear together -> 1
    assert npmi_scorer(7, 7, 7, 0, 1, 100) == pytest.approx(1.0)
    # independence: p(x,y) = p(x) p(y) = 0.1 * 0.1 -> 0
    assert npmi_scorer(10, 10, 1, 0, 1, 100) == pytest.approx(0.0, abs=1e-12)
    # below min_count the scorer rules the pair out
    assert npmi_scorer(10, 10, 1, 0, 2, 100) == float("-inf")


def test_threshold_is_strict():
    # score exactly at the threshold is not a phrase (gensim: score must exceed it)
    types = ["a", "b"]
    tokens = np.array([0, 1] * 5, dtype=np.int32)
    lengths = np.array([2] * 5)
    model, _ = learn_phrases(tokens, lengths, types, threshold=0.9, min_count=1)
    assert model.names == ["a_b"] and model.scores[0] == pytest.approx(1.0)
    model, _ = learn_phrases(tokens, lengths, types, threshold=1.0, min_count=1)
    assert model.names == []


# -- the chain's phrases equal gensim's Phrases on the adjacent-word stream ------------------
_WORD = re.compile(r"(\w+)(-(?=\s|$))?")  # a word, and a hyphen when it was cut off


def adjacent_runs(calls, settings: PrepareSettings, choices: dict[str, str]) -> list[list[str]]:
    """Runs of adjacent kept lemmas, by a plain loop: a removed word ends a run unless it is
    a filler; scrubbed text, a word cut off, a sentence or turn end one too. Lemmas are the
    lookup table's, with the chain's lemma checks (names, the corpus's ``choices``)."""
    processor = build_processor(settings)
    enc = processor.encoder
    runs: list[list[str]] = []
    for call in calls:
        text, *_ = processor.text([(t.role, t.text) for t in call.turns])
        for sentence in split_sentences(text):
            # (piece, match): the pieces are the parts between scrubbed text
            found = [
                (p, m)
                for p, piece in enumerate(sentence.replace("n't", " not").split(GAP))
                for m in _WORD.finditer(piece)
            ]
            names = name_flags([m.group(1) for _, m in found])  # names are per sentence
            run: list[str] = []
            for i, ((piece, m), name) in enumerate(zip(found, names, strict=True)):
                if i and piece != found[i - 1][0]:
                    runs.append(run)  # scrubbed text stood here
                    run = []
                word = m.group(1)
                lower = word.lower()
                lemma = lower if name else choices.get(lower, enc.lemma(word))
                if m.group(2) is None and enc.filter.reason(lemma, lower) == KEEP:
                    run.append(lemma)
                elif m.group(2) is not None or not enc.filter.is_filler(lemma, lower):
                    runs.append(run)
                    run = []
            runs.append(run)
    return [r for r in runs if r]


def test_chain_phrases_equal_gensim_on_the_adjacent_stream():
    settings = PrepareSettings(
        n_process=1,
        boilerplate_min_share=0.0,
        drop_names=False,  # the reference stream below is the lemma step's, names kept
        phrase_min_count=8,
        phrase_threshold=0.5,
        vocab_min_docs=2,
        min_tokens=5,
    )
    calls = list(iter_demo_calls(300, seed=11))
    batch = [(c.call_id, [(t.role, t.text) for t in c.turns]) for c in calls]
    corpus, explain = prepare_corpus(lambda: [batch], settings)
    ours = {name: score for name, score in corpus.info["phrases"]}

    runs = adjacent_runs(calls, settings, corpus.info["lemmas"]["choices"])
    reference = Phrases(runs, min_count=8, threshold=0.5, scoring="npmi", delimiter="_")
    frozen = reference.freeze()
    assert len(frozen.phrasegrams) >= 20  # the check has substance
    assert set(ours) == set(frozen.phrasegrams)
    for name, score in ours.items():
        assert score == pytest.approx(frozen.phrasegrams[name], abs=1e-6)
    # the same pairs are joined, as often
    joined = Counter(w for run in runs for w in frozen[run] if "_" in w)
    assert explain["phrases"]["tokens_joined"] == sum(joined.values())
    assert explain["phrases"]["phrases"] == len(joined)
    for row in explain["phrases"]["top"]:
        assert row["count"] == joined[row["phrase"]], row["phrase"]
