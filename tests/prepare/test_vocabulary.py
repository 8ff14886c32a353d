"""Vocabulary cuts and the minimum transcript length, on tiny matrices with known answers."""

from __future__ import annotations

import numpy as np

from talkthemes.prepare.vocabulary import doc_term_matrix, prune_vocabulary


def matrix(docs: list[list[int]], n_terms: int):
    tokens = np.array([t for d in docs for t in d], dtype=np.int32)
    lengths = np.array([len(d) for d in docs])
    return doc_term_matrix(tokens, lengths, n_terms)


def test_doc_term_matrix_counts():
    x = matrix([[0, 1, 0], [], [2, 2, 2]], 4)
    assert x.toarray().tolist() == [[2, 1, 0, 0], [0, 0, 0, 0], [0, 0, 3, 0]]
    assert x.dtype == np.int32 and x.has_canonical_format


def test_min_docs_and_size_then_min_tokens():
    # term 0 in all 4 docs, term 1 in 3, terms 2 and 3 in 2, term 4 in 1
    docs = [[0, 1, 2, 3], [0, 1, 2, 3], [0, 1, 4], [0]]
    types = ["alpha", "bravo", "delta", "charlie", "echo"]
    cut = prune_vocabulary(
        matrix(docs, 5), types, min_docs=2, max_doc_share=1.0, max_size=2, min_tokens=2
    )
    assert [types[i] for i in cut.terms] == ["alpha", "bravo"]
    assert cut.removed == {"min_docs": 1, "max_doc_share": 0, "max_size": 2, "after_exclusion": 0}
    assert cut.before == 5
    # doc 3 has one vocabulary token: excluded by min_tokens
    assert cut.docs.tolist() == [True, True, True, False]
    assert cut.short_docs.tolist() == [False, False, False, True]
    assert cut.doc_freq.tolist() == [3, 3]


def test_size_ties_are_broken_by_the_term():
    docs = [[0, 1, 2, 3], [0, 1, 2, 3], [0, 1, 4], [0]]
    types = ["alpha", "bravo", "delta", "charlie", "echo"]
    cut = prune_vocabulary(
        matrix(docs, 5), types, min_docs=1, max_doc_share=1.0, max_size=3, min_tokens=1
    )
    # charlie and delta are both in 2 transcripts: charlie comes first alphabetically
    assert [types[i] for i in cut.terms] == ["alpha", "bravo", "charlie"]


def test_max_doc_share():
    docs = [[0, 1], [0, 2], [0, 1], [0, 2]]
    cut = prune_vocabulary(
        matrix(docs, 3),
        ["a", "b", "c"],
        min_docs=1,
        max_doc_share=0.9,
        max_size=10,
        min_tokens=1,
    )
    assert sorted(cut.terms.tolist()) == [1, 2]
    assert cut.removed["max_doc_share"] == 1
    assert cut.docs.all()


def test_repeats_until_stable():
    # term 4 is too rare; then doc 2 ([1, 4]) is too short; without doc 2, term 1 is too rare
    docs = [[0, 2, 2], [0, 2, 3], [1, 4], [1, 3, 3], [3, 2]]
    cut = prune_vocabulary(
        matrix(docs, 5),
        list("abcde"),
        min_docs=2,
        max_doc_share=1.0,
        max_size=10,
        min_tokens=2,
    )
    assert cut.docs.tolist() == [True, True, False, True, True]
    assert sorted(cut.terms.tolist()) == [0, 2, 3]
    assert cut.removed["min_docs"] == 1 and cut.removed["after_exclusion"] == 1
    assert cut.rounds == 3
    x = matrix(docs, 5)[np.flatnonzero(cut.docs)][:, cut.terms]
    assert np.asarray(x.sum(axis=1)).ravel().min() >= 2
    assert (np.bincount(x.indices, minlength=x.shape[1]) >= 2).all()


def test_empty_documents_are_not_counted_for_share():
    docs = [[0, 1], [0, 1], [], []]
    cut = prune_vocabulary(
        matrix(docs, 2), ["a", "b"], min_docs=1, max_doc_share=0.6, max_size=10, min_tokens=1
    )
    # both terms are in 2 of the 2 transcripts with tokens: 100% > 60%
    assert cut.terms.size == 0
    assert not cut.short_docs[2] and not cut.short_docs[3]
