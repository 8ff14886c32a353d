"""Publishing a cell that was swept on a sample: the model fitted on every call.

A sweep on a sample (:mod:`talkthemes.sweep.sample`) chose its cell on sample A; ``publish``
then gives every call of the prep its shares (docs/methods.md, "Sweeping a sample"):

* **LDA** is fitted on the sample first (best of the random starts, to convergence, exactly
  as a cell), then its online variational Bayes continues over **every call** in
  minibatches (Hoffman, Blei & Bach 2010): at most ``[sweep] sample_publish_passes`` passes,
  fewer once the per-word bound of all calls converges (``lda_bound_tol``). Every call's
  shares are then inferred in chunks.
* **NMF** is fitted on the sample and the rest of the calls are **transformed** with its
  topics held fixed (the idf learned on the sample), in chunks of :data:`CHUNK` calls.
  ``bench/sample_agreement.py`` measures how far the calls' lead themes agree with a fit on
  every call.
"""

from __future__ import annotations

import time
from typing import Any

import numpy as np
import scipy.sparse as sp

from talkthemes.config import SweepSettings
from talkthemes.models.base import FittedTopics

__all__ = ["CHUNK", "fit_on_every_call"]

#: Calls per block when transforming (NMF) or inferring shares (LDA) over every call.
CHUNK = 20_000


def fit_on_every_call(
    family: str,
    k: int,
    seed: int,
    settings: SweepSettings,
    counts: sp.csr_matrix,
    sample_rows: np.ndarray,
) -> Any:
    """A model fitted from ``sample_rows`` whose ``result_`` covers every row of ``counts``.

    Parameters
    ----------
    family : {'lda', 'nmf'}
    k, seed : int
    settings : SweepSettings
    counts : scipy.sparse.csr_matrix of shape (D, V)
        Every call of the prep.
    sample_rows : numpy.ndarray of int
        The rows of the sweep's sample.

    Returns
    -------
    LdaTopics or NmfTopics
        Fitted; ``result_.doc_topics`` has D rows and ``result_.params["sample"]`` says how
        it was fitted.
    """
    # Deferred on purpose: gensim and scikit-learn are slow to import (as in fit.py).
    from talkthemes.models.factory import make_model
    from talkthemes.models.lda_infer import infer_doc_topics
    from talkthemes.models.lda_train import OnlineRun
    from talkthemes.models.nmf import transform_counts

    start = time.perf_counter()
    rows = np.asarray(sample_rows, dtype=np.int64)
    model = make_model(family, k, seed, settings).fit(counts[rows], shares=False)
    sampled = model.result_
    how: dict[str, Any] = {"calls": len(rows), "fit_seconds": float(sampled.fit_seconds)}
    n = counts.shape[0]
    if family == "lda":
        run = OnlineRun(model.model_, counts)
        converged = run.run(settings.sample_publish_passes, settings.lda_bound_tol)
        how.update(
            method="fit on the sample, then online passes over every call",
            passes_on_all=run.passes_done,
            converged_on_all=bool(converged),
            per_word_bound_on_all=[float(b) for b in run.bounds],
        )
        del run  # its per-call γ is as large as the shares about to be inferred
        doc_topics = infer_doc_topics(model.model_, counts, seed=seed, chunksize=min(CHUNK, n))
        topic_terms = np.asarray(model.model_.get_topics(), dtype=np.float64)
        model.n_documents_ = n
    else:
        state = model.state()
        blocks = [transform_counts(counts[lo : lo + CHUNK], state) for lo in range(0, n, CHUNK)]
        doc_topics = np.vstack(blocks)
        topic_terms = sampled.topic_terms
        how["method"] = "fit on the sample, every call transformed"
    params = {**sampled.params, "n_documents": n, "sample": how}
    model.result_ = FittedTopics(
        topic_terms=topic_terms,
        doc_topics=doc_topics,
        params=params,
        fit_seconds=time.perf_counter() - start,
    )
    return model
