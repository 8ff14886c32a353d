"""LdaTopics on a tiny block-diagonal corpus whose topics are known."""

from __future__ import annotations

import json

import numpy as np
import pytest
import scipy.sparse as sp
from tests.support.blocks import BLOCK_TERMS, N_BLOCKS, block_corpus, matched_distances

from talkthemes.errors import ConfigError, InputError, NotReadyError
from talkthemes.models.base import FittedTopics
from talkthemes.models.lda import LdaTopics
from talkthemes.models.lda_infer import heldout_perplexity, infer_doc_topics
from talkthemes.models.lda_state import lda_state_arrays, lda_state_params, restore_lda


def small_lda(**overrides: object) -> LdaTopics:
    settings: dict[str, object] = {
        "k": 3,
        "seed": 1,
        "passes": 10,
        "chunksize": 30,
        "alpha": "symmetric",
        "eta": "symmetric",
        "starts": 1,
    }
    settings.update(overrides)
    return LdaTopics(**settings)  # type: ignore[arg-type]


@pytest.fixture(scope="module")
def corpus() -> tuple[sp.csr_matrix, np.ndarray, np.ndarray]:
    return block_corpus(120, seed=0)


@pytest.fixture(scope="module")
def fitted(corpus: tuple[sp.csr_matrix, np.ndarray, np.ndarray]) -> LdaTopics:
    return small_lda().fit(corpus[0])


def test_recovers_the_blocks(corpus, fitted) -> None:
    _, truth, blocks = corpus
    result = fitted.result_
    distances, match = matched_distances(truth, result.topic_terms)
    assert distances.max() < 0.15
    # documents are led by their own block's topic
    lead = result.doc_topics.argmax(axis=1)
    assert np.mean(lead == match[blocks]) == 1.0


def test_shapes_rows_and_dtypes(corpus, fitted) -> None:
    counts, _, _ = corpus
    result = fitted.result_
    assert isinstance(result, FittedTopics)
    assert result.topic_terms.shape == (3, counts.shape[1])
    assert result.doc_topics.shape == (counts.shape[0], 3)
    for arr in (result.topic_terms, result.doc_topics):
        assert arr.dtype == np.float64
        np.testing.assert_allclose(arr.sum(axis=1), 1.0, atol=1e-12)
        assert not arr.flags.writeable
    assert result.fit_seconds > 0
    assert fitted.n_documents_ == counts.shape[0]
    assert fitted.n_terms_ == counts.shape[1]


def test_topic_terms_are_gensims_posterior_mean(fitted) -> None:
    np.testing.assert_allclose(fitted.result_.topic_terms, fitted.model_.get_topics(), rtol=1e-12)


def test_params_are_json_and_complete(fitted) -> None:
    params = json.loads(json.dumps(fitted.result_.params))
    assert params["family"] == "lda"
    assert params["k"] == 3 and params["seed"] == 1 and params["passes"] == 10
    assert params["chunksize"] == 30 and params["alpha"] == "symmetric"
    assert params["n_documents"] == 120 and params["n_terms"] == N_BLOCKS * BLOCK_TERMS
    assert params["library"].startswith("gensim ")
    assert len(params["alpha_fitted"]) == 3
    assert params["bound_tol"] == fitted.bound_tol and params["starts"] == 1
    trace = params["convergence"]
    assert trace["max_passes"] == 10 and 2 <= trace["passes"] <= 10
    assert len(trace["per_word_bound"]) == trace["passes"]


def test_same_seed_same_result_and_other_seed_differs(corpus, fitted) -> None:
    counts = corpus[0]
    again = small_lda().fit(counts).result_
    np.testing.assert_array_equal(again.topic_terms, fitted.result_.topic_terms)
    np.testing.assert_array_equal(again.doc_topics, fitted.result_.doc_topics)
    other = small_lda(seed=2).fit(counts).result_
    assert not np.array_equal(other.topic_terms, fitted.result_.topic_terms)


def test_learned_priors_run(corpus) -> None:
    counts, truth, _ = corpus
    est = small_lda(alpha="auto", eta="auto").fit(counts)
    assert est.model_.optimize_alpha and est.model_.optimize_eta
    assert est.result_.params["alpha_fitted"] != [1 / 3] * 3
    assert matched_distances(truth, est.result_.topic_terms)[0].max() < 0.15
    asym = small_lda(alpha="asymmetric").fit(counts)
    assert asym.model_.alpha[0] > asym.model_.alpha[-1]


def test_vocabulary_names_the_terms(corpus) -> None:
    counts = corpus[0]
    vocabulary = [f"word{i}" for i in range(counts.shape[1])]
    est = small_lda(passes=1, vocabulary=vocabulary).fit(counts)
    assert est.model_.id2word[5] == "word5"
    with pytest.raises(InputError, match="vocabulary has 3 terms but the count matrix has 24"):
        small_lda(vocabulary=["a", "b", "c"]).fit(counts)


@pytest.mark.parametrize(
    ("name", "value", "allowed"),
    [
        ("k", 0, "an integer >= 1"),
        ("alpha", "bogus", "one of 'symmetric', 'asymmetric', 'auto'"),
        ("eta", "asymmetric", "one of 'symmetric', 'auto'"),
        ("decay", 0.4, "a number in [0.5, 1.0]"),
        ("passes", 2.5, "an integer >= 1"),
        ("bound_tol", -0.1, "a number in [0.0, 1.0]"),
        ("bound_tol", float("nan"), "a number in [0.0, 1.0]"),
        ("starts", 0, "an integer >= 1"),
        ("start_passes", 0, "an integer >= 1"),
    ],
)
def test_bad_parameters_are_named(corpus, name: str, value: object, allowed: str) -> None:
    with pytest.raises(ConfigError) as info:
        small_lda(**{name: value}).fit(corpus[0])
    assert str(info.value) == f"LdaTopics: {name}={value!r} is not allowed; expected {allowed}"


def test_bad_counts_are_rejected() -> None:
    with pytest.raises(InputError, match=r"expected a scipy\.sparse"):
        small_lda().fit(np.ones((3, 4)))
    bad = sp.csr_matrix(np.array([[1.0, 0.0], [0.0, -2.0]]))
    with pytest.raises(InputError, match=r"row 1, column 1 holds -2\.0"):
        small_lda().fit(bad)


def test_not_fitted() -> None:
    with pytest.raises(NotReadyError, match="call fit"):
        small_lda().transform(sp.csr_matrix(np.ones((1, 4))))


def test_new_documents_get_their_block(corpus, fitted) -> None:
    _, truth, _ = corpus
    new_counts, _, new_blocks = block_corpus(30, seed=5)
    theta = fitted.transform(new_counts)
    _, match = matched_distances(truth, fitted.result_.topic_terms)
    assert np.all(theta.argmax(axis=1) == match[new_blocks])
    np.testing.assert_allclose(theta.sum(axis=1), 1.0, atol=1e-12)
    # deterministic for a seed, and the caller's model is left alone
    before = fitted.model_.random_state.get_state()[1].copy()
    again = infer_doc_topics(fitted.model_, new_counts, seed=1, chunksize=30)
    np.testing.assert_array_equal(again, theta)
    np.testing.assert_array_equal(fitted.model_.random_state.get_state()[1], before)
    with pytest.raises(InputError, match="has 5 term columns, the model has 24 terms"):
        fitted.transform(sp.csr_matrix(np.ones((2, 5))))


def test_empty_document_gets_the_prior_mean(fitted) -> None:
    empty = sp.csr_matrix((1, N_BLOCKS * BLOCK_TERMS))
    theta = fitted.transform(empty)
    alpha = np.asarray(fitted.model_.alpha)
    np.testing.assert_allclose(theta[0], alpha / alpha.sum(), rtol=1e-12)


def test_heldout_perplexity_prefers_documents_like_the_training_ones(corpus, fitted) -> None:
    counts = corpus[0]
    like, _, _ = block_corpus(30, seed=9)
    rng = np.random.default_rng(9)
    unlike = sp.csr_matrix(rng.multinomial(40, np.full(counts.shape[1], 1 / counts.shape[1]), 30))
    p_like = fitted.heldout_perplexity(like, total_docs=counts.shape[0])
    p_unlike = fitted.heldout_perplexity(unlike, total_docs=counts.shape[0])
    # the true word distribution of a block document (0.8 over 8 terms, 0.2 over 8 others) has
    # entropy 2.58 nats, i.e. perplexity 13.2; uniform documents over V = 24 terms cannot be
    # predicted better than 24
    assert 12.0 < p_like < 17.0
    assert p_unlike > 22.0
    assert p_like == fitted.heldout_perplexity(like, total_docs=counts.shape[0])
    with pytest.raises(InputError, match="hold no tokens"):
        fitted.heldout_perplexity(sp.csr_matrix((2, counts.shape[1])), total_docs=10)
    with pytest.raises(ConfigError, match="total_docs=0"):
        fitted.heldout_perplexity(like, total_docs=0)


def test_state_survives_npy_and_json(tmp_path, corpus) -> None:
    counts = corpus[0]
    est = small_lda(alpha="auto", eta="auto").fit(counts)
    arrays, params = est.state()
    for name, arr in arrays.items():
        np.save(tmp_path / f"{name}.npy", arr, allow_pickle=False)
    (tmp_path / "state.json").write_text(json.dumps(params))
    loaded = {name: np.load(tmp_path / f"{name}.npy", allow_pickle=False) for name in arrays}
    loaded_params = json.loads((tmp_path / "state.json").read_text())
    new_counts, _, _ = block_corpus(20, seed=3)
    expected = infer_doc_topics(est.model_, new_counts, seed=4)
    restored = restore_lda(loaded, loaded_params)
    np.testing.assert_array_equal(infer_doc_topics(restored, new_counts, seed=4), expected)
    np.testing.assert_array_equal(
        infer_doc_topics((loaded, loaded_params), new_counts, seed=4), expected
    )
    np.testing.assert_array_equal(restored.get_topics(), est.model_.get_topics())
    assert heldout_perplexity(
        (loaded, loaded_params), new_counts, total_docs=120, seed=4
    ) == heldout_perplexity(est.model_, new_counts, total_docs=120, seed=4)
    assert restored.optimize_alpha and restored.optimize_eta
    assert restored.num_updates == est.model_.num_updates


def test_restored_model_keeps_training(corpus, fitted) -> None:
    counts = corpus[0]
    restored = restore_lda(lda_state_arrays(fitted.model_), lda_state_params(fitted.model_))
    from gensim.matutils import Sparse2Corpus

    restored.update(Sparse2Corpus(counts[:30], documents_columns=False))
    assert restored.state.numdocs == fitted.model_.state.numdocs + 30
    assert not np.array_equal(restored.get_topics(), fitted.model_.get_topics())


def test_broken_state_is_rejected(fitted) -> None:
    arrays = lda_state_arrays(fitted.model_)
    params = lda_state_params(fitted.model_)
    with pytest.raises(InputError, match="missing sstats"):
        restore_lda({k: v for k, v in arrays.items() if k != "sstats"}, params)
    short = dict(arrays, alpha=arrays["alpha"][:2])
    with pytest.raises(InputError, match=r"array 'alpha' has shape \(2,\), expected \(3,\)"):
        restore_lda(short, params)
    wrong_type = dict(arrays, eta=arrays["eta"].astype(np.float32))
    with pytest.raises(InputError, match="array 'eta' has dtype float32"):
        restore_lda(wrong_type, params)
    with pytest.raises(InputError, match="expected a gensim LdaModel"):
        infer_doc_topics("model", sp.csr_matrix(np.ones((1, 24))), seed=0)  # type: ignore[arg-type]


def test_fit_without_shares_gives_the_same_topics_and_no_rows() -> None:
    counts, _, _ = block_corpus(90, seed=4)
    with_shares = small_lda().fit(counts).result_
    without = small_lda().fit(counts, shares=False).result_
    assert without.doc_topics.shape == (0, 3)
    assert with_shares.doc_topics.shape == (90, 3)
    np.testing.assert_array_equal(without.topic_terms, with_shares.topic_terms)
