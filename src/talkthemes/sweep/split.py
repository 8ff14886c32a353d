"""Which transcripts a cell trains on: the held-out split and each seed's subsample."""

from __future__ import annotations

import hashlib
from collections.abc import Sequence

import numpy as np

__all__ = ["split_rows", "subsample_rows", "subsample_size"]


def split_rows(doc_ids: Sequence[str], heldout_share: float) -> tuple[np.ndarray, np.ndarray]:
    """Split transcripts into training and held-out rows by a hash of their id.

    The split depends only on each id, not on order or corpus size, so a transcript stays
    on the same side across sweeps and refreshes.

    Returns
    -------
    train_rows, heldout_rows : ndarray of int64
    """
    if heldout_share <= 0:
        return np.arange(len(doc_ids), dtype=np.int64), np.zeros(0, dtype=np.int64)
    cut = int(heldout_share * 2**32)
    held = np.fromiter(
        (
            int.from_bytes(hashlib.blake2b(t.encode("utf-8"), digest_size=4).digest(), "big") < cut
            for t in doc_ids
        ),
        dtype=bool,
        count=len(doc_ids),
    )
    return np.flatnonzero(~held).astype(np.int64), np.flatnonzero(held).astype(np.int64)


def subsample_size(n_rows: int, share: float) -> int:
    """How many of ``n_rows`` rows :func:`subsample_rows` keeps."""
    if share >= 1 or n_rows == 0:
        return n_rows
    return max(1, round(share * n_rows))


def subsample_rows(rows: np.ndarray, share: float, seed: int) -> np.ndarray:
    """A seeded random ``share`` of ``rows`` (sorted); all rows when ``share`` is 1.

    Greene, O'Callaghan & Cunningham (2014) measure stability over models fitted on random
    subsamples of the documents; each seed here draws its own.
    """
    if share >= 1 or len(rows) == 0:
        return rows
    rng = np.random.default_rng([int(seed), 20140915])
    n = subsample_size(len(rows), share)
    return np.sort(rng.choice(rows, size=n, replace=False))
