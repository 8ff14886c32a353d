"""The refresh's calibration fits: the same family and K with other seeds, each on a random
subsample, from which the same-theme cut-off is calibrated (docs/operations.md, "What a
refresh does", step 7)."""

from __future__ import annotations

from typing import Any

import numpy as np

from talkthemes.sweep.split import subsample_rows
from talkthemes.workspace import Workspace

__all__ = ["calibration_fits"]


def calibration_fits(
    ws: Workspace, counts: Any, family: str, k: int, seed: int, n: int
) -> list[np.ndarray]:
    """``n`` more fits of ``family`` at ``k`` (seeds ``seed + 1`` …), each on its own random
    ``[sweep] subsample`` of the transcripts: the topic–term matrices the same-theme cut-off
    is calibrated on (:func:`talkthemes.versions.align.calibrate_threshold`)."""
    # Deferred on purpose: talkthemes.models loads gensim and scikit-learn (about a second).
    from talkthemes.models.factory import make_model

    settings = ws.settings().sweep
    rows_all = np.arange(counts.shape[0])
    out = []
    for i in range(n):
        s = seed + 1 + i
        rows = subsample_rows(rows_all, settings.subsample, s)
        out.append(
            make_model(family, k, s, settings).fit(counts[rows], shares=False).result_.topic_terms
        )
    return out
