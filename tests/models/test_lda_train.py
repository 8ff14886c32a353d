"""Training LDA to convergence: the stopping rule, the cap, the starts and the trace.

The corpus is the invented block corpus of tests/support/blocks.py (3 topics, each uniform over
its own 8 terms), on which the answer is known.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.sparse as sp
from tests.support.blocks import BLOCK_TERMS, N_BLOCKS, block_corpus, matched_distances

from talkthemes.config import SweepSettings
from talkthemes.errors import ConfigError
from talkthemes.models.csr_lda import CsrLdaModel, RowCorpus
from talkthemes.models.lda import LdaTopics
from talkthemes.models.lda_train import (
    OnlineRun,
    relative_change,
    start_seed,
    train_to_convergence,
)

V = N_BLOCKS * BLOCK_TERMS


@pytest.fixture(scope="module")
def counts() -> sp.csr_matrix:
    return block_corpus(150, seed=3)[0]


def model_builder(**overrides: object):
    settings: dict[str, object] = {
        "corpus": None,
        "num_topics": 3,
        "id2word": {i: str(i) for i in range(V)},
        "chunksize": 30,
        "alpha": "auto",
        "eta": "symmetric",
        "eval_every": None,
        "dtype": np.float64,
    }
    settings.update(overrides)

    def build(seed: int) -> CsrLdaModel:
        return CsrLdaModel(random_state=seed, **settings)  # type: ignore[arg-type]

    return build


def test_relative_change() -> None:
    assert relative_change(-4.0, -3.9) == pytest.approx(0.025)
    assert relative_change(-4.0, -4.1) == pytest.approx(0.025)  # a dip counts as a change
    assert relative_change(0.0, -1.0) == math.inf
    assert relative_change(float("nan"), -1.0) == math.inf


def test_rule_stops_before_the_cap_and_the_trace_rises(counts) -> None:
    est = LdaTopics(k=3, seed=2, passes=200, chunksize=30, bound_tol=1e-3, starts=1).fit(counts)
    trace = est.convergence_
    bounds = np.array(trace.per_word_bound)
    assert trace.converged
    assert 2 <= trace.passes < 200
    assert len(bounds) == trace.passes
    changes = np.abs(np.diff(bounds)) / np.abs(bounds[:-1])
    # it stopped at the first pass that met the rule, not later
    assert changes[-1] < 1e-3
    assert np.all(changes[:-1] >= 1e-3)
    # the bound rises from pass to pass, up to dips smaller than the stopping tolerance
    assert bounds[-1] > bounds[0]
    assert np.all(np.diff(bounds) > -1e-3 * np.abs(bounds[:-1]))
    # the block topics are found (the bound measures something real)
    truth = block_corpus(3, seed=0)[1]
    assert matched_distances(truth, est.result_.topic_terms)[0].max() < 0.15


def test_per_word_bound_is_in_plausible_nats(counts) -> None:
    """A block document's words (0.8 spread over its own 8 terms, 0.2 over another block's 8)
    have entropy −0.8 ln 0.1 − 0.2 ln 0.025 ≈ 2.58 nats a token. The per-word bound is a lower
    bound on the log-likelihood per token, so it sits below −2.58, but not far below once the
    blocks are found."""
    trace = (
        LdaTopics(k=3, seed=2, passes=200, chunksize=30, bound_tol=1e-3, starts=1)
        .fit(counts, shares=False)
        .convergence_
    )
    assert -3.2 < trace.per_word_bound[-1] < -2.5


def test_cap_is_honoured(counts) -> None:
    trace = (
        LdaTopics(k=3, seed=2, passes=3, chunksize=30, bound_tol=1e-12, starts=1)
        .fit(counts, shares=False)
        .convergence_
    )
    assert trace.passes == 3 and not trace.converged
    assert len(trace.per_word_bound) == 3


def test_zero_tolerance_runs_every_pass_like_gensims_update(counts) -> None:
    """bound_tol=0 never stops early, and the pass-by-pass loop is gensim's own ``update``
    (same chunks, learning rate, α updates and M-steps): equal bit for bit."""
    build = model_builder()
    model, trace = train_to_convergence(build, counts, seed=4, passes=5, bound_tol=0.0)
    assert trace.passes == 5 and not trace.converged
    reference = build(4)
    reference.update(RowCorpus(counts), passes=5)
    np.testing.assert_array_equal(model.get_topics(), reference.get_topics())
    np.testing.assert_array_equal(model.alpha, reference.alpha)
    assert model.num_updates == reference.num_updates
    assert model.state.numdocs == reference.state.numdocs


def test_per_word_bound_is_the_bound_over_the_tokens(counts) -> None:
    from talkthemes.models.lda_infer import variational_bound

    run = OnlineRun(model_builder()(1), counts)
    run.run_pass()
    run.run_pass()
    m = run.model
    expected = variational_bound(
        counts, np.array(run.gamma), lambda_=m.state.get_lambda(), alpha=m.alpha, eta=m.eta
    ) / float(counts.sum())
    assert run.bounds[-1] == pytest.approx(expected, rel=1e-12)
    assert len(run.estep_converged) == 2
    assert all(0.0 <= s <= 1.0 for s in run.estep_converged)
    with pytest.raises(RuntimeError, match="no pass has run"):
        OnlineRun(model_builder()(1), counts).per_word_bound()


def test_starts_keep_the_highest_bound_and_start_zero_is_the_seed(counts) -> None:
    build = model_builder()
    model, trace = train_to_convergence(
        build, counts, seed=7, passes=40, bound_tol=1e-3, starts=4, start_passes=2
    )
    assert len(trace.start_bounds) == 4 and trace.start_passes == 2
    assert trace.kept_start == int(np.argmax(trace.start_bounds))
    # the kept run carries on from its start: its first two passes are the start's
    assert trace.per_word_bound[1] == trace.start_bounds[trace.kept_start]
    # every start is a plain run from its own seed
    for start, bound in enumerate(trace.start_bounds):
        run = OnlineRun(build(start_seed(7, start)), counts)
        run.run(2, 1e-3)
        assert run.bounds[-1] == bound
    assert start_seed(7, 0) == 7
    assert len({start_seed(7, r) for r in range(4)}) == 4
    # the same call gives the same model
    again, _ = train_to_convergence(
        build, counts, seed=7, passes=40, bound_tol=1e-3, starts=4, start_passes=2
    )
    np.testing.assert_array_equal(again.get_topics(), model.get_topics())


def test_one_start_is_a_single_run_from_the_seed(counts) -> None:
    build = model_builder()
    model, trace = train_to_convergence(build, counts, seed=5, passes=30, bound_tol=1e-3)
    assert trace.start_bounds == [] and trace.kept_start == 0 and trace.start_passes == 0
    run = OnlineRun(build(5), counts)
    run.run(30, 1e-3)
    assert run.bounds == trace.per_word_bound
    np.testing.assert_array_equal(run.model.get_topics(), model.get_topics())


def test_trace_is_json_on_the_result_and_documented_fields(counts) -> None:
    est = LdaTopics(k=3, seed=1, chunksize=30, starts=3, start_passes=2).fit(counts, shares=False)
    stored = json.loads(json.dumps(est.result_.params["convergence"], allow_nan=False))
    assert set(stored) == {
        "per_word_bound",
        "estep_converged",
        "passes",
        "converged",
        "bound_tol",
        "max_passes",
        "start_bounds",
        "start_passes",
        "kept_start",
        "seconds",
    }
    assert stored == est.convergence_.as_dict()
    assert stored["passes"] == len(stored["per_word_bound"]) == len(stored["estep_converged"])
    assert stored["max_passes"] == est.passes == SweepSettings().lda_passes
    assert stored["bound_tol"] == SweepSettings().lda_bound_tol
    assert len(stored["start_bounds"]) == 3
    assert stored["seconds"] > 0


def test_defaults_come_from_the_sweep_settings() -> None:
    defaults = SweepSettings()
    est = LdaTopics()
    assert (est.passes, est.bound_tol, est.starts, est.start_passes) == (
        defaults.lda_passes,
        defaults.lda_bound_tol,
        defaults.lda_starts,
        defaults.lda_start_passes,
    )
    with pytest.raises(ValueError, match="lda_bound_tol"):
        SweepSettings(lda_bound_tol=1.5)
    with pytest.raises(ValueError, match="lda_starts"):
        SweepSettings(lda_starts=0)


def test_settings_are_checked_before_training(counts) -> None:
    with pytest.raises(ConfigError, match=r"LdaTopics: bound_tol=2 is not allowed"):
        LdaTopics(k=3, bound_tol=2).fit(counts)
    with pytest.raises(ConfigError, match=r"LdaTopics: starts=1.5 is not allowed"):
        LdaTopics(k=3, starts=1.5).fit(counts)  # type: ignore[arg-type]
