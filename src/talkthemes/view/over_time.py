"""The data behind Over time: shares per week or month, per segment, and the movers.

Each frame carries a 95% bootstrap interval (:mod:`talkthemes.trends`) and the themes'
current names and hidden flags.
"""

from __future__ import annotations

from typing import Any, Literal

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
    "MAX_SEGMENTS",
    "Freq",
    "movers_frame",
    "period_choices",
    "segment_fields",
    "segment_frame",
    "trend_frame",
]

Freq = Literal["week", "month"]
"""What a period is."""

#: Most segments a comparison shows (the most frequent values; the rest are left out).
MAX_SEGMENTS = 12


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
    before: pd.Timestamp,
    after: pd.Timestamp,
    *,
    n_boot: int = 500,
    seed: int = 0,
) -> pd.DataFrame:
    """Change of each theme's share from period ``before`` to period ``after``, ranked.

    Returns the frame of :func:`talkthemes.trends.movers` plus ``hidden``.

    Raises
    ------
    InputError
        When the two periods are the same or one holds no transcript.
    """
    periods = period_start(_require_dates(meta), freq)
    a, b = pd.Timestamp(before), pd.Timestamp(after)
    if a == b:
        raise InputError("movers: pick two different periods")
    mask_a = (periods == a).to_numpy(dtype=bool, na_value=False)
    mask_b = (periods == b).to_numpy(dtype=bool, na_value=False)
    frame = movers(
        version.lead(), mask_a, mask_b, version.k, n_boot=n_boot, seed=seed, **_theme_args(version)
    )
    return with_names(frame, version)
