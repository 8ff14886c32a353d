"""Unit tests for talkthemes.metrics.coherence and cooccurrence on tiny invented corpora."""

from __future__ import annotations

import logging
import math

import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from talkthemes.errors import InputError
from talkthemes.metrics import windows as counting
from talkthemes.metrics.coherence import EPSILON, MEASURES, c_npmi, c_uci, c_v, score, u_mass
from talkthemes.metrics.cooccurrence import (
    CoherenceReference,
    build_reference,
    document_counts,
    union_of_topics,
    window_counts,
)


def sliding_window_counts_bruteforce(
    tokens: np.ndarray, offsets: np.ndarray, word_ids: np.ndarray, window: int
) -> tuple[np.ndarray, np.ndarray, int]:
    """Slow reference: a Python set per window, exactly as the definition reads."""
    ids = sorted(set(int(w) for w in word_ids))
    index = {w: i for i, w in enumerate(ids)}
    occ = np.zeros(len(ids), dtype=np.int64)
    co = np.zeros((len(ids), len(ids)), dtype=np.int64)
    n = 0
    for d in range(len(offsets) - 1):
        doc = [int(t) for t in tokens[offsets[d] : offsets[d + 1]]]
        if len(doc) >= window:
            windows = [doc[i : i + window] for i in range(len(doc) - window + 1)]
        else:
            windows = [doc]
        for win in windows:
            n += 1
            present = {index[t] for t in win if t in index}
            for a in present:
                occ[a] += 1
                for b in present:
                    co[a, b] += 1
    return occ, co, n


def stream(docs: list[list[int]]) -> tuple[np.ndarray, np.ndarray]:
    tokens = np.array([t for d in docs for t in d], dtype=np.int32)
    offsets = np.concatenate([[0], np.cumsum([len(d) for d in docs])]).astype(np.int64)
    return tokens, offsets


def bow(docs: list[list[int]], n_terms: int) -> sp.csr_array:
    rows, cols = [], []
    for d, doc in enumerate(docs):
        for t in doc:
            if t >= 0:
                rows.append(d)
                cols.append(t)
    data = np.ones(len(rows), dtype=np.int64)
    return sp.csr_array((data, (rows, cols)), shape=(len(docs), n_terms))


# --- window counting -----------------------------------------------------------------


def test_repeated_word_counts_in_every_window_that_holds_a_copy() -> None:
    # a b a c x x with s = 3: windows [a b a] [b a c] [a c x] [c x x]
    a, b, c, x = 0, 1, 2, 3
    tokens, offsets = stream([[a, b, a, c, x, x]])
    got = window_counts(tokens, offsets, np.array([a, b, c]), 3)
    assert got.n_units == 4
    assert got.occurrences.tolist() == [3, 2, 3]
    dense = got.cooccurrences.toarray()
    assert dense[0, 2] == dense[2, 0] == 2  # a with c: [b a c], [a c x]
    assert dense[0, 1] == 2  # a with b: [a b a], [b a c]
    assert np.array_equal(np.diag(dense), got.occurrences)


def test_windows_never_cross_transcripts_and_short_or_empty_count_once() -> None:
    tokens, offsets = stream([[0], [], [1, -1, 1], [0, 1, 0, 0, 0]])
    got = window_counts(tokens, offsets, np.array([0, 1]), 4)
    # 1 + 1 (empty) + 1 (shorter than 4) + 2 windows
    assert got.n_units == 5
    assert got.occurrences.tolist() == [3, 3]
    assert got.cooccurrences.toarray()[0, 1] == 2  # only inside the last transcript


def test_placeholder_takes_a_slot_but_is_never_counted() -> None:
    tokens, offsets = stream([[0, -1, -1, 1]])
    got = window_counts(tokens, offsets, np.array([0, 1]), 2)
    assert got.n_units == 3
    assert got.occurrences.tolist() == [1, 1]
    assert got.cooccurrences.toarray()[0, 1] == 0


@st.composite
def corpora(draw: st.DrawFn) -> tuple[list[list[int]], int, list[int], int, int]:
    n_terms = draw(st.integers(1, 7))
    docs = draw(
        st.lists(st.lists(st.integers(-1, n_terms - 1), min_size=0, max_size=30), max_size=8)
    )
    word_ids = draw(st.lists(st.integers(0, n_terms - 1), min_size=1, max_size=n_terms))
    window = draw(st.integers(1, 12))
    chunk = draw(st.integers(1, 40))
    return docs, n_terms, word_ids, window, chunk


@settings(max_examples=150, deadline=None)
@given(corpora())
def test_window_counts_equal_bruteforce(case: tuple) -> None:
    docs, n_terms, word_ids, window, chunk = case
    tokens, offsets = stream(docs)
    got = window_counts(
        tokens, offsets, np.array(word_ids), window, n_terms=n_terms, chunk_tokens=chunk
    )
    occ, co, n = sliding_window_counts_bruteforce(tokens, offsets, np.array(word_ids), window)
    assert got.n_units == n
    assert np.array_equal(got.occurrences, occ)
    assert np.array_equal(got.cooccurrences.toarray(), co)
    assert np.array_equal(got.word_ids, np.unique(word_ids))


@settings(max_examples=40, deadline=None)
@given(corpora())
def test_sparse_accumulation_and_small_pair_blocks_change_nothing(case: tuple) -> None:
    docs, _, word_ids, window, chunk = case
    tokens, offsets = stream(docs)
    dense = window_counts(tokens, offsets, np.array(word_ids), window, chunk_tokens=chunk)
    saved = counting._DENSE_MAX_WORDS, counting._PAIR_BLOCK
    counting._DENSE_MAX_WORDS, counting._PAIR_BLOCK = 0, 1
    try:
        sparse = window_counts(tokens, offsets, np.array(word_ids), window, chunk_tokens=chunk)
    finally:
        counting._DENSE_MAX_WORDS, counting._PAIR_BLOCK = saved
    assert np.array_equal(dense.cooccurrences.toarray(), sparse.cooccurrences.toarray())
    assert np.array_equal(dense.occurrences, sparse.occurrences)


def test_rows_select_a_sub_corpus() -> None:
    docs = [[0, 1, 2, 0], [2, 2, 1], [0, 3, 3, 1, 0], [1]]
    tokens, offsets = stream(docs)
    ids = np.array([0, 1, 2, 3])
    picked = [2, 0]
    sub_tokens, sub_offsets = stream([docs[i] for i in picked])
    got = window_counts(tokens, offsets, ids, 3, rows=np.array(picked))
    want = window_counts(sub_tokens, sub_offsets, ids, 3)
    assert got.n_units == want.n_units
    assert np.array_equal(got.cooccurrences.toarray(), want.cooccurrences.toarray())
    docs_got = document_counts(bow(docs, 4), ids, rows=np.array(picked))
    docs_want = document_counts(bow([docs[i] for i in picked], 4), ids)
    assert docs_got.n_units == 2
    assert np.array_equal(docs_got.cooccurrences.toarray(), docs_want.cooccurrences.toarray())


def test_document_counts_are_boolean_presence() -> None:
    counts = sp.csr_array(np.array([[3, 1, 0], [0, 2, 0], [1, 0, 0], [0, 0, 0]]))
    got = document_counts(counts, np.array([0, 1, 2]))
    assert got.n_units == 4
    assert got.window is None
    assert got.occurrences.tolist() == [2, 2, 0]
    assert got.cooccurrences.toarray().tolist() == [[2, 1, 0], [1, 2, 0], [0, 0, 0]]


# --- measures on a tiny corpus with a hand-computed answer ---------------------------

DOCS = [[0, 1], [0, 1], [0, 2], [3]]  # every transcript shorter than the windows
TOPIC = np.array([[0, 1, 2]])


@pytest.fixture
def reference() -> CoherenceReference:
    tokens, offsets = stream(DOCS)
    return build_reference(tokens, offsets, bow(DOCS, 4), union_of_topics([TOPIC]))


def test_u_mass_by_hand(reference: CoherenceReference) -> None:
    # N = 4; D(0)=3, D(1)=2, D(2)=1; D(0,1)=2, D(0,2)=1, D(1,2)=0; w* is the higher-ranked
    want = np.mean(
        [
            math.log((2 / 4 + EPSILON) / (3 / 4)),
            math.log((1 / 4 + EPSILON) / (3 / 4)),
            math.log((0 / 4 + EPSILON) / (2 / 4)),
        ]
    )
    got = u_mass(reference, TOPIC)
    assert got.measure == "u_mass"
    assert got.per_topic[0] == pytest.approx(want, abs=1e-12)


def test_u_mass_depends_on_word_order(reference: CoherenceReference) -> None:
    assert u_mass(reference, TOPIC).mean != pytest.approx(u_mass(reference, TOPIC[:, ::-1]).mean)


def pmi(joint: float, pa: float, pb: float) -> float:
    return math.log((joint + EPSILON) / (pa * pb))


def npmi(joint: float, pa: float, pb: float) -> float:
    return pmi(joint, pa, pb) / -math.log(joint + EPSILON)


def test_c_uci_and_c_npmi_by_hand(reference: CoherenceReference) -> None:
    p = {0: 3 / 4, 1: 2 / 4, 2: 1 / 4}
    joint = {(0, 1): 2 / 4, (0, 2): 1 / 4, (1, 2): 0.0}
    uci = np.mean([pmi(j, p[a], p[b]) for (a, b), j in joint.items()])
    nm = np.mean([npmi(j, p[a], p[b]) for (a, b), j in joint.items()])
    assert c_uci(reference, TOPIC).per_topic[0] == pytest.approx(uci, abs=1e-12)
    assert c_npmi(reference, TOPIC).per_topic[0] == pytest.approx(nm, abs=1e-12)


def test_c_v_by_definition(reference: CoherenceReference) -> None:
    p = [3 / 4, 2 / 4, 1 / 4]
    joint = np.array([[3 / 4, 2 / 4, 1 / 4], [2 / 4, 2 / 4, 0.0], [1 / 4, 0.0, 1 / 4]])
    m = np.array([[npmi(joint[i, j], p[i], p[j]) for j in range(3)] for i in range(3)])
    whole = [sum(m[i, j] for i in range(3)) for j in range(3)]
    cosines = []
    for i in range(3):
        dot = sum(m[i, j] * whole[j] for j in range(3))
        norm = math.sqrt(sum(v * v for v in m[i])) * math.sqrt(sum(v * v for v in whole))
        cosines.append(dot / norm)
    assert c_v(reference, TOPIC).per_topic[0] == pytest.approx(np.mean(cosines), abs=1e-12)


def test_registry_and_result(reference: CoherenceReference) -> None:
    assert set(MEASURES) == {"c_v", "c_npmi", "c_uci", "u_mass"}
    topics = np.array([[0, 1, 2], [2, 0, 1]])
    for name in MEASURES:
        got = score(reference, topics, name)
        assert got.measure == name
        assert got.per_topic.shape == (2,)
        assert got.mean == pytest.approx(got.per_topic.mean())
    assert (
        score(reference, topics, "c_v").per_topic.tolist()
        == c_v(reference, topics).per_topic.tolist()
    )


def test_window_override_needs_counts_for_that_window(
    reference: CoherenceReference,
) -> None:
    with pytest.raises(InputError, match="no counts for window 5"):
        score(reference, TOPIC, "c_npmi", window=5)
    with pytest.raises(InputError, match="u_mass counts documents"):
        score(reference, TOPIC, "u_mass", window=10)
    assert sorted(reference.windows) == [10, 110]
    tokens, offsets = stream(DOCS)
    ref = build_reference(tokens, offsets, None, np.array([0, 1, 2]), windows=(1,))
    # window 1: every token its own window, N = 7 windows (one per token)
    assert ref.counts(1).n_units == 7
    with pytest.raises(InputError, match="no document counts"):
        u_mass(ref, TOPIC)


def test_word_absent_from_reference_is_nan_and_warned(caplog: pytest.LogCaptureFixture) -> None:
    tokens, offsets = stream(DOCS)
    ref = build_reference(
        tokens, offsets, bow(DOCS, 4), np.array([0, 1, 2, 3]), rows=np.array([0, 1, 3])
    )
    caplog.set_level(logging.WARNING, logger="talkthemes.metrics.coherence")
    got = c_npmi(ref, np.array([[0, 1, 2], [0, 1, 3]]))
    assert np.isnan(got.per_topic[0])  # word 2 only occurs in the skipped transcript
    assert np.isfinite(got.per_topic[1])
    assert math.isnan(got.mean)
    assert "1 of 2 topics" in caplog.text
    assert np.isnan(u_mass(ref, np.array([[2, 0, 1]])).per_topic[0])
    assert np.isnan(c_v(ref, np.array([[0, 2, 1]])).per_topic[0])


def test_chunking_does_not_change_counts() -> None:
    rng = np.random.default_rng(3)
    docs = [list(rng.integers(-1, 6, rng.integers(0, 40))) for _ in range(25)]
    tokens, offsets = stream(docs)
    ids = np.arange(6)
    one = build_reference(tokens, offsets, bow(docs, 6), ids, chunk_tokens=1)
    big = build_reference(tokens, offsets, bow(docs, 6), ids)
    for s in (10, 110):
        assert np.array_equal(
            one.counts(s).cooccurrences.toarray(), big.counts(s).cooccurrences.toarray()
        )


# --- input errors ---------------------------------------------------------------------


def test_topic_errors_name_the_topic(reference: CoherenceReference) -> None:
    with pytest.raises(InputError, match=r"topic 1 word 2 \(term id 9\)"):
        c_v(reference, np.array([[0, 1, 2], [0, 1, 9]]))
    with pytest.raises(InputError, match="topic 0 lists a term id twice"):
        c_v(reference, np.array([[0, 1, 0]]))
    with pytest.raises(InputError, match="at least 2 words"):
        c_v(reference, np.array([[0]]))
    with pytest.raises(InputError, match="unknown"):
        score(reference, TOPIC, "c_w2v")


def test_stream_errors_name_the_transcript() -> None:
    tokens, offsets = stream([[0, 1], [1, 7]])
    with pytest.raises(InputError, match="transcript 1, token 1 has id 7"):
        build_reference(tokens, offsets, bow([[0, 1], [1]], 4), np.array([0, 1]))
    with pytest.raises(InputError, match="transcript 1 ends before it starts"):
        window_counts(tokens, np.array([0, 3, 2, 4]), np.array([0]), 2)
    with pytest.raises(InputError, match="2 rows but the token stream has 3"):
        build_reference(tokens, np.array([0, 1, 2, 4]), bow([[0], [1]], 8), np.array([0]))
    with pytest.raises(InputError, match=r"rows\[1\] = 5"):
        window_counts(tokens, offsets, np.array([0]), 2, rows=np.array([0, 5]))
    with pytest.raises(InputError, match="outside the vocabulary"):
        document_counts(bow([[0]], 2), np.array([0, 3]))


def test_union_of_topics() -> None:
    got = union_of_topics([np.array([[3, 1], [1, 2]]), np.array([[7, 3]])])
    assert got.tolist() == [1, 2, 3, 7]
    assert union_of_topics([]).size == 0
