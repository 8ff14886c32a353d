"""Sound lemmas: headwords decided by the corpus, names kept as written, your exceptions."""

from __future__ import annotations

import io
import random
from pathlib import Path

import numpy as np
import pytest
from rich.console import Console

from talkthemes.cli._explain import render_explain
from talkthemes.config import PrepareSettings
from talkthemes.errors import ConfigError
from talkthemes.prepare.chain import build_processor, prepare_corpus
from talkthemes.prepare.frozen import PrepApplier, PrepSpec
from talkthemes.prepare.headwords import (
    Headwords,
    load_lemma_index,
    load_lemma_rules,
    name_flags,
    regular_inflection,
)
from talkthemes.prepare.lexicon import load_lemma_table
from talkthemes.prepare.run import PrepareResult


@pytest.fixture(scope="module")
def headwords() -> Headwords:
    return Headwords.build(
        load_lemma_table("en"),
        index=load_lemma_index("en"),
        rules=load_lemma_rules("en"),
        ratio=2.0,
    )


def test_contested_words_of_the_english_table(headwords: Headwords):
    c = headwords.contested
    # (a) other forms map to the word ("numbers" -> "number"); (b) a base form that is not a
    # regular inflection of the table's lemma; (c) the table's lemma is not a word
    assert c["number"] == "numb" and c["left"] == "leave" and c["found"] == "find"
    assert c["data"] == "datum" and c["lost"] == "lose" and c["laden"] == "lade"
    assert c["first"] == "1" and "first" in headwords.always
    # regular inflections are left to the table, even when they are dictionary words
    for word in ("minutes", "details", "used", "meters", "verified", "charged", "wales"):
        assert word not in c, word
    assert regular_inflection("stopped", "stop", ()) and regular_inflection("bigger", "big", ())
    assert not regular_inflection("data", "datum", load_lemma_rules("en"))
    assert Headwords.build(load_lemma_table("en"), ratio=0).contested == {}


def test_decisions_follow_the_corpus(headwords: Headwords):
    # "number" said often, "numb" never: kept as said
    d = headwords.decide("number", {"number": 40, "numbers": 8})
    assert (d.lemma, d.said, d.table_said) == ("number", 48, 0)
    # "lost" against "lose": the paradigm of "lose" counts lose, loses, losing
    assert headwords.decide("lost", {"lost": 30, "lose": 5, "losing": 4}).lemma == "lost"
    assert headwords.decide("lost", {"lost": 30, "lose": 12, "losing": 4}).lemma == "lose"
    # exactly the ratio keeps the word; a tie never does
    assert headwords.decide("lost", {"lost": 20, "lose": 10}).lemma == "lost"
    assert headwords.decide("data", {}).lemma == "datum"  # nothing said: the table
    assert headwords.decide("first", {}).lemma == "first"  # "1" is not a word


def test_name_flags():
    assert name_flags(["we", "flew", "to", "New", "South", "Wales", "on", "Monday"]) == [
        False, False, False, True, True, True, False, True,
    ]  # fmt: skip
    # sentence-initial: a name only when the next word is capitalised too
    assert name_flags(["Refunds", "are", "late"]) == [False, False, False]
    assert name_flags(["New", "South", "Wales", "is", "wet"]) == [True, True, True, False, False]
    assert name_flags(["Yes", "I", "paid"]) == [False, False, False]  # the pronoun I
    # all-caps or title-case sentences carry no information about names
    assert name_flags(["MY", "METER", "IS", "BROKEN", "AGAIN"]) == [False] * 5
    assert name_flags(["Laden"]) == [False]


def _encoder(**settings):
    # the lemma checks alone: the names step (tests/prepare/test_names.py) would remove
    # first names such as "Osama"
    settings.setdefault("drop_names", False)
    return build_processor(PrepareSettings(**settings)).encoder


def test_names_are_kept_as_written_by_both_paths():
    enc = _encoder()
    text = "Osama bin Laden left. We flew to New South Wales. Refunds came. The Leaves fell."
    assert enc.kept(text) == [
        "osama", "bin", "laden", "leave", "fly", "new", "south", "wales", "refund", "come",
        "leaves", "fall",
    ]  # fmt: skip
    # ("left" is a contested headword: with no corpus counts, the table decides)
    assert _encoder(names=False).kept(text)[:3] == ["osama", "bin", "lade"]
    # the same rule, word by word, as the numpy one over a whole batch
    rng = random.Random(3)
    pool = ["Wales", "meters", "Laden", "I", "paid", "New", "Leaves", "the", "UK", "bills"]
    sentences = [" ".join(rng.choices(pool, k=rng.randint(1, 7))) for _ in range(300)]
    fast = [enc.kept(s) for s in sentences]
    by_word = []
    for s in sentences:
        ws = s.split()
        flags = name_flags(ws)
        out = []
        for w, name in zip(ws, flags, strict=True):
            lemma = w.lower() if name else enc.lemma(w)
            if enc.filter.reason(lemma, w.lower()) == 0:
                out.append(lemma)
        by_word.append(out)
    assert fast == by_word


def test_lower_case_text_is_unchanged_by_the_name_rule():
    text = "osama bin laden left. we flew to new south wales and the meters were read."
    assert _encoder().kept(text) == _encoder(names=False).kept(text)


def test_exceptions_win_and_are_validated():
    enc = _encoder(lemma_exceptions={"Lost": "lost", "number": "number"})
    assert enc.kept("The parcel was Lost. My account number") == [
        "parcel", "lost", "account", "number",
    ]  # fmt: skip
    with pytest.raises(ValueError, match="one word of letters"):
        PrepareSettings(lemma_exceptions={"late fee": "fee"})


def _calls(n: int, *, number_word: str = "number") -> list[tuple[str, list[tuple[str, str]]]]:
    """Invented calls: account numbers, lost parcels, a name, a scripted line."""
    rng = random.Random(5)
    topic = ["parcel", "courier", "depot", "label", "invoice", "refund", "driver", "van"]
    out = []
    for i in range(n):
        turns = [("agent", "Can I take your account number please?")]
        for _ in range(5):
            w = rng.sample(topic, 3)
            turns.append(("customer", f"My {number_word} is wrong and the {w[0]} was lost."))
            turns.append(("customer", f"The {w[1]} went to Wales and the {w[2]} is late."))
        out.append((f"c{i}", turns))
    return out


SETTINGS = PrepareSettings(
    n_process=1,
    vocab_min_docs=2,
    vocab_max_doc_share=1.0,
    min_tokens=5,
    boilerplate_min_share=0.0,
    phrases=False,
)


def test_chain_keeps_a_frequent_headword_and_reports_it():
    corpus, explain = prepare_corpus(lambda: [_calls(30)], SETTINGS, min_terms=5)
    vocab = set(corpus.vocabulary)
    assert {"number", "lost", "wales"} <= vocab
    assert not {"numb", "lose", "wale"} & vocab
    hw = explain["lemmas"]["headwords"]
    rows = {d["word"]: d for d in hw["decisions"]}
    assert rows["number"] == {
        "word": "number", "table": "numb", "lemma": "number", "said": 180, "table_said": 0,
    }  # fmt: skip
    assert rows["lost"]["lemma"] == "lost" and rows["lost"]["said"] == 150
    assert explain["lemmas"]["names"]["top"] == [{"name": "wales", "table": "wale", "count": 150}]
    assert corpus.info["lemmas"]["choices"]["number"] == "number"
    # the lemmatised count includes the decisions: "lost" is no longer changed, "was" is
    out = io.StringIO()
    render_explain(Console(file=out, width=120), PrepareResult("h", Path("p"), {}, False, explain))
    text = out.getvalue()
    assert "headwords" in text and "number" in text and "numb" in text
    assert "kept as said" in text and "names kept as written" in text
    # switched off, the table decides
    off = SETTINGS.model_copy(update={"lemma_keep_ratio": 0.0, "names": False})
    corpus_off, explain_off = prepare_corpus(lambda: [_calls(30)], off, min_terms=5)
    assert {"numb", "lose", "wale"} <= set(corpus_off.vocabulary)
    assert explain_off["lemmas"]["headwords"]["checked"] == 0


def test_when_the_lemma_is_in_use_the_table_wins():
    # "lose" said more than half as often as "lost": the table's lemma stays
    calls = _calls(30)
    calls += [(f"x{i}", [("customer", "You lose it, losing it, you lose.")]) for i in range(40)]
    corpus, explain = prepare_corpus(lambda: [calls], SETTINGS, min_terms=5)
    rows = {d["word"]: d for d in explain["lemmas"]["headwords"]["decisions"]}
    assert rows["lost"]["lemma"] == "lose" and rows["lost"]["table_said"] == 120
    assert "lose" in corpus.vocabulary and "lost" not in corpus.vocabulary


def test_a_decision_that_makes_a_stop_word_drops_the_token_and_parts_its_neighbours():
    # "best" maps to "well" (a stop word); said less than "well", the table wins and the
    # token is dropped, so "smart" and "meter" around it are not adjacent
    enc = _encoder()
    calls = [
        (f"c{i}", [("customer", "Well, well, well. The smart best meter works. Smart meter.")])
        for i in range(30)
    ]
    s = SETTINGS.model_copy(
        update={"phrases": True, "phrase_min_count": 5, "phrase_threshold": 0.0, "min_tokens": 1}
    )
    corpus, explain = prepare_corpus(lambda: [calls], s, min_terms=1, min_transcripts=1)
    rows = {d["word"]: d for d in explain["lemmas"]["headwords"]["decisions"]}
    assert rows["best"]["lemma"] == "well"
    assert enc.filter.reason("well", "best") != 0
    assert "best" not in corpus.vocabulary and "well" not in corpus.vocabulary
    top = {p["phrase"]: p["count"] for p in explain["phrases"]["top"]}
    assert top["smart_meter"] == 30  # in the second sentence only


def test_frozen_prep_uses_the_versions_decisions():
    info = {
        "hash": "h",
        "settings": PrepareSettings(boilerplate_min_share=0.0).model_dump(),
        "phrases": [],
        "boilerplate": [],
        "chain_version": "2",
        "lemmas": {"choices": {"number": "number", "lost": "lose"}},
    }
    vocab = ["number", "numb", "lose", "lost", "wales", "wale", "datum", "data"]
    spec = PrepSpec.from_prep_info(info, vocab)
    text = "My number was lost in Wales, the data too."
    out = PrepApplier(spec).apply([("a", [("customer", text)])])
    got = [vocab[t] for t in out.tokens.tolist() if t >= 0]
    assert got == ["number", "lose", "wales", "datum"]  # "data": no decision, the table
    # a version made before these checks prepares text as it did
    legacy = PrepSpec.from_prep_info({k: v for k, v in info.items() if k != "chain_version"}, vocab)
    out = PrepApplier(legacy).apply([("a", [("customer", text)])])
    assert [vocab[t] for t in out.tokens.tolist() if t >= 0] == ["numb", "lose", "wale", "datum"]


def test_encoder_reports_counts_only_outside_names():
    enc = _encoder()
    res = enc.encode(["My number. Number Nine said number", "numbers"])
    # "Number Nine" starts a sentence followed by a capital: a name, not counted
    assert {k: res.counts[k] for k in ("number", "numbers")} == {"number": 2, "numbers": 1}
    assert np.count_nonzero(res.codes >= 0) == 5


def test_languages_that_capitalise_nouns_have_no_names():
    enc = _encoder(lang="de")
    assert enc.names is False
    assert enc.kept("Die Kunden sagen, die Zahlungen wurden abgebucht") == [
        "kunde", "sagen", "zahlung", "abbuchen",
    ]  # fmt: skip
    with pytest.raises(ConfigError):
        _encoder(lang="qq")
