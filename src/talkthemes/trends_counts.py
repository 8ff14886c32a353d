"""Theme shares from lead counts, with bootstrap intervals: the counting half of
:mod:`talkthemes.trends`.

:mod:`talkthemes.trends` counts each group's lead themes from per-transcript arrays; a
version's viewer tables (:mod:`talkthemes.versions.tables`) hold those counts already.
Both reach the same functions here, so the same counts and seed give the same frame and
the same bootstrap draws (percentile bootstrap, Efron & Tibshirani 1993, ch. 13; see
:mod:`talkthemes.trends` for why binomial draws per theme are that bootstrap).

References
----------
Efron, B. & Tibshirani, R. J. (1993). *An Introduction to the Bootstrap.* Chapman & Hall,
New York. Chapter 13 (percentile intervals).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from talkthemes.errors import InputError

__all__ = ["count_table", "label_rows", "lead_share_from_counts", "movers_from_counts"]

# Upper bound on bootstrap draws held in memory at once (floats), so a long weekly
# history with many themes is resampled in chunks of groups.
_MAX_DRAWS_PER_CHUNK = 4_000_000


def movers_from_counts(
    before: np.ndarray,
    after: np.ndarray,
    *,
    n_boot: int = 500,
    seed: int = 0,
    level: float = 0.95,
    theme_ids: Sequence[int] | None = None,
    names: Sequence[str] | None = None,
) -> pd.DataFrame:
    """:func:`movers` from the lead counts of the two periods (a version's viewer tables
    hold them, :mod:`talkthemes.versions.tables`): the same frame, the same draws.

    Parameters
    ----------
    before, after : numpy.ndarray of shape (K,), int
        Transcripts each theme leads in the earlier and the later period; neither may
        sum to zero.
    n_boot, seed, level, theme_ids, names
        As in :func:`movers`.
    """
    check_boot(n_boot, level, "movers")
    counts = np.stack([np.asarray(before, np.int64), np.asarray(after, np.int64)])
    n_themes = counts.shape[1]
    n = counts.sum(axis=1)
    for total, label in zip(n, ("first (before)", "second (after)"), strict=True):
        if total == 0:
            raise InputError(f"movers: the {label} period has no transcripts")
    share = counts / n[:, None]
    rng = np.random.default_rng(seed)
    draws_a = rng.binomial(n[0], share[0], size=(n_boot, n_themes)) / n[0]
    draws_b = rng.binomial(n[1], share[1], size=(n_boot, n_themes)) / n[1]
    tail = (1.0 - level) / 2.0
    lo, hi = np.quantile(100.0 * (draws_b - draws_a), [tail, 1.0 - tail], axis=0)
    ids, labels = _theme_labels(n_themes, theme_ids, names)
    out = pd.DataFrame(
        {
            "theme_id": ids,
            "name": labels,
            "share_before": share[0],
            "share_after": share[1],
            "change": 100.0 * (share[1] - share[0]),
            "lo": lo,
            "hi": hi,
            "n_before": np.full(n_themes, n[0], dtype=np.int64),
            "n_after": np.full(n_themes, n[1], dtype=np.int64),
        }
    )
    order = np.lexsort((out["theme_id"].to_numpy(), -np.abs(out["change"].to_numpy())))
    return out.iloc[order].reset_index(drop=True)


def lead_share_from_counts(
    counts: np.ndarray,
    keys: pd.Index,
    key_name: str,
    *,
    n_boot: int = 500,
    seed: int = 0,
    level: float = 0.95,
    theme_ids: Sequence[int] | None = None,
    names: Sequence[str] | None = None,
) -> pd.DataFrame:
    """:func:`lead_share_by_period` / :func:`lead_share_by_segment` from lead counts.

    Parameters
    ----------
    counts : numpy.ndarray of shape (G, K), int
        Transcripts each theme leads in each group (row ``g`` is ``keys[g]``).
    keys : pandas.Index
        The groups (period starts, or segment values as text), in the order to report.
    key_name : {"period", "segment"}
    n_boot, seed, level, theme_ids, names
        As in :func:`lead_share_by_period`.

    Returns
    -------
    pandas.DataFrame
        The frame those functions return, with the same bootstrap draws for the same
        counts and seed.
    """
    counts = np.asarray(counts, dtype=np.int64)
    if counts.ndim != 2 or counts.shape[0] != len(keys):
        raise InputError(f"lead_share_from_counts: counts {counts.shape} for {len(keys)} groups")
    table = count_table(counts, n_boot=n_boot, seed=seed, level=level, what=key_name)
    return label_rows(table, key_name, keys, counts.shape[1], theme_ids, names)


def check_boot(n_boot: int, level: float, what: str) -> None:
    if int(n_boot) < 1:
        raise InputError(f"{what}: n_boot must be at least 1, not {n_boot}")
    if not 0.0 < float(level) < 1.0:
        raise InputError(f"{what}: level must lie strictly between 0 and 1, not {level}")


def count_table(
    counts: np.ndarray, *, n_boot: int, seed: int, level: float, what: str
) -> dict[str, np.ndarray]:
    """Shares and bootstrap intervals from the (group, theme) lead counts."""
    check_boot(n_boot, level, what)
    n_themes = counts.shape[1]
    n = counts.sum(axis=1)
    share = np.full(counts.shape, np.nan)
    lo = np.full(counts.shape, np.nan)
    hi = np.full(counts.shape, np.nan)
    filled = n > 0
    share[filled] = counts[filled] / n[filled, None]
    rng = np.random.default_rng(seed)
    tail = (1.0 - level) / 2.0
    rows = np.flatnonzero(filled)
    step = max(1, _MAX_DRAWS_PER_CHUNK // (n_boot * n_themes))
    for start in range(0, rows.size, step):
        idx = rows[start : start + step]
        nn = n[idx][:, None]
        draws = rng.binomial(nn, share[idx], size=(n_boot, idx.size, n_themes)) / nn
        lo[idx], hi[idx] = np.quantile(draws, [tail, 1.0 - tail], axis=0)
    return {"share": share, "lo": lo, "hi": hi, "n": n}


def _theme_labels(
    n_themes: int, theme_ids: Sequence[int] | None, names: Sequence[str] | None
) -> tuple[np.ndarray, list[str]]:
    ids = np.arange(n_themes, dtype=np.int64) if theme_ids is None else np.asarray(theme_ids)
    if ids.shape != (n_themes,):
        raise InputError(f"theme_ids has {ids.size} entries for {n_themes} themes")
    ids = ids.astype(np.int64)
    if names is None:
        labels = [f"theme {i}" for i in ids]
    else:
        labels = [str(s) for s in names]
        if len(labels) != n_themes:
            raise InputError(f"names has {len(labels)} entries for {n_themes} themes")
    return ids, labels


def label_rows(
    table: dict[str, np.ndarray],
    key_name: str,
    keys: pd.Index,
    n_themes: int,
    theme_ids: Sequence[int] | None,
    names: Sequence[str] | None,
) -> pd.DataFrame:
    ids, labels = _theme_labels(n_themes, theme_ids, names)
    n_groups = len(keys)
    out = pd.DataFrame(
        {
            key_name: np.repeat(keys.to_numpy(), n_themes),
            "theme_id": np.tile(ids, n_groups),
            "name": np.tile(np.asarray(labels, dtype=object), n_groups),
            "share": table["share"].ravel(),
            "lo": table["lo"].ravel(),
            "hi": table["hi"].ravel(),
            "n": np.repeat(table["n"], n_themes).astype(np.int64),
        }
    )
    out["name"] = out["name"].astype(str)
    if key_name == "segment":
        out["segment"] = out["segment"].astype(str)
    return out.sort_values([key_name, "theme_id"], kind="stable").reset_index(drop=True)
