"""One cell of a sweep, fitted on a Dask worker that shares no disk with the client.

The client builds the sweep's inputs once (:func:`cell_inputs`: the prep's term counts as
plain CSR arrays and the training and held-out rows) and scatters them to every worker;
each cell task receives them from the worker's memory, fits one model on the training
rows (its seed's subsample), and returns plain values: its metrics (top term ids, fit
seconds, held-out perplexity (LDA) or reconstruction error (NMF), the largest share of its
training transcripts one theme leads — the recommendation's catch-all check,
docs/methods.md "The recommendation" — and the worker's peak memory) and its topic–term
matrix. A worker never opens a file of the workspace; the client writes
``sweeps/<id>/topics/<cell>.npy`` and records the cell (docs/operations.md, "Sweeping on
a cluster").
"""

from __future__ import annotations

import io
import resource
from pathlib import Path
from typing import Any

import numpy as np
import scipy.sparse as sp
from threadpoolctl import threadpool_limits

from talkthemes.config import SweepSettings
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.sweep.sample import restrict
from talkthemes.sweep.split import split_rows, subsample_rows
from talkthemes.testhook import pause_at
from talkthemes.workspace import atomic_write_bytes

__all__ = ["CellOutput", "cell_inputs", "fit_cell", "save_topics"]

#: What :func:`fit_cell` returns: ``{"metrics": dict, "topic_terms": K×V float32 array}``.
CellOutput = dict[str, Any]


def cell_inputs(
    corpus: PreparedCorpus, heldout_share: float, rows: np.ndarray | None = None
) -> dict[str, np.ndarray]:
    """What every cell of a sweep reads, as plain arrays (scattered once per sweep).

    Parameters
    ----------
    corpus : PreparedCorpus
    heldout_share : float
        Share of transcripts held out for the held-out fit (:func:`split_rows`).
    rows : ndarray, optional
        The sweep's sample (:mod:`talkthemes.sweep.sample`): training and held-out rows
        are taken among these only. None: every call.

    Returns
    -------
    dict of str to ndarray
        ``data``, ``indices``, ``indptr``, ``shape`` of the D×V CSR term counts, and the
        ``train`` and ``held`` row numbers.
    """
    counts = sp.csr_matrix(corpus.counts)
    train, held = split_rows(corpus.doc_ids, heldout_share)
    train, held = restrict(train, rows), restrict(held, rows)
    return {
        "data": counts.data,
        "indices": counts.indices,
        "indptr": counts.indptr,
        "shape": np.asarray(counts.shape, dtype=np.int64),
        "train": train,
        "held": held,
    }


def fit_cell(
    inputs: dict[str, np.ndarray],
    family: str,
    k: int,
    seed: int,
    settings: dict[str, Any],
) -> CellOutput:
    """Fit one cell and return its metrics and topic–term matrix.

    Runs on a Dask worker (or in-process) and reads nothing but its arguments.

    Parameters
    ----------
    inputs : dict of str to ndarray
        :func:`cell_inputs` of the sweep's prep.
    family : str
        ``lda`` or ``nmf``.
    k : int
    seed : int
    settings : dict
        The sweep's ``[sweep]`` settings (``SweepSettings.model_dump()``).

    Returns
    -------
    dict
        ``metrics``: plain JSON values (``top_terms``, ``fit_seconds``,
        ``largest_lead_share``, ``perplexity`` and ``convergence`` (LDA) or
        ``reconstruction_error`` (NMF), ``peak_memory_mb``); ``topic_terms``: the K×V
        float32 topic–term matrix.
    """
    # Deferred on purpose: gensim and scikit-learn take about a second to import, which
    # only the processes that fit models pay (the sweep's client never does).
    from talkthemes.metrics.evenness import largest_lead_share
    from talkthemes.models.base import top_terms
    from talkthemes.models.factory import make_model

    pause_at("sweep-fit", "sweep")  # test hook: a cell that is surely running when killed
    sweep_settings = SweepSettings.model_validate(settings)
    shape = tuple(int(n) for n in inputs["shape"])
    counts = sp.csr_matrix((inputs["data"], inputs["indices"], inputs["indptr"]), shape=shape)
    train = subsample_rows(inputs["train"], sweep_settings.subsample, seed)
    held = inputs["held"]
    with threadpool_limits(1):  # parallelism is across cells, not inside one
        # the training shares give each transcript's lead theme (LDA: one more E-step pass)
        model = make_model(family, k, seed, sweep_settings).fit(counts[train], shares=True)
        result = model.result_
        metrics: dict[str, Any] = {
            "fit_seconds": float(result.fit_seconds),
            "largest_lead_share": largest_lead_share(result.doc_topics),
        }
        if family == "lda":
            # how training stopped (per-word bound per pass; docs/methods_models.md)
            metrics["convergence"] = result.params.get("convergence")
            metrics["perplexity"] = (
                float(model.heldout_perplexity(counts[held], total_docs=len(train)))
                if len(held)
                else float("nan")
            )
        else:
            metrics["reconstruction_error"] = float(model.reconstruction_err_)
    keep = max(sweep_settings.topn, sweep_settings.stability_topn, sweep_settings.diversity_topn)
    tops = top_terms(result.topic_terms, min(keep, result.topic_terms.shape[1]))
    metrics["top_terms"] = tops.tolist()
    metrics["peak_memory_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    return {"metrics": metrics, "topic_terms": result.topic_terms.astype(np.float32)}


def save_topics(path: Path, array: np.ndarray) -> None:
    """Save an array as ``.npy`` (no pickle) atomically."""
    buf = io.BytesIO()
    np.save(buf, array, allow_pickle=False)
    atomic_write_bytes(path, buf.getvalue())
