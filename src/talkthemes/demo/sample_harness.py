"""How far publishing from a sample agrees with fitting on every call (planted corpora).

A sweep on a sample publishes its cell by fitting from the sample
(:func:`talkthemes.versions.fit_sample.fit_on_every_call`: NMF fitted on the sample and every
call transformed; LDA fitted on the sample, then online passes over every call). This
harness fits the same family, K and seed both ways on one prepared planted corpus
(:mod:`talkthemes.demo.harness`) and reports:

- **lead agreement**: the share of calls whose lead theme (largest share) is the same theme
  in both models, after the two models' themes are matched one to one by the Hungarian
  assignment (Kuhn 1955, ``scipy.optimize.linear_sum_assignment``) on the Jensen–Shannon
  distance between their topic–term rows; over every call, and over the calls outside the
  sample only;
- the same agreement between two fits on every call with different seeds (``seed`` and
  ``seed + 1``): how much of the disagreement a sample adds beyond a change of seed;
- each model's NMI and ARI against the planted reasons (:func:`score_leads`).

``bench/sample_agreement.py`` prints the table; ``tests/test_sample_agreement.py`` runs a
small subset (docs/methods.md, "Sweeping a sample").
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from talkthemes.demo.harness import PlantedWorkspace, score_leads
from talkthemes.metrics.layout import js_distance_matrix
from talkthemes.metrics.matching import optimal_assignment
from talkthemes.sweep.sample import draw_for_sweep

__all__ = ["SampleAgreement", "compare_sample_fit", "matched_lead_agreement"]


def matched_lead_agreement(
    topics_a: np.ndarray, shares_a: np.ndarray, topics_b: np.ndarray, shares_b: np.ndarray
) -> np.ndarray:
    """Per call: whether its lead theme in B is the theme of B matched to its lead in A.

    Parameters
    ----------
    topics_a, topics_b : ndarray of shape (K, V)
        Topic–term rows of the two models (same vocabulary).
    shares_a, shares_b : ndarray of shape (D, K)
        The calls' shares in each model (same calls, same order).

    Returns
    -------
    ndarray of bool, shape (D,)
    """
    pairs = optimal_assignment(js_distance_matrix(topics_a, topics_b))
    mapping = np.full(topics_a.shape[0], -1, dtype=np.int64)
    mapping[pairs[:, 0]] = pairs[:, 1]
    return mapping[np.argmax(shares_a, axis=1)] == np.argmax(shares_b, axis=1)


@dataclass(frozen=True)
class SampleAgreement:
    """One comparison of a fit on every call with a fit from a sample."""

    family: str
    k: int
    seed: int
    calls: int
    sample: int
    agreement: float
    agreement_outside: float
    agreement_seeds: float
    nmi_all: float
    ari_all: float
    nmi_sample: float
    ari_sample: float
    seconds_all: float
    seconds_sample: float


def compare_sample_fit(
    pw: PlantedWorkspace, family: str, k: int, seed: int, sample: int, sample_seed: int = 0
) -> SampleAgreement:
    """Fit ``family`` at ``k`` on every call and from a stratified sample of ``sample`` calls
    (as a sweep on a sample draws it, by month and segment fields), and compare them."""
    # Deferred on purpose, as in talkthemes.versions.fit.
    from talkthemes.models.factory import make_model
    from talkthemes.versions.fit_sample import fit_on_every_call

    settings = pw.workspace.settings().sweep.model_copy(update={"sample_seed": sample_seed})
    counts = pw.corpus.counts.tocsr()
    t0 = time.perf_counter()
    full = make_model(family, k, seed, settings).fit(counts).result_
    t1 = time.perf_counter()
    drawn = draw_for_sweep(pw.workspace, pw.corpus, settings, sample)
    assert drawn is not None
    part = fit_on_every_call(family, k, seed, settings, counts, drawn.rows_a).result_
    t2 = time.perf_counter()
    other = make_model(family, k, seed + 1, settings).fit(counts).result_
    seeds = matched_lead_agreement(
        full.topic_terms, full.doc_topics, other.topic_terms, other.doc_topics
    )
    same = matched_lead_agreement(
        full.topic_terms, full.doc_topics, part.topic_terms, part.doc_topics
    )
    outside = np.ones(len(same), dtype=bool)
    outside[drawn.rows_a] = False
    ids = pw.corpus.doc_ids
    s_all = score_leads(pw.truth, ids, np.argmax(full.doc_topics, axis=1), k)
    s_part = score_leads(pw.truth, ids, np.argmax(part.doc_topics, axis=1), k)
    return SampleAgreement(
        family=family,
        k=k,
        seed=seed,
        calls=len(ids),
        sample=len(drawn.rows_a),
        agreement=float(same.mean()),
        agreement_outside=float(same[outside].mean()),
        agreement_seeds=float(seeds.mean()),
        nmi_all=s_all.nmi,
        ari_all=s_all.ari,
        nmi_sample=s_part.nmi,
        ari_sample=s_part.ari,
        seconds_all=t1 - t0,
        seconds_sample=t2 - t1,
    )
