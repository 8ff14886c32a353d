"""Unit tests for talkthemes.metrics.stability (invented ranked lists)."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.errors import InputError
from talkthemes.metrics.stability import (
    agreement,
    average_jaccard,
    average_jaccard_matrix,
    pairwise_agreement,
    seed_stability,
)


def jaccard_by_sets(a: list[int], b: list[int]) -> float:
    t = len(a)
    return (
        sum(len(set(a[:d]) & set(b[:d])) / len(set(a[:d]) | set(b[:d])) for d in range(1, t + 1))
        / t
    )


def test_average_jaccard_matrix_equals_set_definition() -> None:
    rng = np.random.default_rng(5)
    first = np.array([rng.choice(12, 6, replace=False) for _ in range(4)])
    second = np.array([rng.choice(12, 6, replace=False) for _ in range(3)])
    got = average_jaccard_matrix(first, second)
    want = [[jaccard_by_sets(list(a), list(b)) for b in second] for a in first]
    np.testing.assert_allclose(got, want, atol=1e-12)


def test_identical_and_disjoint_lists() -> None:
    assert average_jaccard(np.array([3, 1, 2]), np.array([3, 1, 2])) == 1.0
    assert average_jaccard(np.array([0, 1, 2]), np.array([3, 4, 5])) == 0.0
    # same set, reversed order: agreement only at full depth
    assert average_jaccard(np.array([0, 1]), np.array([1, 0])) == pytest.approx(0.5)


def test_agreement_matches_permuted_topics() -> None:
    topics = np.array([[0, 1, 2], [3, 4, 5], [6, 7, 8]])
    assert agreement(topics, topics[[2, 0, 1]]) == 1.0
    shifted = np.array([[0, 1, 9], [3, 4, 5], [6, 7, 8]])
    want = (jaccard_by_sets([0, 1, 2], [0, 1, 9]) + 2) / 3
    assert agreement(topics, shifted[[1, 2, 0]]) == pytest.approx(want)


def test_agreement_uses_the_best_one_to_one_matching() -> None:
    # greedy row-by-row would give topic 0 its best partner and leave topic 1 badly off
    first = np.array([[0, 1, 2, 3], [0, 1, 4, 5]])
    second = np.array([[0, 1, 4, 6], [7, 8, 2, 3]])
    aj = average_jaccard_matrix(first, second)
    best = max(aj[0, 0] + aj[1, 1], aj[0, 1] + aj[1, 0]) / 2
    assert agreement(first, second) == pytest.approx(best)


def test_t_cuts_the_lists() -> None:
    a = np.array([[0, 1, 2, 3]])
    b = np.array([[0, 1, 7, 8]])
    assert agreement(a, b, t=2) == 1.0
    assert agreement(a, b) < 1.0


def test_seed_stability_is_the_mean_of_pairwise_agreement() -> None:
    s1 = np.array([[0, 1, 2], [3, 4, 5]])
    s2 = np.array([[3, 4, 5], [0, 1, 2]])
    s3 = np.array([[0, 1, 9], [3, 4, 8]])
    matrix = pairwise_agreement([s1, s2, s3], t=3)
    assert matrix[0, 1] == 1.0
    assert np.allclose(matrix, matrix.T)
    assert np.all(np.diag(matrix) == 1.0)
    want = (matrix[0, 1] + matrix[0, 2] + matrix[1, 2]) / 3
    assert seed_stability([s1, s2, s3], t=3) == pytest.approx(want)
    assert seed_stability([s1, s3], t=3) < 1.0


def test_bad_input_is_refused() -> None:
    a = np.array([[0, 1, 2]])
    with pytest.raises(InputError, match="at least 2 topic sets"):
        seed_stability([a])
    with pytest.raises(InputError, match="fewer than t=20"):
        seed_stability([a, a])
    with pytest.raises(InputError, match="1 and 2 topics"):
        agreement(a, np.array([[0, 1, 2], [3, 4, 5]]))
    with pytest.raises(InputError, match="repeats a term"):
        agreement(np.array([[0, 1, 0]]), a)
    with pytest.raises(InputError, match="same t"):
        average_jaccard_matrix(a, np.array([[0, 1]]))
