"""Unit tests for talkthemes.metrics.relevance (invented topic-term matrices)."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.errors import InputError
from talkthemes.metrics.relevance import (
    relevance,
    term_marginal,
    top_relevant_terms,
    top_terms,
    topic_shares,
)

PHI = np.array([[0.5, 0.3, 0.2, 0.0], [0.05, 0.05, 0.1, 0.8]])


def test_topic_shares_weight_documents_by_tokens() -> None:
    theta = np.array([[1.0, 0.0], [0.5, 0.5], [0.0, 1.0]])
    shares = topic_shares(theta, np.array([10, 20, 30]))
    np.testing.assert_allclose(shares, [20 / 60, 40 / 60])
    assert shares.sum() == pytest.approx(1.0)


def test_term_marginal_is_share_weighted_mix() -> None:
    p = term_marginal(PHI, np.array([0.5, 0.5]))
    np.testing.assert_allclose(p, [0.275, 0.175, 0.15, 0.4])


def test_relevance_ends_rank_by_probability_and_by_lift() -> None:
    p = term_marginal(PHI, np.array([0.5, 0.5]))
    with np.errstate(divide="ignore"):
        log_phi = np.log(PHI)
    np.testing.assert_allclose(relevance(PHI, p, 1.0), log_phi, atol=0)
    lift = relevance(PHI, p, 0.0)
    assert lift[0, 1] == pytest.approx(np.log(0.3 / 0.175))
    assert lift[0, 3] == -np.inf  # a term the topic never uses
    mid = relevance(PHI, p, 0.6)
    assert mid[1, 2] == pytest.approx(0.6 * np.log(0.1) + 0.4 * np.log(0.1 / 0.15))


def test_top_terms_and_top_relevant_terms() -> None:
    assert top_terms(PHI, 2).tolist() == [[0, 1], [3, 2]]
    p = term_marginal(PHI, np.array([0.5, 0.5]))
    # topic 1 by lift: 0.8/0.4 > 0.1/0.15 > 0.05/0.175 > 0.05/0.275
    assert top_relevant_terms(PHI, p, 0.0, 4)[1].tolist() == [3, 2, 1, 0]
    # by probability terms 0 and 1 tie at 0.05: the lower id comes first
    assert top_relevant_terms(PHI, p, 1.0, 4)[1].tolist() == [3, 2, 0, 1]
    assert top_relevant_terms(PHI, p, 1.0, 4).tolist() == top_terms(PHI, 4).tolist()


def test_ties_are_broken_deterministically() -> None:
    phi = np.array([[0.25, 0.25, 0.25, 0.25]])
    assert top_terms(phi, 3).tolist() == [[0, 1, 2]]


def test_bad_input_is_refused() -> None:
    p = term_marginal(PHI, np.array([0.5, 0.5]))
    with pytest.raises(InputError, match=r"lambda must lie in \[0, 1\]"):
        relevance(PHI, p, 1.5)
    with pytest.raises(InputError, match="marginal has 3 terms"):
        relevance(PHI, p[:3], 0.5)
    with pytest.raises(InputError, match="zero corpus probability"):
        relevance(PHI, np.array([0.0, 0.5, 0.25, 0.25]), 0.5)
    with pytest.raises(InputError, match="do not match"):
        topic_shares(np.ones((3, 2)), np.ones(2))
    with pytest.raises(InputError, match="no weight"):
        topic_shares(np.ones((2, 2)) / 2, np.zeros(2))
    with pytest.raises(InputError, match="topic 1 has a bad weight"):
        top_terms(np.array([[0.5, 0.5], [-0.1, 1.1]]), 1)
