"""The data behind Over time: shares per week or month, per segment, and the movers.

Each frame carries a 95% bootstrap interval (:mod:`talkthemes.trends`) and the themes'
current names and hidden flags.
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
    movers,
    period_range,
    period_start,
)
from talkthemes.versions.load import Version
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

#: Most segments a comparison shows (the most frequent values; the rest are left out).
MAX_SEGMENTS = 12

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


def _require_dates(meta: MetaTable) -> pd.Series:
    if meta.dates is None:
        raise NotReadyError(
            "no date in the transcripts' metadata: ingest a manifest with a date column "
            "(talkthemes ingest FILES --manifest MANIFEST.csv)"
        )
    return meta.dates


def _theme_args(version: Version) -> dict[str, Any]:
    return {"theme_ids": version.theme_ids, "names": theme_names(version)}


def trend_frame(
    version: Version, meta: MetaTable, freq: Freq, *, n_boot: int = 500, seed: int = 0
) -> pd.DataFrame:
    """Each theme's share of the transcripts it leads per week or month, 95% interval.

    Returns the frame of :func:`talkthemes.trends.lead_share_by_period` (every period from
    the first to the last, gaps included) plus ``hidden``.
    """
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


def period_choices(meta: MetaTable, freq: Freq) -> list[pd.Timestamp]:
    """Period starts (weeks or months) that hold at least one transcript, oldest first."""
    periods = period_start(_require_dates(meta), freq).dropna()
    return [pd.Timestamp(p) for p in sorted(periods.unique())]


def _next_start(p: pd.Timestamp, freq: Freq) -> pd.Timestamp:
    return p + (pd.Timedelta(days=7) if freq == "week" else pd.offsets.MonthBegin(1))


def full_periods(meta: MetaTable, freq: Freq) -> list[pd.Timestamp]:
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
    meta: MetaTable, freq: Freq, *, after: pd.Timestamp | None = None, baseline: int | None = None
) -> Comparison | None:
    """Like with like: the last full period against the full periods just before it.

    Parameters
    ----------
    meta : MetaTable
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


def segment_fields(meta: MetaTable) -> list[str]:
    """Fields a segment comparison can use: categories and numbers (in quartile bins)."""
    return [f for f, i in meta.fields.items() if i.kind in ("category", "number")]


def _segment_values(meta: MetaTable, name: str) -> pd.Series:
    info = meta.fields.get(name)
    if info is None or info.kind not in ("category", "number"):
        raise InputError(
            f"segments: {name!r} is not a field to compare by "
            f"(choose one of {', '.join(segment_fields(meta)) or 'none'})"
        )
    if info.kind == "category":
        col = meta.frame[name]
        top = set(info.values[:MAX_SEGMENTS])
        return col.where(col.isin(top), None)
    values = pd.Series(meta.numbers[name])
    codes = pd.qcut(values, 4, labels=False, duplicates="drop")
    out = pd.Series([None] * len(values), dtype=object)
    present = codes.notna().to_numpy()
    if not present.any():
        return out
    bounds = values[present].groupby(codes[present]).agg(["min", "max"])
    labels = {
        code: f"Q{i + 1}: {row['min']:g}–{row['max']:g}"
        for i, (code, row) in enumerate(bounds.iterrows())
    }
    out[present] = codes[present].map(labels).to_numpy()
    return out


def segment_frame(
    version: Version, meta: MetaTable, name: str, *, n_boot: int = 500, seed: int = 0
) -> pd.DataFrame:
    """Each theme's share of the transcripts it leads per value of a metadata field.

    Category fields use their :data:`MAX_SEGMENTS` most frequent values; number fields are
    cut into quartile bins labelled ``lo–hi``. Returns the frame of
    :func:`talkthemes.trends.lead_share_by_segment` plus ``hidden``.
    """
    values = _segment_values(meta, name)
    frame = lead_share_by_segment(
        version.lead(), values, version.k, n_boot=n_boot, seed=seed, **_theme_args(version)
    )
    return with_names(frame, version)


def movers_frame(
    version: Version,
    meta: MetaTable,
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
    periods = period_start(_require_dates(meta), freq)
    if isinstance(before, (pd.Timestamp, str)) or not isinstance(before, Sequence):
        before = [before]  # type: ignore[list-item]
    pool = {pd.Timestamp(p) for p in before}
    b = pd.Timestamp(after)
    if not pool or b in pool:
        raise InputError("movers: pick two different periods")
    mask_a = periods.isin(list(pool)).to_numpy(dtype=bool, na_value=False)
    mask_b = (periods == b).to_numpy(dtype=bool, na_value=False)
    frame = movers(
        version.lead(), mask_a, mask_b, version.k, n_boot=n_boot, seed=seed, **_theme_args(version)
    )
    return with_names(frame, version)


def theme_trends(version: Version, meta: MetaTable) -> pd.DataFrame:
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
