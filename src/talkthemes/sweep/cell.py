"""One cell of a sweep, fitted on a Dask worker (or in-process).

A cell fits one model on the training transcripts of the prep (its seed's subsample), and
returns plain JSON values: its top term ids, fit seconds, held-out perplexity (LDA) or
reconstruction error (NMF), the largest share of its training transcripts one theme leads
(the recommendation's catch-all check, docs/methods.md "The recommendation"), and the
worker's peak memory. Its topic–term matrix is saved as
``sweeps/<id>/topics/<cell>.npy``.
"""

from __future__ import annotations

import io
import resource
from pathlib import Path
from typing import Any

import numpy as np
from threadpoolctl import threadpool_limits

from talkthemes.config import SweepSettings
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.sweep.grid import CellSpec
from talkthemes.sweep.sample import restrict
from talkthemes.sweep.split import split_rows, subsample_rows
from talkthemes.workspace import atomic_write_bytes

__all__ = ["fit_cell", "save_topics"]

# One prep per worker process at a time: the cells of a sweep all read the same one.
_PREP_CACHE: dict[str, PreparedCorpus] = {}


def _load_prep(folder: str) -> PreparedCorpus:
    if folder not in _PREP_CACHE:
        _PREP_CACHE.clear()
        _PREP_CACHE[folder] = PreparedCorpus.load(Path(folder))
    return _PREP_CACHE[folder]


def fit_cell(
    prep_folder: str,
    sweep_folder: str,
    family: str,
    k: int,
    seed: int,
    settings: dict[str, Any],
    heldout_share: float,
    rows: np.ndarray | None = None,
) -> dict[str, Any]:
    """Fit one cell and return its metrics; writes ``topics/<cell>.npy`` under the sweep.

    Runs on a Dask worker (or in-process). Returns plain JSON values: the cell's top
    term ids, fit seconds, held-out perplexity (LDA) or reconstruction error (NMF),
    ``largest_lead_share`` (of the transcripts it was fitted on) and the worker's peak
    memory. ``rows`` (a sweep on a sample, :mod:`talkthemes.sweep.sample`): the prep rows
    of the sample; the cell trains on the sample's training rows only.
    """
    # Deferred on purpose: gensim and scikit-learn take about a second to import, which
    # only the processes that fit models pay (the sweep's client never does).
    from talkthemes.metrics.evenness import largest_lead_share
    from talkthemes.models.base import top_terms
    from talkthemes.models.factory import make_model

    spec = CellSpec(family, k, seed)
    sweep_settings = SweepSettings.model_validate(settings)
    corpus = _load_prep(prep_folder)
    train, held = split_rows(corpus.doc_ids, heldout_share)
    train, held = restrict(train, rows), restrict(held, rows)
    train = subsample_rows(train, sweep_settings.subsample, seed)
    counts = corpus.counts.tocsr()
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
    path = Path(sweep_folder) / "topics" / f"{spec.cell}.npy"
    save_topics(path, result.topic_terms.astype(np.float32))
    return metrics


def save_topics(path: Path, array: np.ndarray) -> None:
    """Save an array as ``.npy`` (no pickle) atomically."""
    buf = io.BytesIO()
    np.save(buf, array, allow_pickle=False)
    atomic_write_bytes(path, buf.getvalue())
