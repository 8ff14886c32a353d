"""FittedTopics and the helpers both model families share."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
import scipy.sparse as sp

from talkthemes.errors import ConfigError, InputError
from talkthemes.models.base import (
    FittedTopics,
    check_counts,
    check_params,
    int_rule,
    normalise_rows,
    top_terms,
    topic_shares,
)

PHI = np.array([[0.5, 0.3, 0.2], [0.1, 0.1, 0.8]])
THETA = np.array([[1.0, 0.0], [0.25, 0.75], [0.5, 0.5]])


def test_fitted_topics_holds_read_only_float64_copies() -> None:
    phi = PHI.astype(np.float32)
    fitted = FittedTopics(topic_terms=phi, doc_topics=THETA, params={"k": 2}, fit_seconds=0.5)
    assert fitted.k == 2
    assert fitted.topic_terms.dtype == np.float64 and fitted.doc_topics.dtype == np.float64
    assert not fitted.topic_terms.flags.writeable and not fitted.doc_topics.flags.writeable
    phi[0, 0] = 0.9  # the caller's array is not shared
    assert fitted.topic_terms[0, 0] == pytest.approx(0.5)
    with pytest.raises(dataclasses.FrozenInstanceError):
        fitted.fit_seconds = 1.0  # type: ignore[misc]
    with pytest.raises(ValueError, match="read-only"):
        fitted.doc_topics[0, 0] = 0.0


@pytest.mark.parametrize(
    ("phi", "theta", "message"),
    [
        (PHI[:, :2], THETA, "topic_terms row 0 sums to 0.8"),
        (PHI, THETA[:, :1] * 0 + 1, "doc_topics has 1 topic columns but topic_terms has 2"),
        (np.array([[1.5, -0.5, 0.0], PHI[1]]), THETA, "topic_terms row 0 holds a negative"),
        (PHI, np.array([[np.nan, 1.0]]), "doc_topics row 0 holds a value that is not finite"),
        (PHI[0], THETA, "topic_terms must be a non-empty 2-D array"),
    ],
)
def test_fitted_topics_rejects_what_is_not_a_distribution(phi, theta, message) -> None:
    with pytest.raises(InputError, match=message):
        FittedTopics(topic_terms=phi, doc_topics=theta, params={}, fit_seconds=0.0)


def test_fitted_topics_rejects_a_bad_time() -> None:
    with pytest.raises(InputError, match="fit_seconds"):
        FittedTopics(topic_terms=PHI, doc_topics=THETA, params={}, fit_seconds=float("nan"))


def test_top_terms_order_and_ties() -> None:
    phi = np.array([[0.1, 0.4, 0.1, 0.4], [0.25, 0.25, 0.25, 0.25]])
    np.testing.assert_array_equal(top_terms(phi, 3), [[1, 3, 0], [0, 1, 2]])
    assert top_terms(phi, 10).shape == (2, 4)
    assert top_terms(phi, 1).dtype == np.int64
    with pytest.raises(ConfigError, match="n=0"):
        top_terms(phi, 0)


def test_topic_shares_weight_documents_by_length() -> None:
    shares = topic_shares(THETA, np.array([10, 20, 10]))
    # (10·1 + 20·0.25 + 10·0.5, 20·0.75 + 10·0.5) / 40
    np.testing.assert_allclose(shares, [20 / 40, 20 / 40])
    np.testing.assert_allclose(topic_shares(THETA, np.array([0, 4, 0])), [0.25, 0.75])
    with pytest.raises(InputError, match="3 documents"):
        topic_shares(THETA, np.array([1, 2]))
    with pytest.raises(InputError, match="not all zero"):
        topic_shares(THETA, np.zeros(3))


def test_normalise_rows_makes_zero_rows_uniform() -> None:
    out = normalise_rows(np.array([[2.0, 6.0], [0.0, 0.0]]))
    np.testing.assert_allclose(out, [[0.25, 0.75], [0.5, 0.5]])


def test_check_counts_canonicalises_without_touching_the_input() -> None:
    coo = sp.coo_matrix(
        (np.array([1, 2, 0, 3]), (np.array([0, 0, 1, 1]), np.array([1, 1, 0, 2]))), shape=(2, 3)
    )
    out = check_counts(coo)
    assert isinstance(out, sp.csr_matrix) and out.dtype == np.float64
    np.testing.assert_array_equal(out.toarray(), [[0, 3, 0], [0, 0, 3]])
    assert out.nnz == 2  # duplicates summed, the explicit zero dropped
    assert coo.nnz == 4


@pytest.mark.parametrize(
    ("counts", "message"),
    [
        (np.ones((2, 2)), "expected a scipy.sparse document × term matrix, got ndarray"),
        (sp.csr_matrix((0, 3)), r"the matrix is empty \(shape \(0, 3\)\)"),
        (sp.csr_matrix(np.array([[1.0, np.inf]])), "row 0, column 1 holds inf"),
        (sp.csr_matrix(np.array([[1.0, 0], [0, 0], [0, -1.0]])), "row 2, column 1 holds -1.0"),
        (sp.csr_matrix(np.ones((2, 3), dtype=bool)), "values must be real numbers"),
    ],
)
def test_check_counts_names_the_problem(counts, message: str) -> None:
    with pytest.raises(InputError, match=message):
        check_counts(counts, name="counts")


def test_check_counts_checks_the_vocabulary_size() -> None:
    with pytest.raises(InputError, match="held-out: has 3 term columns, the model has 4 terms"):
        check_counts(sp.csr_matrix(np.ones((1, 3))), name="held-out", n_terms=4)


def test_check_params_uses_one_template() -> None:
    rules = {"k": int_rule(2), "chunksize": int_rule(1)}
    check_params("Thing", {"k": 2, "chunksize": 5}, rules)
    with pytest.raises(ConfigError) as info:
        check_params("Thing", {"k": True, "chunksize": 5}, rules)
    assert str(info.value) == "Thing: k=True is not allowed; expected an integer >= 2"
