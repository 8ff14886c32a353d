"""Fitting the model of a version on every transcript of a prep, and scoring its themes.

:func:`fit_version` is shared by ``publish`` and ``refresh``: it fits the family at K with a
seed on all transcripts (the ``[sweep]`` settings give the rest, through
:func:`talkthemes.models.factory.make_model`), infers every transcript's shares, and scores
each theme's coherence (C_NPMI and C_V) on the prep's token streams (docs/methods.md,
"Publishing").
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from talkthemes.metrics.coherence import score
from talkthemes.metrics.cooccurrence import build_reference
from talkthemes.workspace import Workspace

__all__ = ["FittedVersion", "fit_version", "prep_record"]


@dataclass
class FittedVersion:
    """A model fitted on a prep and scored: everything a version folder holds.

    Built by :func:`fit_version`; written by :func:`write_version`.
    """

    family: str
    k: int
    seed: int
    topic_terms: np.ndarray
    doc_topics: np.ndarray
    doc_ids: list[str]
    vocabulary: list[str]
    state_arrays: dict[str, np.ndarray]
    state_params: dict[str, Any]
    info: dict[str, Any]
    prep_info: dict[str, Any]


def prep_record(corpus: Any) -> dict[str, Any]:
    """The part of a prep's ``prep.json`` a version keeps, to prepare new text alike."""
    info = corpus.info
    return {
        "hash": info.get("hash", ""),
        "settings": info.get("settings", {}),
        "phrases": info.get("phrases", []),
        "boilerplate": info.get("boilerplate", []),
        "chain_version": info.get("chain_version", ""),
        "lemmas": info.get("lemmas", {}),
        "names": info.get("names", {}),
        "excluded": [[t, r] for t, r in corpus.excluded],
        "corpus_fingerprint": info.get("corpus_fingerprint", ""),
    }


def fit_version(
    ws: Workspace,
    corpus: Any,
    *,
    family: str,
    k: int,
    seed: int,
    prep_hash: str,
    model: Any = None,
) -> FittedVersion:
    """Fit ``family`` at ``k`` with ``seed`` on every transcript of a prep and score it.

    Parameters
    ----------
    ws : Workspace
    corpus : PreparedCorpus
    family, k, seed
        The model to fit (``[sweep]`` settings give the rest).
    prep_hash : str
    model : fitted model, optional
        An already fitted model of this configuration on ``corpus`` (it is not refitted).

    Returns
    -------
    FittedVersion
        With per-theme coherence (C_NPMI, C_V on the prep's token streams) and each
        theme's share of all tokens.
    """
    # Deferred on purpose: gensim and scikit-learn take about a second to import, which
    # loading or exporting a version never needs.
    from talkthemes.models.base import top_terms, topic_shares
    from talkthemes.models.factory import make_model

    settings = ws.settings()
    counts = corpus.counts.tocsr()
    if model is None:
        model = make_model(family, k, seed, settings.sweep).fit(counts)
    result = model.result_
    tops = top_terms(result.topic_terms, min(settings.sweep.topn, result.topic_terms.shape[1]))
    reference = build_reference(
        corpus.tokens, corpus.offsets, counts, np.unique(tops), windows=(110, 10)
    )
    coherence = {
        m: [float(x) for x in score(reference, tops, m).per_topic] for m in ("c_npmi", "c_v")
    }
    lengths = np.asarray(counts.sum(axis=1)).ravel()
    weights = topic_shares(result.doc_topics, lengths)
    arrays, params = model.state()
    info = {
        "family": family,
        "k": int(k),
        "seed": int(seed),
        "prep_hash": prep_hash,
        "n_docs": corpus.n_docs,
        "n_terms": corpus.n_terms,
        "topic_weights": [float(x) for x in weights],
        "coherence": coherence,
        "topn": settings.sweep.topn,
        "params": result.params,
        "fit_seconds": float(result.fit_seconds),
        "prepare_settings": corpus.info.get("settings") or settings.prepare.model_dump(),
        "libraries": corpus.info.get("versions", {}),
    }
    return FittedVersion(
        family=family,
        k=int(k),
        seed=int(seed),
        topic_terms=np.asarray(result.topic_terms),
        doc_topics=np.asarray(result.doc_topics),
        doc_ids=list(corpus.doc_ids),
        vocabulary=list(corpus.vocabulary),
        state_arrays=arrays,
        state_params=params,
        info=info,
        prep_info=prep_record(corpus),
    )
