"""The fast path against spaCy itself.

References (versions are checked below):
- spaCy 3.8 (``spacy``): its English stop-word list (``spacy.lang.en.stop_words.STOP_WORDS``)
  and its own pipeline ``spacy.blank("en")`` + ``Lemmatizer(mode="lookup")``.
- spacy-lookups-data 1.0.5: the English lookup lemma table (``en_lemma_lookup``), read here
  through spaCy's own ``spacy.lookups.load_lookups``, not through our loader.
"""

from __future__ import annotations

import random
from collections import Counter
from importlib.metadata import version

import pytest
import spacy
from spacy.lang.en.stop_words import STOP_WORDS
from spacy.lookups import load_lookups

from talkthemes.config import PrepareSettings
from talkthemes.demo.calls import iter_demo_calls
from talkthemes.prepare.boilerplate import split_sentences
from talkthemes.prepare.chain import build_processor
from talkthemes.prepare.filter import KEEP
from talkthemes.prepare.lemmas import FastLemmatizer
from talkthemes.prepare.lexicon import spacy_stop_words


def test_reference_versions():
    assert spacy.__version__.startswith("3.8")
    assert version("spacy-lookups-data") == "1.0.5"


@pytest.fixture(scope="module")
def table():
    return load_lookups("en", ["lemma_lookup"]).get_table("lemma_lookup")


@pytest.fixture(scope="module")
def fast() -> FastLemmatizer:
    # words and lemmas alone: the names step removes people's names, spaCy does not
    return build_processor(PrepareSettings(drop_names=False)).encoder


def test_stop_words_are_spacys_english_list(fast: FastLemmatizer):
    assert spacy_stop_words("en") == frozenset(w.lower() for w in STOP_WORDS)
    assert frozenset(w.lower() for w in STOP_WORDS) <= fast.filter.stop_words
    # members of spaCy's English list (recalled from memory; checked against the list above)
    for word in ("the", "and", "however", "whereupon", "nevertheless", "yourselves"):
        assert word in STOP_WORDS
        assert fast.filter.reason(word, word) != KEEP


def test_lemmas_equal_the_lookup_table(table, fast: FastLemmatizer):
    # inflected forms with their dictionary form (English morphology, from memory),
    # each checked against spacy-lookups-data's table and our lemmatiser
    pairs = {
        "children": "child",
        "mice": "mouse",
        "went": "go",
        "charged": "charge",
        "refunds": "refund",
        "leaking": "leak",
        "meters": "meter",
        "paid": "pay",
    }
    for word, lemma in pairs.items():
        assert table.get(word) == lemma
        assert fast.lemma(word) == lemma
    # and a random sample of 2,000 lowercase entries of the table
    keys = sorted(k for k in fast.table if k.islower())
    for word in random.Random(0).sample(keys, 2000):
        assert fast.lemma(word) == table.get(word).lower(), word


def _agreement(sentences, nlp, fast: FastLemmatizer) -> tuple[float, int]:
    """Share of kept tokens on which the fast path and spaCy agree (multiset per sentence)."""
    matched = total = 0
    for sentence, doc in zip(sentences, nlp.pipe(sentences, batch_size=500), strict=True):
        reference = [
            t.lemma_.lower() for t in doc if fast.filter.reason(t.lemma_.lower(), t.lower_) == KEEP
        ]
        ours = fast.kept(sentence)
        matched += sum((Counter(ours) & Counter(reference)).values())
        total += max(len(ours), len(reference))
    return matched / total, total


@pytest.fixture(scope="module")
def demo_sentences(fast: FastLemmatizer) -> list[str]:
    """Sentences of 250 invented demo calls after roles and scrub (the lemma step's input)."""
    processor = build_processor(PrepareSettings())
    out: list[str] = []
    for call in iter_demo_calls(250, seed=11):
        text, *_ = processor.text([(t.role, t.text) for t in call.turns])
        out.extend(split_sentences(text))
    return out


def test_agreement_with_spacy_blank_and_lookup_lemmatizer(demo_sentences, fast):
    nlp = spacy.blank("en")
    nlp.add_pipe("lemmatizer", config={"mode": "lookup"})
    nlp.initialize()  # loads en_lemma_lookup from spacy-lookups-data
    share, n = _agreement(demo_sentences, nlp, fast)
    assert n > 20_000
    # the default fast path (lowercase fallback for capitalised words) agrees on >= 99.5 %
    assert share >= 0.995, f"agreement {share:.4%} on {n} kept tokens"
    # looking words up only as written, as spaCy does, the tokenizer alone agrees on >= 99.9 %
    strict = FastLemmatizer(fast.table, fast.filter, "en", case_fallback=False)
    strict_share, _ = _agreement(demo_sentences, nlp, strict)
    assert strict_share >= 0.999, f"agreement {strict_share:.4%}"
    assert strict_share >= share
