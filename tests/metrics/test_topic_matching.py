"""Unit tests for talkthemes.metrics.matching (invented cost matrices)."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.errors import InputError
from talkthemes.metrics.matching import (
    match_topics,
    optimal_assignment,
    reindex_topics,
    union_vocabulary,
)


def test_threshold_rejects_a_far_pair() -> None:
    cost = np.array([[0.1, 0.9, 0.8], [0.9, 0.7, 0.95]])
    got = match_topics(cost, threshold=0.5)
    assert got.pairs.tolist() == [[0, 0]]
    assert got.costs.tolist() == [0.1]
    assert got.rejected.tolist() == [[1, 1]]
    assert got.unmatched_rows.tolist() == [1]
    assert got.unmatched_cols.tolist() == [1, 2]
    everything = match_topics(cost)
    assert everything.pairs.tolist() == [[0, 0], [1, 1]]
    assert everything.rejected.size == 0


def test_near_ties_flag_splits_and_merges() -> None:
    # row 0 is close to columns 0 and 1 (a split); column 2 is close to rows 1 and 2 (a merge)
    cost = np.array(
        [
            [0.10, 0.12, 0.90],
            [0.80, 0.85, 0.20],
            [0.90, 0.70, 0.22],
        ]
    )
    got = match_topics(cost, threshold=0.5, margin=0.05)
    assert [(t.index, t.candidates.tolist()) for t in got.row_ties] == [(0, [0, 1])]
    assert [(t.index, t.candidates.tolist()) for t in got.col_ties] == [(2, [1, 2])]
    # above the threshold a close cost is no candidate
    strict = match_topics(cost, threshold=0.21, margin=0.05)
    assert strict.col_ties == ()
    assert match_topics(cost, margin=0.0).row_ties == ()


def test_rectangular_assignment_leaves_extra_topics_unmatched() -> None:
    cost = np.array([[0.5, 0.1], [0.2, 0.6], [0.3, 0.3]])
    got = match_topics(cost)
    assert got.pairs.tolist() == [[0, 1], [1, 0]]
    assert got.unmatched_rows.tolist() == [2]
    assert optimal_assignment(cost, maximize=True).tolist() == [[0, 0], [1, 1]]


def test_reindex_topics_onto_a_union_vocabulary() -> None:
    old = ["late_fee", "refund", "router"]
    new = ["refund", "router", "password"]
    union = union_vocabulary(old, new)
    assert union == ["late_fee", "refund", "router", "password"]
    phi = np.array([[0.5, 0.25, 0.25]])
    got = reindex_topics(phi, new, union)
    np.testing.assert_allclose(got, [[0.0, 0.5, 0.25, 0.25]])
    # mass on terms missing from the target is dropped and the row renormalised
    dropped = reindex_topics(np.array([[0.5, 0.3, 0.2]]), old, ["router", "refund"])
    np.testing.assert_allclose(dropped, [[0.4, 0.6]])


def test_bad_input_is_refused() -> None:
    with pytest.raises(InputError, match=r"entry \(0, 1\) is not a finite"):
        match_topics(np.array([[0.1, np.nan]]))
    with pytest.raises(InputError, match="margin must be non-negative"):
        match_topics(np.ones((2, 2)), margin=-1)
    with pytest.raises(InputError, match="topic 0 has no weight"):
        reindex_topics(np.array([[1.0, 0.0]]), ["a", "b"], ["b", "c"])
    with pytest.raises(InputError, match="3 columns but the vocabulary has 2"):
        reindex_topics(np.ones((1, 3)), ["a", "b"], ["a"])
    with pytest.raises(InputError, match="lists a term twice"):
        union_vocabulary(["a", "a"], ["b"])
