"""The data behind Over time: shares per week or month, per segment, and the movers.

Each frame carries a 95% bootstrap interval (:mod:`talkthemes.trends`) and the themes'
current names and hidden flags. Every function takes the calls' metadata
(:class:`~talkthemes.view.metadata.MetaTable`, counting the version's share matrix) or the
version's viewer tables (:class:`~talkthemes.versions.tables.ViewTables`, counts kept at
publish): the same counts give the same frame, bootstrap draws included.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
import pandas as pd

from talkthemes.errors import InputError, NotReadyError
from talkthemes.trends import (
    lead_share_by_period,
    lead_share_by_segment,
    lead_share_from_counts,
    movers,
    movers_from_counts,
    period_range,
    period_start,
)
from talkthemes.versions.load import Version
from talkthemes.versions.metadata import MAX_SEGMENTS, segment_fields, segment_values
from talkthemes.versions.tables import ViewTables
from talkthemes.view.metadata import MetaTable
from talkthemes.view.themes import theme_names, with_names

__all__ = [
    "BASELINE_PERIODS",
    "MAX_SEGMENTS",
    "Comparison",
    "Freq",
    "default_comparison",
    "full_periods",
    "movers_frame",
    "period_choices",
    "segment_fields",
    "segment_frame",
    "theme_trends",
    "trend_frame",
]

Freq = Literal["week", "month"]
"""What a period is."""

#: How many full periods before the one looked at the movers compare it with, by default.
BASELINE_PERIODS: dict[str, int] = {"week": 4, "month": 3}


@dataclass(frozen=True)
class Comparison:
    """Which periods the movers compare: one period against the periods before it.

    Attributes
    ----------
    after : Timestamp
        The start of the period looked at.
    before : tuple of Timestamp
        The starts of the periods it is compared with (pooled), oldest first.
    """

    after: pd.Timestamp
    before: tuple[pd.Timestamp, ...]


#: What the section counts: the calls' metadata (with the share matrix) or the tables.
Source = MetaTable | ViewTables


def _period_counts(tables: ViewTables, freq: Freq) -> tuple[pd.DatetimeIndex, np.ndarray]:
    """Every period from the first to the last (gaps included) and its lead counts."""
    days, counts = tables.day_counts()
    periods = period_start(pd.Series(days), freq)
    keys = pd.DatetimeIndex(period_range(periods, freq)).dropna().unique().sort_values()
    out = np.zeros((len(keys), tables.k), dtype=np.int64)
    np.add.at(out, keys.get_indexer(periods), counts)
    return keys, out


def _require_dates(meta: Source) -> pd.Series:
    if meta.dates is None:
        raise NotReadyError(
            "no date in the transcripts' metadata: ingest a manifest with a date column "
            "(talkthemes ingest FILES --manifest MANIFEST.csv)"
        )
    return meta.dates


def _theme_args(version: Version) -> dict[str, Any]:
    return {"theme_ids": version.theme_ids, "names": theme_names(version)}


def trend_frame(
    version: Version, meta: Source, freq: Freq, *, n_boot: int = 500, seed: int = 0
) -> pd.DataFrame:
    """Each theme's share of the transcripts it leads per week or month, 95% interval.

    Returns the frame of :func:`talkthemes.trends.lead_share_by_period` (every period from
    the first to the last, gaps included) plus ``hidden``.
    """
    if isinstance(meta, ViewTables):
        _require_dates(meta)
        keys, counts = _period_counts(meta, freq)
        frame = lead_share_from_counts(
            counts, keys, "period", n_boot=n_boot, seed=seed, **_theme_args(version)
        )
        return with_names(frame, version)
    periods = period_start(_require_dates(meta), freq)
    frame = lead_share_by_period(
        version.lead(),
        periods,
        version.k,
        n_boot=n_boot,
        seed=seed,
        all_periods=period_range(periods, freq),
        **_theme_args(version),
    )
    return with_names(frame, version)


def period_choices(meta: Source, freq: Freq) -> list[pd.Timestamp]:
    """Period starts (weeks or months) that hold at least one transcript, oldest first."""
    periods = period_start(_require_dates(meta), freq).dropna()
    return [pd.Timestamp(p) for p in sorted(periods.unique())]


def _next_start(p: pd.Timestamp, freq: Freq) -> pd.Timestamp:
    return p + (pd.Timedelta(days=7) if freq == "week" else pd.offsets.MonthBegin(1))


def full_periods(meta: Source, freq: Freq) -> list[pd.Timestamp]:
    """Periods that hold transcripts and that the data covers from their first to last day.

    The first and the last period of a corpus are usually cut short (the data starts on
    a Thursday, or ends mid-month): a share measured on a few days' calls is not
    comparable with a whole period's. A period is *full* when the earliest date in the
    data is on or before its first day and the latest on or after its last day.
    """
    dates = _require_dates(meta).dropna()
    if dates.empty:
        return []
    first, last = dates.min(), dates.max()
    out = []
    for p in period_choices(meta, freq):
        end = _next_start(p, freq) - pd.Timedelta(days=1)
        if first <= p and last >= end:
            out.append(p)
    return out


def default_comparison(
    meta: Source, freq: Freq, *, after: pd.Timestamp | None = None, baseline: int | None = None
) -> Comparison | None:
    """Like with like: the last full period against the full periods just before it.

    Parameters
    ----------
    meta : MetaTable or ViewTables
    freq : {"week", "month"}
    after : Timestamp, optional
        The period to look at (default: the last full period, else the last period).
    baseline : int, optional
        How many periods before ``after`` to pool as the comparison (default
        :data:`BASELINE_PERIODS`); full periods are preferred, cut-short ones are used
        only when there are not enough full ones.

    Returns
    -------
    Comparison or None
        None when fewer than two periods hold transcripts.
    """
    periods = period_choices(meta, freq)
    if len(periods) < 2:
        return None
    full = full_periods(meta, freq)
    if after is None:
        after = full[-1] if full else periods[-1]
    after = pd.Timestamp(after)
    n = int(baseline or BASELINE_PERIODS[freq])
    earlier_full = [p for p in full if p < after]
    earlier = earlier_full if earlier_full else [p for p in periods if p < after]
    if not earlier:  # looking at the first period: compare with the ones after it
        earlier = [p for p in periods if p > after]
        return Comparison(after, tuple(earlier[:n])) if earlier else None
    return Comparison(after, tuple(earlier[-n:]))


def segment_frame(
    version: Version, meta: Source, name: str, *, n_boot: int = 500, seed: int = 0
) -> pd.DataFrame:
    """Each theme's share of the transcripts it leads per value of a metadata field.

    Category fields use their :data:`MAX_SEGMENTS` most frequent values; number fields are
    cut into quartile bins labelled ``lo–hi``. Returns the frame of
    :func:`talkthemes.trends.lead_share_by_segment` plus ``hidden``.
    """
    if isinstance(meta, ViewTables):
        if name not in segment_fields(meta):  # type: ignore[arg-type]
            raise InputError(
                f"segments: {name!r} is not a field to compare by "
                f"(choose one of {', '.join(segment_fields(meta)) or 'none'})"  # type: ignore[arg-type]
            )
        keys, counts = meta.segment_counts(name)
        frame = lead_share_from_counts(
            counts, pd.Index(keys, dtype=object), "segment", n_boot=n_boot, seed=seed,
            **_theme_args(version),
        )  # fmt: skip
        return with_names(frame, version)
    values = segment_values(meta, name)
    frame = lead_share_by_segment(
        version.lead(), values, version.k, n_boot=n_boot, seed=seed, **_theme_args(version)
    )
    return with_names(frame, version)


def movers_frame(
    version: Version,
    meta: Source,
    freq: Freq,
    before: pd.Timestamp | Sequence[pd.Timestamp],
    after: pd.Timestamp,
    *,
    n_boot: int = 500,
    seed: int = 0,
) -> pd.DataFrame:
    """Change of each theme's share from the period(s) ``before`` to period ``after``.

    ``before`` is one period start or several, pooled (see :func:`default_comparison`:
    the last full period against the full periods before it compares like with like).
    Returns the frame of :func:`talkthemes.trends.movers` plus ``hidden``.

    Raises
    ------
    InputError
        When ``after`` is among ``before`` or either side holds no transcript.
    """
    if isinstance(before, (pd.Timestamp, str)) or not isinstance(before, Sequence):
        before = [before]  # type: ignore[list-item]
    pool = {pd.Timestamp(p) for p in before}
    b = pd.Timestamp(after)
    if not pool or b in pool:
        raise InputError("movers: pick two different periods")
    if isinstance(meta, ViewTables):
        _require_dates(meta)
        keys, counts = _period_counts(meta, freq)
        frame = movers_from_counts(
            counts[keys.isin(list(pool))].sum(axis=0),
            counts[keys == b].sum(axis=0),
            n_boot=n_boot, seed=seed, **_theme_args(version),
        )  # fmt: skip
        return with_names(frame, version)
    periods = period_start(_require_dates(meta), freq)
    mask_a = periods.isin(list(pool)).to_numpy(dtype=bool, na_value=False)
    mask_b = (periods == b).to_numpy(dtype=bool, na_value=False)
    frame = movers(
        version.lead(), mask_a, mask_b, version.k, n_boot=n_boot, seed=seed, **_theme_args(version)
    )
    return with_names(frame, version)


def theme_trends(version: Version, meta: Source) -> pd.DataFrame:
    """How each theme is moving: the last full period against the ones before it.

    Weeks for data spanning up to about four months, months beyond, compared as
    :func:`talkthemes.view.over_time.default_comparison` does (like with like).

    Returns
    -------
    DataFrame
        ``theme_id, trend`` (``"rising"`` or ``"falling"`` when the 95% interval of the
        change excludes zero, else ``"steady"``) and ``change`` (percentage points);
        empty without dates or with fewer than two periods.
    """
    empty = pd.DataFrame(columns=["theme_id", "trend", "change"])
    if meta.dates is None or meta.dates.dropna().empty:
        return empty
    dates = meta.dates.dropna()
    freq = "week" if (dates.max() - dates.min()).days <= 120 else "month"
    comparison = default_comparison(meta, freq)  # type: ignore[arg-type]
    if comparison is None or not comparison.before:
        return empty
    mv = movers_frame(version, meta, freq, comparison.before, comparison.after)  # type: ignore[arg-type]
    trend = np.where(mv["lo"] > 0, "rising", np.where(mv["hi"] < 0, "falling", "steady"))
    return pd.DataFrame(
        {"theme_id": mv["theme_id"].astype(int), "trend": trend, "change": mv["change"]}
    )
