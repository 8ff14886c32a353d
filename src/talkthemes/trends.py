"""Theme shares over time and across segments, with bootstrap intervals.

Every function here is pure: arrays and Series in, a small aggregated DataFrame out, no
files and no clock. The inputs are per transcript (its lead theme, its date or segment);
the outputs are per (period or segment, theme) and are what :mod:`talkthemes.charts`
draws, so per-transcript rows never reach a chart.

The share of a theme in a group of ``n`` transcripts is the fraction of them whose lead
theme it is. Its 95% interval is the bootstrap percentile interval (Efron & Tibshirani
1993, ch. 13): resample the group's ``n`` transcripts with replacement, recompute the
share, and take the 2.5th and 97.5th percentiles of the resampled shares. Resampling
transcripts i.i.d. from the group's empirical distribution makes the vector of lead
counts Multinomial(n, p̂), so each theme's count is marginally Binomial(n, p̂_k); because
every interval here is per theme, drawing those binomial counts directly is the same
bootstrap, only vectorised (``tests/test_trends.py`` checks it against an explicit
resampling loop).

References
----------
Efron, B. & Tibshirani, R. J. (1993). *An Introduction to the Bootstrap.* Chapman & Hall,
New York. Chapter 13 (percentile intervals).
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from typing import Literal

import numpy as np
import pandas as pd

from talkthemes.errors import InputError
from talkthemes.trends_counts import (
    check_boot,
    count_table,
    label_rows,
    lead_share_from_counts,
    movers_from_counts,
)

__all__ = [
    "lead_share_by_period",
    "lead_share_by_segment",
    "lead_share_from_counts",
    "movers",
    "movers_from_counts",
    "period_range",
    "period_start",
]

logger = logging.getLogger(__name__)

Freq = Literal["week", "month"]


def period_start(dates: pd.Series, freq: Freq) -> pd.Series:
    """Map each date to the start of its week (Monday) or month.

    Parameters
    ----------
    dates : pandas.Series
        Dates or date-times (datetime64, possibly time-zone aware, or strings that pandas
        parses). Missing values stay missing (``NaT``).
    freq : {"week", "month"}
        ``"week"``: midnight of the Monday on or before the date. ``"month"``: midnight of
        the first day of the month.

    Returns
    -------
    pandas.Series
        Same index and name as ``dates``, datetime64 values at midnight.

    Raises
    ------
    InputError
        If ``freq`` is not one of the two values, or a non-missing value is not a date
        (the message names the first such row).
    """
    if freq not in ("week", "month"):
        raise InputError(f"period_start: freq must be 'week' or 'month', not {freq!r}")
    parsed = _as_datetime(dates)
    day = parsed.dt.normalize()
    back = parsed.dt.day_of_week if freq == "week" else parsed.dt.day - 1
    out = day - pd.to_timedelta(back, unit="D")
    out.name = dates.name
    return out


def period_range(periods: pd.Series, freq: Freq) -> pd.DatetimeIndex:
    """Every period start from the earliest to the latest in ``periods``, gaps included.

    Pass the result as ``all_periods`` to :func:`lead_share_by_period` so weeks or months
    without transcripts appear (with ``n = 0``) instead of being silently joined over.

    Parameters
    ----------
    periods : pandas.Series
        Period starts as returned by :func:`period_start` (missing values ignored).
    freq : {"week", "month"}
        The frequency ``periods`` was built with.

    Returns
    -------
    pandas.DatetimeIndex
        Consecutive period starts; empty when ``periods`` has no values.
    """
    if freq not in ("week", "month"):
        raise InputError(f"period_range: freq must be 'week' or 'month', not {freq!r}")
    present = _as_datetime(periods).dropna()
    if present.empty:
        return pd.DatetimeIndex([])
    step = "W-MON" if freq == "week" else "MS"
    return pd.date_range(present.min(), present.max(), freq=step)


def lead_share_by_period(
    lead: np.ndarray,
    periods: pd.Series,
    n_themes: int,
    *,
    n_boot: int = 500,
    seed: int = 0,
    level: float = 0.95,
    all_periods: Sequence[pd.Timestamp] | pd.DatetimeIndex | None = None,
    theme_ids: Sequence[int] | None = None,
    names: Sequence[str] | None = None,
) -> pd.DataFrame:
    """Each theme's share of the transcripts it leads, per period, with a bootstrap interval.

    Parameters
    ----------
    lead : numpy.ndarray of shape (D,), int
        Lead theme of each transcript as a column index ``0 … n_themes-1``.
    periods : pandas.Series of length D
        Period start of each transcript (see :func:`period_start`). Transcripts with a
        missing period are left out (logged).
    n_themes : int
        Number of themes K.
    n_boot : int, default 500
        Bootstrap replicates.
    seed : int, default 0
        Seed of the random generator; the result is deterministic for a seed.
    level : float, default 0.95
        Coverage of the percentile interval.
    all_periods : sequence of Timestamp, optional
        Periods to report. Periods listed here without transcripts get ``n = 0`` and a
        missing share and interval (never a division by zero); transcripts in periods not
        listed are left out. Default: the periods present in the data.
    theme_ids : sequence of int, optional
        Stable theme id of each column index (default: the index itself).
    names : sequence of str, optional
        Display name of each column index (default ``"theme <id>"``).

    Returns
    -------
    pandas.DataFrame
        One row per (period, theme), sorted by period then theme id, with columns
        ``period`` (datetime64), ``theme_id`` (int), ``name`` (str), ``share``, ``lo``,
        ``hi`` (floats in 0–1; NaN when ``n = 0``) and ``n`` (transcripts in the period).

    Raises
    ------
    InputError
        On lengths that disagree, a lead theme outside ``0 … n_themes-1`` (naming the
        first bad row), or ``n_boot < 1`` / ``level`` outside (0, 1).

    Notes
    -----
    Percentile bootstrap (Efron & Tibshirani 1993, ch. 13) resampling transcripts within
    each period; counts are drawn as Binomial(n, p̂) per theme, which is the marginal of
    the Multinomial(n, p̂) that i.i.d. resampling of transcripts produces. A theme that
    leads no transcript in a period gets the interval [0, 0], a known limit of the
    percentile bootstrap for small groups: read it together with ``n``.
    """
    lead_arr = _check_lead(lead, n_themes)
    if len(periods) != lead_arr.shape[0]:
        raise InputError(
            f"lead_share_by_period: {lead_arr.shape[0]} lead themes but {len(periods)} periods"
        )
    stamps = pd.DatetimeIndex(_as_datetime(periods))
    if all_periods is None:
        keys = stamps.dropna().unique().sort_values()
    else:
        keys = pd.DatetimeIndex(all_periods).dropna().unique().sort_values()
    codes = keys.get_indexer(stamps).astype(np.int64)
    table = _share_table(
        lead_arr,
        codes,
        len(keys),
        n_themes,
        n_boot=n_boot,
        seed=seed,
        level=level,
        what="lead_share_by_period",
    )
    return label_rows(table, "period", keys, n_themes, theme_ids, names)


def lead_share_by_segment(
    lead: np.ndarray,
    segments: pd.Series,
    n_themes: int,
    *,
    n_boot: int = 500,
    seed: int = 0,
    level: float = 0.95,
    theme_ids: Sequence[int] | None = None,
    names: Sequence[str] | None = None,
) -> pd.DataFrame:
    """Each theme's share of the transcripts it leads, per segment of one metadata field.

    Parameters
    ----------
    lead : numpy.ndarray of shape (D,), int
        Lead theme of each transcript as a column index ``0 … n_themes-1``.
    segments : pandas.Series of length D
        The field's value for each transcript (e.g. its queue). Values are compared as
        text; transcripts with a missing value are left out (logged).
    n_themes, n_boot, seed, level, theme_ids, names
        As in :func:`lead_share_by_period`.

    Returns
    -------
    pandas.DataFrame
        One row per (segment, theme), sorted by segment then theme id, with columns
        ``segment`` (str), ``theme_id``, ``name``, ``share``, ``lo``, ``hi`` (0–1) and
        ``n`` (transcripts in the segment).

    Notes
    -----
    Same bootstrap as :func:`lead_share_by_period` (Efron & Tibshirani 1993), resampling
    transcripts within each segment.
    """
    lead_arr = _check_lead(lead, n_themes)
    if len(segments) != lead_arr.shape[0]:
        raise InputError(
            f"lead_share_by_segment: {lead_arr.shape[0]} lead themes but {len(segments)} "
            "segment values"
        )
    missing = segments.isna().to_numpy()
    text = segments.astype("string").to_numpy(dtype=object, na_value=None)
    keys = pd.Index(sorted({v for v in text[~missing]}), dtype=object)
    codes = np.full(len(text), -1, dtype=np.int64)
    codes[~missing] = keys.get_indexer(text[~missing])
    table = _share_table(
        lead_arr,
        codes,
        len(keys),
        n_themes,
        n_boot=n_boot,
        seed=seed,
        level=level,
        what="lead_share_by_segment",
    )
    return label_rows(table, "segment", keys, n_themes, theme_ids, names)


def movers(
    lead: np.ndarray,
    periods_a_mask: np.ndarray,
    periods_b_mask: np.ndarray,
    n_themes: int,
    *,
    n_boot: int = 500,
    seed: int = 0,
    level: float = 0.95,
    theme_ids: Sequence[int] | None = None,
    names: Sequence[str] | None = None,
) -> pd.DataFrame:
    """The change in each theme's share between two periods, largest change first.

    Parameters
    ----------
    lead : numpy.ndarray of shape (D,), int
        Lead theme of each transcript as a column index ``0 … n_themes-1``.
    periods_a_mask, periods_b_mask : numpy.ndarray of shape (D,), bool
        Transcripts in the earlier ("before") and later ("after") period. They must not
        overlap and neither may be empty.
    n_themes, n_boot, seed, level, theme_ids, names
        As in :func:`lead_share_by_period`.

    Returns
    -------
    pandas.DataFrame
        One row per theme, sorted by ``|change|`` descending (ties by theme id), with
        columns ``theme_id``, ``name``, ``share_before``, ``share_after`` (0–1),
        ``change`` (after − before, in percentage points), ``lo``, ``hi`` (the interval
        of the change, percentage points), ``n_before``, ``n_after``.

    Notes
    -----
    The two periods are independent samples, so the bootstrap (Efron & Tibshirani 1993)
    resamples each one separately (Binomial(n, p̂) per theme and period, see the module
    notes) and takes percentiles of the replicate differences.
    """
    lead_arr = _check_lead(lead, n_themes)
    a = _check_mask(periods_a_mask, lead_arr.shape[0], "periods_a_mask")
    b = _check_mask(periods_b_mask, lead_arr.shape[0], "periods_b_mask")
    overlap = int(np.count_nonzero(a & b))
    if overlap:
        raise InputError(
            f"movers: the two periods share {overlap} transcripts; choose periods that do not "
            "overlap"
        )
    for mask, label in ((a, "first (before)"), (b, "second (after)")):
        if not mask.any():
            raise InputError(f"movers: the {label} period has no transcripts")
    counts = np.stack(
        [
            np.bincount(lead_arr[a], minlength=n_themes),
            np.bincount(lead_arr[b], minlength=n_themes),
        ]
    )
    return movers_from_counts(
        counts[0], counts[1], n_boot=n_boot, seed=seed, level=level, theme_ids=theme_ids,
        names=names,
    )  # fmt: skip


# --------------------------------------------------------------------------- internals


def _as_datetime(values: pd.Series) -> pd.Series:
    if pd.api.types.is_datetime64_any_dtype(values.dtype):
        return values
    # ISO 8601 first (what the store holds); otherwise one format pandas infers.
    parsed = pd.to_datetime(values, errors="coerce", format="ISO8601")
    bad = parsed.isna() & values.notna()
    if bad.any():
        inferred = pd.to_datetime(values, errors="coerce")
        if (inferred.isna() & values.notna()).sum() < bad.sum():
            parsed = inferred
            bad = parsed.isna() & values.notna()
    if bad.any():
        row = bad.to_numpy().nonzero()[0][0]
        raise InputError(
            f"row {values.index[row]!r}: {values.iloc[row]!r} is not a date"
            + (f" (column {values.name!r})" if values.name is not None else "")
        )
    return parsed


def _check_lead(lead: np.ndarray, n_themes: int) -> np.ndarray:
    if int(n_themes) < 1:
        raise InputError(f"n_themes must be at least 1, not {n_themes}")
    arr = np.asarray(lead)
    if arr.ndim != 1:
        raise InputError(f"lead must be one lead theme per transcript (1-D), got shape {arr.shape}")
    if arr.size and not np.issubdtype(arr.dtype, np.integer):
        raise InputError(f"lead must hold integer theme indices, got dtype {arr.dtype}")
    arr = arr.astype(np.int64, copy=False)
    bad = (arr < 0) | (arr >= n_themes)
    if bad.any():
        row = int(bad.nonzero()[0][0])
        raise InputError(
            f"row {row}: lead theme {int(arr[row])} is outside 0..{n_themes - 1} "
            f"({int(bad.sum())} such rows)"
        )
    return arr


def _check_mask(mask: np.ndarray, length: int, label: str) -> np.ndarray:
    arr = np.asarray(mask)
    if arr.shape != (length,) or arr.dtype != np.bool_:
        raise InputError(
            f"movers: {label} must be a boolean array of length {length}, "
            f"got dtype {arr.dtype} and shape {arr.shape}"
        )
    return arr


def _share_table(
    lead: np.ndarray,
    codes: np.ndarray,
    n_groups: int,
    n_themes: int,
    *,
    n_boot: int,
    seed: int,
    level: float,
    what: str,
) -> dict[str, np.ndarray]:
    """Counts, shares and bootstrap intervals for every (group, theme) pair."""
    check_boot(n_boot, level, what)
    left_out = int(np.count_nonzero(codes < 0))
    if left_out:
        logger.info("%s: %d transcripts without a group were left out", what, left_out)
    keep = codes >= 0
    flat = codes[keep] * n_themes + lead[keep]
    counts = np.bincount(flat, minlength=n_groups * n_themes).reshape(n_groups, n_themes)
    return count_table(counts, n_boot=n_boot, seed=seed, level=level, what=what)
