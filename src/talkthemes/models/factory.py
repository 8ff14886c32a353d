"""Making a topic model from the ``[sweep]`` settings: one place for the sweep, publish and
refresh.

Every model the product fits — a sweep cell, the version ``publish`` writes, a refresh's
retraining and its calibration fits — is configured here from the same settings, so a
published version is the model its sweep cell scored.
"""

from __future__ import annotations

from typing import Any

from talkthemes.config import SweepSettings
from talkthemes.errors import ConfigError
from talkthemes.models.lda import LdaTopics
from talkthemes.models.nmf import NmfTopics

__all__ = ["make_model"]


def make_model(family: str, k: int, seed: int, settings: SweepSettings) -> Any:
    """An unfitted model of ``family`` configured from ``[sweep]`` settings.

    Parameters
    ----------
    family : {'lda', 'nmf'}
    k : int
        Number of topics.
    seed : int
        Random seed of the fit.
    settings : SweepSettings
        ``lda_*`` settings configure LDA, ``nmf_*`` settings NMF.

    Returns
    -------
    LdaTopics or NmfTopics
        With ``fit(counts, shares=...)`` and ``result_`` once fitted.

    Raises
    ------
    ConfigError
        When ``family`` is neither ``lda`` nor ``nmf``.
    """
    if family == "lda":
        return LdaTopics(
            k=k,
            seed=seed,
            passes=settings.lda_passes,
            iterations=settings.lda_iterations,
            chunksize=settings.lda_chunksize,
            alpha=settings.lda_alpha,
            eta=settings.lda_eta,
            bound_tol=settings.lda_bound_tol,
            starts=settings.lda_starts,
            start_passes=settings.lda_start_passes,
        )
    if family == "nmf":
        return NmfTopics(
            k=k,
            seed=seed,
            loss=settings.nmf_loss,
            max_iter=settings.nmf_max_iter,
            tol=settings.nmf_tol,
            dtype=settings.nmf_dtype,
        )
    raise ConfigError(f"model family {family!r}: expected lda or nmf")
