"""The whole chain on a small invented corpus whose answers are known."""

from __future__ import annotations

import random

import numpy as np
import pytest

from talkthemes.config import PrepareSettings
from talkthemes.errors import InputError
from talkthemes.prepare.chain import STAGES, prepare_corpus
from talkthemes.prepare.corpus import OOV

TOPICS = {
    "billing": "invoice refund payment balance statement overdraft credit discount tariff "
    "receipt surcharge instalment rebate ledger voucher penalty arrears billing cheque debit",
    "outage": "outage power cable transformer storm engineer voltage fuse substation blackout "
    "generator wire circuit lightning repair pole crew flicker socket torch",
    "moving": "address tenancy landlord removal flat postcode tenant lease furniture van "
    "apartment garage neighbour relocation property cottage mortgage garden estate bungalow",
    "water": "leak pipe tap pressure sewer drain valve plumber boiler radiator flood puddle "
    "hose cistern basin shower sink kettle reservoir hydrant",
}
GREETING = "Thank you for calling Brindle Utilities, this is the support line speaking."
CLOSING = "Is there anything else I can help you with today?"
FILLERS = ["um", "uh", "yeah", "okay", "you know", "hmm"]


def make_call(rng: random.Random, i: int, topic: str) -> tuple[str, list[tuple[str, str]]]:
    """One invented call: scripted agent lines, customer turns about ``topic``, some PII."""
    words = TOPICS[topic].split()
    turns = [("agent", GREETING), ("customer", f"{rng.choice(FILLERS)}, hello there.")]
    for j in range(5):
        picked = rng.sample(words, 6)
        filler = rng.choice(FILLERS)
        sentence = f"{filler} the {picked[0]} and the {picked[1]} {picked[2]} were {picked[3]}"
        if topic == "billing" and j < 2:
            sentence += " and then a late fee"
        turns.append(("customer", sentence + f", {picked[4]} {picked[5]}."))
        turns.append(("agent", f"I see, the {rng.choice(words)} then."))
    if i % 3 == 0:
        turns.append(
            ("customer", "My e-mail is jane.quill@examplemail.com and card 4111 1111 1111 1111.")
        )
    if i % 4 == 0:
        turns.append(("customer", "Call me on (555) 010-4477, account 88812345, I'm [REDACTED]."))
    turns.append(("agent", CLOSING))
    return f"call-{i:03d}", turns


def make_corpus(n: int = 80, seed: int = 3) -> list[tuple[str, list[tuple[str, str]]]]:
    rng = random.Random(seed)
    names = sorted(TOPICS)
    return [make_call(rng, i, names[i % len(names)]) for i in range(n)]


def source_of(data, batch_size: int = 16):
    def source():
        for i in range(0, len(data), batch_size):
            yield data[i : i + batch_size]

    return source


SETTINGS = PrepareSettings(vocab_min_docs=3, phrase_min_count=5, min_tokens=10, n_process=1)


@pytest.fixture(scope="module")
def prepared():
    data = make_corpus()
    data.append(("empty-call", []))
    data.append(("agent-only", [("agent", GREETING), ("agent", CLOSING)]))
    data.append(("fillers-only", [("customer", "Um, yeah, okay. Hmm, uh, okay then.")]))
    data.append(("too-short", [("customer", "The invoice and the refund.")]))
    calls: list[tuple[str, int, int]] = []
    corpus, explain = prepare_corpus(
        source_of(data),
        SETTINGS,
        total=len(data),
        progress=lambda done, total, what: calls.append((what, done, total)),
    )
    return data, corpus, explain, calls


def test_corpus_is_consistent(prepared):
    _, corpus, _, _ = prepared
    corpus.validate()
    assert corpus.counts.dtype == np.int32
    assert corpus.tokens.dtype == np.int32
    assert corpus.offsets.dtype == np.int64
    assert corpus.n_docs == 80
    assert corpus.doc_ids == [f"call-{i:03d}" for i in range(80)]
    # every kept transcript has at least min_tokens vocabulary tokens
    assert np.asarray(corpus.counts.sum(axis=1)).ravel().min() >= SETTINGS.min_tokens
    # every term meets the document-frequency cuts on the kept transcripts
    df = np.bincount(corpus.counts.indices, minlength=corpus.n_terms)
    assert df.min() >= SETTINGS.vocab_min_docs
    assert df.max() <= SETTINGS.vocab_max_doc_share * corpus.n_docs


def test_topic_words_become_the_vocabulary(prepared):
    _, corpus, _, _ = prepared
    vocab = set(corpus.vocabulary)
    for word in ("invoice", "transformer", "landlord", "plumber", "voltage", "cistern"):
        assert word in vocab
    # inflected forms are lemmatised with spaCy's lookup table
    assert "refund" in vocab


def test_stop_words_fillers_and_short_tokens_are_gone(prepared):
    _, corpus, explain, _ = prepared
    vocab = set(corpus.vocabulary)
    for word in ("the", "and", "were", "um", "uh", "yeah", "okay", "hmm", "know", "see"):
        assert word not in vocab
    removed = explain["filter"]["removed"]
    assert removed["spaCy stop word"] > 0
    assert removed["filler or back-channel"] > 0
    assert removed["too short"] > 0


def test_pii_never_reaches_the_vocabulary(prepared):
    _, corpus, explain, _ = prepared
    vocab = set(corpus.vocabulary)
    for word in ("jane", "quill", "examplemail", "com", "redacted", "4111", "4477"):
        assert not any(word in term.split("_") for term in vocab)
    counts = explain["scrub"]["removed"]
    assert counts["email"] == 27  # calls 0, 3, ..., 78
    assert counts["card"] == 27
    assert counts["phone"] == 20  # calls 0, 4, ..., 76
    assert counts["number"] == 20
    assert counts["tag"] == 20


def test_scripted_sentences_are_found_as_boilerplate(prepared):
    _, corpus, explain, _ = prepared
    found = {s["sentence"]: s for s in explain["boilerplate"]["sentences"]}
    greeting = "thank you for calling brindle utilities this is the support line speaking"
    closing = "is there anything else i can help you with today"
    assert found[greeting]["transcripts"] == 81  # 80 calls + the agent-only one
    assert found[closing]["transcripts"] == 81
    assert found[greeting]["share"] == pytest.approx(81 / 83, abs=1e-4)
    # the boilerplate words never reach the vocabulary
    assert "brindle" not in corpus.vocabulary and "utility" not in corpus.vocabulary


def test_collocation_becomes_a_phrase(prepared):
    _, corpus, explain, _ = prepared
    assert "late_fee" in corpus.vocabulary
    top = {p["phrase"]: p for p in explain["phrases"]["top"]}
    assert top["late_fee"]["count"] == 40  # two per billing call, 20 billing calls
    assert 0.5 < top["late_fee"]["npmi"] <= 1.0
    # the joined words no longer occur alone where they were joined
    assert "late" not in corpus.vocabulary


def test_excluded_transcripts_have_reasons(prepared):
    _, corpus, explain, _ = prepared
    reasons = dict(corpus.excluded)
    assert reasons["empty-call"] == "no words"
    assert reasons["agent-only"] == "only boilerplate sentences"
    assert reasons["fillers-only"] == "no tokens left after the filter"
    assert reasons["too-short"].endswith("fewer than min_tokens = 10")
    assert explain["transcripts"] == {"read": 84, "usable": 80, "excluded": 4}
    assert explain["min_tokens"]["excluded"] == 1
    assert [e["id"] for e in explain["excluded"]] == [t for t, _ in corpus.excluded]


def test_token_stream_keeps_order_and_oov_positions(prepared):
    data, corpus, _, _ = prepared
    vocab = corpus.vocabulary
    first = [vocab[i] if i != OOV else None for i in corpus.doc_tokens(0).tolist()]
    # call 0 is a billing call: its first topic word pair is in spoken order
    spoken = data[0][1][2][1].lower()
    kept = [w for w in first if w is not None]
    assert kept[0].split("_")[0] in spoken
    assert corpus.offsets[-1] == corpus.tokens.size


def test_progress_reports_every_stage(prepared):
    data, _, _, calls = prepared
    stages = [c[0] for c in calls]
    assert [s for s in STAGES if s in stages] == list(STAGES)
    reads = [c for c in calls if c[0] == "read"]
    assert reads[0] == ("read", 0, len(data))
    assert reads[-1] == ("read", len(data), len(data))


def test_batching_and_processes_do_not_change_the_result():
    data = make_corpus(60, seed=5)
    one, _ = prepare_corpus(source_of(data, 60), SETTINGS, min_terms=10)
    other = SETTINGS.model_copy(update={"n_process": 2, "batch_size": 7})
    two, _ = prepare_corpus(source_of(data, 7), other, min_terms=10)
    assert one.vocabulary == two.vocabulary
    assert one.doc_ids == two.doc_ids
    assert np.array_equal(one.tokens, two.tokens)
    assert (one.counts != two.counts).nnz == 0


def test_roles_customer_drops_agent_turns():
    data = make_corpus(40)
    s = SETTINGS.model_copy(update={"roles": "customer", "boilerplate_min_share": 0.0})
    corpus, explain = prepare_corpus(source_of(data), s, min_terms=10)
    assert explain["roles"]["turns_dropped"] == 40 * 7
    assert explain["roles"]["words_removed"] > 0
    assert "brindle" not in corpus.vocabulary  # only agents say it
    assert explain["boilerplate"]["sentences"] == []


def test_too_small_vocabulary_names_the_setting():
    data = make_corpus(40)
    s = SETTINGS.model_copy(update={"vocab_min_docs": 30})
    with pytest.raises(
        InputError, match=r"terms left .*lower \[prepare\] vocab_min_docs \(now 30\)"
    ):
        prepare_corpus(source_of(data), s)


def test_too_few_transcripts_names_the_setting():
    data = make_corpus(40)
    s = SETTINGS.model_copy(update={"min_tokens": 500})
    with pytest.raises(InputError, match=r"usable transcripts .*lower \[prepare\] min_tokens"):
        prepare_corpus(source_of(data), s, min_terms=10)
    with pytest.raises(InputError, match="only 10 transcripts in the store"):
        prepare_corpus(source_of(make_corpus(10)), SETTINGS)


def test_odd_input_never_crashes():
    data = make_corpus(30)
    data += [
        ("blank", [("customer", "   "), ("agent", "")]),
        ("punctuation", [("customer", "... ?! -- ***")]),
        ("digits", [("customer", "12345 4111111111111111")]),
        ("numbers-left", [("customer", "678 and 12345")]),
        ("unicode", [("customer", "Cafe\u0301 ñandú 東京 — “quoted” text\u200b here")]),
    ]
    corpus, explain = prepare_corpus(source_of(data, 5), SETTINGS, min_terms=10)
    reasons = dict(corpus.excluded)
    assert reasons["blank"] == "no words"
    assert reasons["punctuation"] == "no words"
    assert reasons["digits"] == "nothing left after scrub"
    assert reasons["numbers-left"] == "no tokens left after the filter"
    assert reasons["unicode"].startswith("0 tokens in the vocabulary")
    assert explain["scrub"]["emptied"] == 1
    assert explain["roles"]["emptied"] == 2
