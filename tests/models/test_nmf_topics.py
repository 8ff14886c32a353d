"""NmfTopics on a tiny block-diagonal corpus whose topics are known."""

from __future__ import annotations

import json

import numpy as np
import pytest
import scipy.sparse as sp
from sklearn.decomposition import NMF
from sklearn.feature_extraction.text import TfidfTransformer
from tests.support.blocks import BLOCK_TERMS, N_BLOCKS, block_corpus, matched_distances

from talkthemes.errors import ConfigError, InputError, NotReadyError
from talkthemes.models.base import check_counts, top_terms
from talkthemes.models.nmf import (
    NmfTopics,
    nmf_distributions,
    smooth_idf,
    tfidf_weights,
    transform_counts,
)


@pytest.fixture(scope="module")
def corpus() -> tuple[sp.csr_matrix, np.ndarray, np.ndarray]:
    return block_corpus(120, seed=0)


@pytest.fixture(scope="module")
def fitted(corpus) -> NmfTopics:
    return NmfTopics(k=3, seed=1).fit(corpus[0])


@pytest.mark.parametrize("loss", ["frobenius", "kullback-leibler"])
def test_recovers_the_blocks(corpus, loss: str) -> None:
    counts, truth, blocks = corpus
    est = NmfTopics(k=3, seed=1, loss=loss).fit(counts)
    result = est.result_
    distances, match = matched_distances(truth, result.topic_terms)
    # TF-IDF weighting bends φ away from the uniform block, so the bound is looser than LDA's
    assert distances.max() < 0.3
    assert np.all(result.doc_topics.argmax(axis=1) == match[blocks])
    # each topic's block holds nearly all its mass
    for b, k in enumerate(match):
        assert result.topic_terms[k, b * BLOCK_TERMS : (b + 1) * BLOCK_TERMS].sum() > 0.9
    assert result.params["solver"] == {"frobenius": "cd", "kullback-leibler": "mu"}[loss]


def test_shapes_rows_dtypes_and_params(corpus, fitted) -> None:
    counts = corpus[0]
    result = fitted.result_
    assert result.topic_terms.shape == (3, counts.shape[1])
    assert result.doc_topics.shape == (counts.shape[0], 3)
    for arr in (result.topic_terms, result.doc_topics):
        assert arr.dtype == np.float64
        np.testing.assert_allclose(arr.sum(axis=1), 1.0, atol=1e-12)
    params = json.loads(json.dumps(result.params))
    assert params["family"] == "nmf" and params["k"] == 3 and params["seed"] == 1
    assert params["init"] == "nndsvda" and params["loss"] == "frobenius"
    assert params["tfidf"] == {"sublinear_tf": False, "smooth_idf": True, "norm": "l2"}
    assert params["converged"] is True and params["n_iter"] == fitted.n_iter_
    assert params["reconstruction_err"] == fitted.reconstruction_err_
    assert result.fit_seconds > 0


def test_reconstruction_error_is_sklearns_on_the_same_weights(corpus, fitted) -> None:
    counts = check_counts(corpus[0])
    weights = tfidf_weights(counts, smooth_idf(counts))
    reference = NMF(n_components=3, init="nndsvda", solver="cd", random_state=1, max_iter=400)
    W = reference.fit_transform(weights)
    assert fitted.reconstruction_err_ == pytest.approx(reference.reconstruction_err_, rel=1e-12)
    frobenius = np.linalg.norm(weights.toarray() - W @ reference.components_)
    assert fitted.reconstruction_err_ == pytest.approx(frobenius, rel=1e-9)
    np.testing.assert_allclose(fitted.components_, reference.components_, rtol=1e-12)


def test_float32_fit_is_sklearns_float32_fit_and_keeps_the_topics(corpus, fitted) -> None:
    """scikit-learn's NMF keeps float32 input in float32: ours passes float32 TF-IDF and
    returns float64 distributions with the same top terms as the float64 fit."""
    counts = check_counts(corpus[0])
    weights = tfidf_weights(counts, smooth_idf(counts)).astype(np.float32)
    reference = NMF(n_components=3, init="nndsvda", solver="cd", random_state=1, max_iter=400)
    reference.fit_transform(weights)
    assert reference.components_.dtype == np.float32
    single = NmfTopics(k=3, seed=1, dtype="float32").fit(corpus[0])
    assert single.result_.topic_terms.dtype == np.float64
    np.testing.assert_allclose(single.components_, reference.components_, rtol=1e-6, atol=1e-7)
    assert single.reconstruction_err_ == pytest.approx(fitted.reconstruction_err_, rel=1e-4)
    np.testing.assert_array_equal(
        top_terms(single.result_.topic_terms, 5), top_terms(fitted.result_.topic_terms, 5)
    )


def test_same_seed_same_result_and_other_seed_differs(corpus, fitted) -> None:
    counts = corpus[0]
    again = NmfTopics(k=3, seed=1).fit(counts).result_
    np.testing.assert_array_equal(again.topic_terms, fitted.result_.topic_terms)
    np.testing.assert_array_equal(again.doc_topics, fitted.result_.doc_topics)
    # the seed drives the randomised SVD behind nndsvda: a different start, a different result
    other = NmfTopics(k=3, seed=2).fit(counts).result_
    assert not np.array_equal(other.topic_terms, fitted.result_.topic_terms)


def test_cd_with_kl_is_refused_and_auto_maps(corpus) -> None:
    counts = corpus[0]
    with pytest.raises(ConfigError, match="solver='cd' does not handle loss='kullback-leibler'"):
        NmfTopics(k=3, loss="kullback-leibler", solver="cd").fit(counts)
    explicit = NmfTopics(k=3, loss="frobenius", solver="mu").fit(counts)
    assert explicit.result_.params["solver"] == "mu"


@pytest.mark.parametrize(
    ("name", "value", "allowed"),
    [
        ("k", 0, "an integer >= 1"),
        ("loss", "itakura-saito", "one of 'frobenius', 'kullback-leibler'"),
        ("solver", "lbfgs", "one of 'auto', 'cd', 'mu'"),
        ("max_iter", 0, "an integer >= 1"),
        ("tol", -1.0, "a number in [0.0, 1.0]"),
    ],
)
def test_bad_parameters_are_named(corpus, name: str, value: object, allowed: str) -> None:
    with pytest.raises(ConfigError) as info:
        NmfTopics(**{"k": 3, name: value}).fit(corpus[0])  # type: ignore[arg-type]
    assert str(info.value) == f"NmfTopics: {name}={value!r} is not allowed; expected {allowed}"


def test_too_many_topics_for_the_matrix() -> None:
    counts = sp.csr_matrix(np.eye(4))
    with pytest.raises(InputError, match=r"k=5 exceeds min\(documents=4, terms=4\)"):
        NmfTopics(k=5).fit(counts)


def test_empty_document_gets_a_uniform_row(corpus) -> None:
    counts = sp.vstack([corpus[0], sp.csr_matrix((1, corpus[0].shape[1]))]).tocsr()
    result = NmfTopics(k=3, seed=1).fit(counts).result_
    np.testing.assert_array_equal(result.doc_topics[-1], np.full(3, 1 / 3))


def test_tfidf_matches_sklearns_transformer(corpus) -> None:
    counts = check_counts(corpus[0])
    reference = TfidfTransformer(sublinear_tf=False, norm="l2", smooth_idf=True).fit(counts)
    idf = smooth_idf(counts)
    np.testing.assert_allclose(idf, reference.idf_, rtol=1e-15)
    ours = tfidf_weights(counts, idf)
    np.testing.assert_allclose(ours.toarray(), reference.transform(counts).toarray(), rtol=1e-14)
    # by hand: idf = ln((1 + 2) / (1 + df)) + 1 = (1, 1 + ln 1.5); row 1 = (1, idf_1) / norm
    tiny = sp.csr_matrix(np.array([[3.0, 0.0], [1.0, 1.0]]))
    raw_idf = smooth_idf(tiny)
    np.testing.assert_allclose(raw_idf, [1.0, np.log(1.5) + 1])
    row = np.array([1.0, np.log(1.5) + 1])
    expected = [[1.0, 0.0], row / np.hypot(*row)]
    np.testing.assert_allclose(tfidf_weights(tiny, raw_idf).toarray(), expected)


def test_distributions_follow_the_scale_consistent_mapping() -> None:
    W = np.array([[1.0, 0.0], [2.0, 1.0], [0.0, 0.0]])
    H = np.array([[1.0, 3.0, 0.0], [0.0, 2.0, 2.0]])
    phi, theta = nmf_distributions(W, H)
    np.testing.assert_allclose(phi, [[0.25, 0.75, 0.0], [0.0, 0.5, 0.5]])
    # θ_dk ∝ W_dk Σ_v H_kv: document 1 has weights 2·4 and 1·4
    np.testing.assert_allclose(theta, [[1.0, 0.0], [2 / 3, 1 / 3], [0.5, 0.5]])
    scale = np.array([5.0, 0.1])
    phi2, theta2 = nmf_distributions(W * scale, H / scale[:, None])
    np.testing.assert_allclose(phi2, phi)
    np.testing.assert_allclose(theta2, theta)


def test_transform_counts_from_saved_state(tmp_path, corpus, fitted) -> None:
    counts, truth, _ = corpus
    arrays, params = fitted.state()
    for name, arr in arrays.items():
        np.save(tmp_path / f"{name}.npy", arr, allow_pickle=False)
    (tmp_path / "state.json").write_text(json.dumps(params))
    state = (
        {name: np.load(tmp_path / f"{name}.npy", allow_pickle=False) for name in arrays},
        json.loads((tmp_path / "state.json").read_text()),
    )
    # the training documents get back (nearly) the shares of the fit
    again = transform_counts(counts, state)
    np.testing.assert_allclose(again, fitted.result_.doc_topics, atol=2e-3)
    # new documents are led by their own block's topic, the same on every call
    new_counts, _, new_blocks = block_corpus(30, seed=5)
    theta = transform_counts(new_counts, state)
    _, match = matched_distances(truth, fitted.result_.topic_terms)
    assert np.all(theta.argmax(axis=1) == match[new_blocks])
    np.testing.assert_array_equal(theta, fitted.transform(new_counts))


def test_kl_transform_from_state(corpus) -> None:
    counts, truth, blocks = corpus
    est = NmfTopics(k=3, seed=1, loss="kullback-leibler").fit(counts)
    theta = transform_counts(counts, est.state())
    _, match = matched_distances(truth, est.result_.topic_terms)
    assert np.all(theta.argmax(axis=1) == match[blocks])


def test_broken_state_and_counts_are_rejected(fitted) -> None:
    arrays, params = fitted.state()
    counts = sp.csr_matrix(np.ones((2, N_BLOCKS * BLOCK_TERMS)))
    with pytest.raises(InputError, match="missing idf"):
        transform_counts(counts, ({"components": arrays["components"]}, params))
    short = dict(arrays, components=arrays["components"][:2])
    with pytest.raises(InputError, match=r"'components' has shape \(2, 24\), expected \(3, 24\)"):
        transform_counts(counts, (short, params))
    with pytest.raises(InputError, match="has 5 term columns, the model has 24 terms"):
        transform_counts(sp.csr_matrix(np.ones((2, 5))), (arrays, params))
    with pytest.raises(InputError, match="expected \\(arrays, params\\)"):
        transform_counts(counts, arrays)  # type: ignore[arg-type]
    with pytest.raises(NotReadyError, match="call fit"):
        NmfTopics(k=3).state()


def test_numpy_scalars_in_parameters_stay_json(corpus) -> None:
    est = NmfTopics(k=np.int64(3), seed=np.int64(1), tol=np.float64(1e-4)).fit(corpus[0])
    params = json.loads(json.dumps(est.result_.params))
    assert params["k"] == 3 and params["seed"] == 1
    np.testing.assert_array_equal(
        est.result_.topic_terms, NmfTopics(k=3, seed=1).fit(corpus[0]).result_.topic_terms
    )
