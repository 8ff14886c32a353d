"""Phrases: our numpy counting + gensim's frozen NPMI model equals gensim used directly."""

from __future__ import annotations

import itertools
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
# the stream is worked on in pieces of whole sentences (bounded memory on big corpora):
# one token per piece (every sentence a piece of its own), a few sentences, all at once
@pytest.mark.parametrize("chunk", [1, 37, 4_000_000])
def test_same_phrases_and_output_as_gensim(
    seed: int, threshold: float, min_count: int, chunk: int, monkeypatch
):
    monkeypatch.setattr("talkthemes.prepare.pieces.CHUNK_TOKENS", chunk)
    sentences = random_sentences(seed)
    tokens, lengths, types = encode(sentences)
    model, phrasegrams = learn_phrases(
        tokens, lengths, types, threshold=threshold, min_count=min_count
    )

    reference = Phrases(sentences, min_count=min_count, threshold=threshold, scoring="npmi")
    ref_frozen = reference.freeze()
    assert set(model.names) == set(ref_frozen.phrasegrams)
    for name, score in zip(model.names, model.scores, strict=True):
        assert score == pytest.approx(ref_frozen.phrasegrams[name], abs=1e-12)
    assert phrasegrams == ref_frozen.phrasegrams  # the same floats

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


# -- only adjacent words -------------------------------------------------------------------
def test_unit_chunks_cover_the_stream_in_whole_units():
    from talkthemes.prepare.pieces import unit_chunks

    lengths = np.array([3, 0, 5, 2, 9, 0, 1])
    pieces = unit_chunks(lengths, 6)
    assert pieces == [(0, 3, 0, 2), (3, 8, 2, 3), (8, 10, 3, 4), (10, 19, 4, 5), (19, 20, 5, 7)]
    # contiguous, whole units, nothing left out
    assert pieces[0][0] == 0 and pieces[-1][1] == lengths.sum() and pieces[-1][3] == lengths.size
    for (_, end, _, stop), (start, _, unit, _) in itertools.pairwise(pieces):
        assert end == start and stop == unit


@pytest.mark.parametrize("chunk", [1, 3, 4_000_000])
def test_run_lengths_and_join_runs_keep_the_sentence_layout(chunk: int, monkeypatch):
    from talkthemes.prepare.phrases import PhraseModel, join_runs, run_lengths

    monkeypatch.setattr("talkthemes.prepare.pieces.CHUNK_TOKENS", chunk)

    # two sentences: [a b | a b] and [b a b]; a gap inside the first sentence
    tokens = np.array([0, 1, 0, 1, 1, 0, 1], dtype=np.int32)
    breaks = np.array([1, 0, 1, 0, 1, 0, 0], dtype=bool)
    assert run_lengths(breaks).tolist() == [2, 2, 3]
    model = PhraseModel(
        pairs=np.array([[0, 1]]),
        scores=np.array([0.9]),
        names=["a_b"],
        bigram_counts=np.array([3]),
    )
    out, new_breaks, sent_kept, joined = join_runs(tokens, breaks, np.array([4, 3]), model, 2)
    assert out.tolist() == [2, 2, 1, 2]
    assert new_breaks.tolist() == [True, True, True, False]
    assert sent_kept.tolist() == [2, 2]
    assert joined.tolist() == [3]
    with pytest.raises(ValueError, match="start a run"):
        run_lengths(np.array([False, True]))


def test_breaks_mark_where_words_were_removed():
    from talkthemes.config import PrepareSettings
    from talkthemes.prepare.chain import build_processor

    processor = build_processor(PrepareSettings())
    enc = processor.encoder
    text, *_ = processor.text(
        [("customer", "Smart, um, meter charges the late fee. Account 12345678 balance")]
    )
    res = enc.encode([text])
    kept = res.codes >= 0
    terms = [enc.types[c >> 1] for c in res.codes[kept].tolist()]
    assert terms == ["smart", "meter", "charge", "late", "fee", "account", "balance"]
    # "um" is a filler (no break), "the" a stop word (break), the number was scrubbed
    # (break), and every sentence starts a run
    assert res.breaks[kept].tolist() == [True, False, False, True, False, True, True]


def _planted(n_calls: int = 60) -> list[tuple[str, list[tuple[str, str]]]]:
    """Invented calls: "parcel" and "depot" always have a stop word between them, "smart" and
    "meter" are always adjacent or parted by a filler only."""
    rng = random.Random(9)
    topic = ["refund", "invoice", "driver", "courier", "label", "postcode", "window"]
    calls = []
    for i in range(n_calls):
        turns = []
        for _ in range(4):
            w = rng.sample(topic, 3)
            turns.append(("customer", f"The parcel to the depot was {w[0]} {w[1]}."))
            turns.append(("customer", f"My smart, um, meter and {w[2]} then."))
            turns.append(("customer", f"Parcel. Depot {w[0]}, {w[1]} {w[2]}."))
        calls.append((f"c{i}", turns))
    return calls


def test_no_phrase_joins_words_that_were_never_adjacent():
    from talkthemes.config import PrepareSettings
    from talkthemes.prepare.chain import prepare_corpus

    settings = PrepareSettings(
        n_process=1,
        vocab_min_docs=2,
        min_tokens=5,
        phrase_min_count=5,
        phrase_threshold=0.3,
        boilerplate_min_share=0.0,
        vocab_max_doc_share=1.0,
    )
    data = _planted()
    corpus, explain = prepare_corpus(lambda: [data], settings, min_terms=5)
    names = {p["phrase"] for p in explain["phrases"]["top"]}
    # "parcel ... depot" is frequent, but never adjacent: the stop words part them, and the
    # sentence break parts "Parcel. Depot"
    assert "parcel_depot" not in names and "parcel_depot" not in corpus.vocabulary
    assert {"parcel", "depot"} <= set(corpus.vocabulary)
    # a filler does not part words: "smart, um, meter" is adjacent
    assert "smart_meter" in names
    # every phrase learned joins words that are adjacent somewhere in the text
    adjacent = set()
    for _, turns in data:
        for _, text in turns:
            for sentence in text.lower().replace(",", "").split("."):
                ws = [w for w in sentence.split() if w not in {"um"}]
                adjacent.update(itertools.pairwise(ws))
    for name in names:
        first, second = name.split("_")
        assert any(a.startswith(first[:4]) and b.startswith(second[:4]) for a, b in adjacent)


@pytest.mark.parametrize("chunk", [1, 5, 4_000_000])
def test_term_counts_in_pieces_equal_counts_in_one(chunk: int, monkeypatch) -> None:
    """The document–term counts are built a piece of transcripts at a time; the matrix is
    the one a single pass gives (scipy's own sum of duplicates is the reference)."""
    import scipy.sparse as sp

    from talkthemes.prepare.vocabulary import doc_term_matrix

    monkeypatch.setattr("talkthemes.prepare.pieces.CHUNK_TOKENS", chunk)
    rng = np.random.default_rng(4)
    lengths = rng.integers(0, 9, size=40)
    tokens = rng.integers(0, 12, size=int(lengths.sum())).astype(np.int32)
    got = doc_term_matrix(tokens, lengths, 12)
    rows = np.repeat(np.arange(lengths.size), lengths)
    want = sp.coo_matrix((np.ones(tokens.size), (rows, tokens)), shape=(40, 12)).tocsr()
    assert got.shape == (40, 12) and got.dtype == np.int32 and got.has_sorted_indices
    assert (got != want).nnz == 0
    assert doc_term_matrix(np.zeros(0, dtype=np.int32), np.zeros(0), 3).shape == (0, 3)
