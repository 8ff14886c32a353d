"""Words, lemmas and the filter: fast path, languages, and the spaCy pipeline path."""

from __future__ import annotations

import random
from pathlib import Path

import numpy as np
import pytest
import spacy

from talkthemes.config import PrepareSettings
from talkthemes.errors import ConfigError
from talkthemes.prepare.chain import build_processor, prepare_corpus
from talkthemes.prepare.encoding import decode
from talkthemes.prepare.filter import (
    FILLER,
    KEEP,
    NON_ALPHA,
    SHORT,
    STOP,
    USER,
    TokenFilter,
    filler_languages,
    load_fillers,
)
from talkthemes.prepare.lemmas import FastLemmatizer
from talkthemes.prepare.lexicon import load_lemma_table, lookup_languages, spacy_stop_words
from talkthemes.prepare.pipeline import SpacyLemmatizer
from talkthemes.prepare.words import words


@pytest.fixture(scope="module")
def en_filter() -> TokenFilter:
    return TokenFilter.build(
        min_length=3,
        stop_words=spacy_stop_words("en"),
        fillers=load_fillers("en"),
        user_stop_words=["Brindle"],
    )


@pytest.fixture(scope="module")
def en(en_filter) -> FastLemmatizer:
    return FastLemmatizer(load_lemma_table("en"), en_filter, "en")


def test_words_split_like_spacy():
    assert words("I don't know, it's the follow-up e-mail", "en") == [
        "I",
        "do",
        "not",
        "know",
        "it",
        "s",
        "the",
        "follow",
        "up",
        "e",
        "mail",
    ]
    # a cut-off word ("think-") is a word; the fast path drops it as spaCy drops "think-"
    assert words("I think- I think so", "en") == ["I", "think", "I", "think", "so"]
    # the n't rewrite is English only
    assert words("don't", "de") == ["don", "t"]


def test_filter_reasons(en_filter: TokenFilter):
    assert en_filter.reason("refund", "refunds") == KEEP
    assert en_filter.reason("abc1", "abc1") == NON_ALPHA
    assert en_filter.reason("ok", "ok") == SHORT
    assert en_filter.reason("the", "the") == STOP
    assert en_filter.reason("get", "got") == STOP  # the lemma is a stop word, the word is not
    assert en_filter.reason("yeah", "yeah") == FILLER
    assert en_filter.reason("brindle", "brindle") == USER
    assert len(en_filter.fingerprint()) == 16


def test_shipped_fillers_lists():
    assert {"de", "en", "es"} <= set(filler_languages())
    en = load_fillers("en")
    assert {"um", "uh", "yeah", "okay", "mhm"} <= en
    assert all(w == w.strip().lower() and w for w in en)
    assert load_fillers("xx") == frozenset()


def test_lemmas_from_the_lookup_table(en: FastLemmatizer):
    assert en.kept("The refunds were charged to my accounts twice") == [
        "refund",
        "charge",
        "account",
        "twice",
    ]
    # case: looked up as written, then in lowercase (a sentence-initial plural)
    assert en.lemma("Refunds") == "refund"
    strict = FastLemmatizer(en.table, en.filter, "en", case_fallback=False)
    assert strict.lemma("Refunds") == "refunds"


def test_cut_off_words_are_dropped(en: FastLemmatizer):
    assert en.kept("the meter- the meter is - broken") == ["meter", "break"]
    enc = en.encode(["the meter- the meter"])
    assert enc.lengths.tolist() == [4]
    assert enc.keys[0] == en.key(words("the meter- the meter", "en"))


def test_encode_sentences_and_keys(en: FastLemmatizer):
    enc = en.encode(["Hello there. The invoices arrived late!\nOk", "", "refund"])
    assert enc.n_sentences.tolist() == [3, 0, 1]
    assert enc.lengths.tolist() == [2, 4, 1, 1]
    assert enc.keys[0] == 0 and enc.keys[1] != 0  # two words: too short to be boilerplate
    assert enc.keys[1] == en.key(["the", "invoices", "arrived", "late"])
    assert enc.codes.size == sum(enc.lengths)
    kept = [en.types[decode(int(c))[0]] for c in enc.codes if c >= 0]
    assert kept == ["invoice", "arrive", "late", "refund"]
    assert decode(int(enc.codes[enc.codes >= 0][0])) == (en.types.index("invoice"), KEEP, True)


@pytest.mark.parametrize(
    ("lang", "text", "expected"),
    [
        # invented sentences
        (
            "es",
            "Los clientes llamaron porque los recibos de los pagos llegaron tarde, vale.",
            ["cliente", "llamar", "recibo", "pago", "llegar"],  # "tarde": a spaCy stop word
        ),
        (
            "de",
            "Die Kunden sagen, die Zahlungen wurden zweimal abgebucht, genau.",
            ["kunde", "sagen", "zahlung", "zweimal", "abbuchen"],
        ),
    ],
)
def test_other_languages(lang: str, text: str, expected: list[str]):
    assert lang in lookup_languages()
    processor = build_processor(PrepareSettings(lang=lang))
    assert processor.encoder.kept(text) == expected


def test_unknown_language_and_missing_table():
    with pytest.raises(ConfigError, match="not a language code spaCy knows"):
        spacy_stop_words("qq")
    with pytest.raises(ConfigError, match=r"no lookup lemma table.*languages with one: ca"):
        load_lemma_table("fa")


def test_spanish_corpus_end_to_end():
    # an invented Spanish corpus: 24 calls about two topics
    topics = [
        "factura cobro recibo pago importe tarifa descuento devolución saldo cargo",
        "avería corte técnico cable contador tensión tormenta reparación poste fusible",
    ]
    rng = random.Random(2)
    data = []
    for i in range(24):
        ws = topics[i % 2].split()
        turns = [("agent", "Buenos días, gracias por llamar, ¿en qué puedo ayudarle?")]
        for _ in range(4):
            picked = rng.sample(ws, 6)
            turns.append(("customer", "Pues el " + " y el ".join(picked) + ", vale."))
        data.append((f"es-{i}", turns))
    s = PrepareSettings(lang="es", vocab_min_docs=2, min_tokens=5, phrases=False, n_process=1)
    corpus, explain = prepare_corpus(lambda: [data], s, min_terms=10)
    assert corpus.n_docs == 24
    # spaCy's Spanish table maps some nouns to verbs (factura → facturar): we follow the table
    table = load_lemma_table("es")
    expected = {table.get(w, w) for w in ("factura", "avería", "técnico", "contador")}
    assert expected == {"facturar", "averiar", "técnico", "contador"}
    assert expected <= set(corpus.vocabulary)
    assert not {"pues", "vale", "el", "y"} & set(corpus.vocabulary)
    assert explain["lemmas"]["lang"] == "es"
    assert explain["boilerplate"]["sentences"][0]["transcripts"] == 24


# -- the spaCy pipeline path ----------------------------------------------------------------
@pytest.fixture(scope="module")
def tagged_pipeline(tmp_path_factory) -> Path:
    """A small installed-style pipeline folder: blank English + rule POS + lookup lemmas."""
    nlp = spacy.blank("en")
    ruler = nlp.add_pipe("attribute_ruler")
    nlp.add_pipe("lemmatizer", config={"mode": "lookup"})
    nlp.initialize()  # loads the lookup table from spacy-lookups-data (no download)
    nouns = ["invoice", "invoices", "refund", "refunds", "meter", "meters", "engineer"]
    verbs = ["charged", "visited", "read", "arrived"]
    ruler.add(patterns=[[{"LOWER": {"IN": nouns}}]], attrs={"POS": "NOUN"})
    ruler.add(patterns=[[{"LOWER": {"IN": verbs}}]], attrs={"POS": "VERB"})
    folder = tmp_path_factory.mktemp("pipe") / "tagged_en"
    nlp.to_disk(folder)
    return folder


def test_pipeline_path_filters_parts_of_speech(tagged_pipeline: Path, en_filter: TokenFilter):
    nouns = SpacyLemmatizer.load(str(tagged_pipeline), en_filter, lang="en", pos_keep=["NOUN"])
    text = "The engineer visited. The meters were read and the invoices charged twice."
    assert nouns.kept(text) == ["engineer", "meter", "invoice"]
    both = SpacyLemmatizer.load(
        str(tagged_pipeline), en_filter, lang="en", pos_keep=["NOUN", "VERB"]
    )
    assert both.kept(text) == ["engineer", "visit", "meter", "read", "invoice", "charge"]
    enc = both.encode([text])
    assert enc.n_sentences.tolist() == [2] and len(enc.keys) == 2
    assert enc.codes.size == sum(enc.lengths)


def test_pipeline_path_in_the_chain(tagged_pipeline: Path):
    data = [
        (
            f"p{i}",
            [("customer", f"The invoices {i} were charged. The engineer visited the meters.")],
        )
        for i in range(6)
    ]
    s = PrepareSettings(
        pipeline=str(tagged_pipeline),
        pos_keep=["NOUN"],
        vocab_min_docs=1,
        min_tokens=1,
        boilerplate_min_share=0.0,
        phrases=False,
        vocab_max_doc_share=1.0,
    )
    corpus, explain = prepare_corpus(lambda: [data], s, min_terms=1, min_transcripts=1)
    assert sorted(corpus.vocabulary) == ["engineer", "invoice", "meter"]
    assert explain["filter"]["removed"]["part of speech"] == 6 * 2  # charge, visit
    assert explain["lemmas"]["path"].startswith("spaCy pipeline")
    assert np.asarray(corpus.counts.sum(axis=1)).ravel().tolist() == [3] * 6


def test_pipeline_without_tagger_needs_empty_pos_keep(tmp_path: Path, en_filter: TokenFilter):
    folder = tmp_path / "blank_en"
    spacy.blank("en").to_disk(folder)
    untagged = SpacyLemmatizer.load(str(folder), en_filter, lang="en", pos_keep=["NOUN"])
    with pytest.raises(ConfigError, match=r"assigns no part of speech.*pos_keep = \[\]"):
        untagged.kept("The invoices were charged")
    plain = SpacyLemmatizer.load(str(folder), en_filter, lang="en", pos_keep=[])
    assert plain.kept("The invoices were charged") == ["invoices", "charged"]  # no lemmatizer


def test_pipeline_not_installed_or_other_language(tmp_path: Path, en_filter: TokenFilter):
    with pytest.raises(ConfigError, match=r'no installed spaCy pipeline.*pipeline = ""'):
        SpacyLemmatizer.load("xx_no_such_pipeline_sm", en_filter, lang="en")
    folder = tmp_path / "blank_de"
    spacy.blank("de").to_disk(folder)
    with pytest.raises(ConfigError, match="is for language 'de'"):
        SpacyLemmatizer.load(str(folder), en_filter, lang="en")
