"""Shares per week or month, per segment, and the movers between two periods."""

from __future__ import annotations

import pandas as pd
import pytest

from talkthemes.errors import InputError, NotReadyError
from talkthemes.view.metadata import metadata_table
from talkthemes.view.over_time import (
    movers_frame,
    period_choices,
    segment_fields,
    segment_frame,
    trend_frame,
)
from talkthemes.view.themes import theme_names


def test_trend_frame_counts_per_period(version, meta) -> None:
    weekly = trend_frame(version, meta, "week", n_boot=50)
    weeks = sorted(weekly["period"].unique())
    assert len(weeks) == 5  # 4 May … 1 June, the empty weeks included
    first = weekly[weekly["period"] == weeks[0]].set_index("theme_id")
    assert first["n"].iloc[0] == 2 and first.loc[11, "share"] == pytest.approx(1.0)
    assert weekly[weekly["period"] == weeks[2]]["n"].iloc[0] == 0
    assert set(weekly["name"]) == set(theme_names(version)) and "hidden" in weekly
    monthly = trend_frame(version, meta, "month", n_boot=50)
    may = monthly[monthly["period"] == pd.Timestamp("2026-05-01")].set_index("theme_id")
    assert may["n"].iloc[0] == 3 and may.loc[11, "share"] == pytest.approx(1.0)


def test_trends_need_dates(version) -> None:
    no_dates = metadata_table([f"t{i}" for i in range(6)], {"t0": {"queue": "x"}})
    with pytest.raises(NotReadyError, match="--manifest"):
        trend_frame(version, no_dates, "week")


def test_segment_frame(version, meta) -> None:
    seg = segment_frame(version, meta, "queue", n_boot=50)
    billing = seg[seg["segment"] == "billing"].set_index("theme_id")
    assert billing["n"].iloc[0] == 3 and billing.loc[11, "share"] == pytest.approx(2 / 3)
    quart = segment_frame(version, meta, "duration_s", n_boot=50)
    labels = sorted(quart["segment"].unique())
    assert labels[0].startswith("Q1: 100") and labels[-1].startswith("Q4:")
    assert quart.groupby("segment")["n"].first().sum() == 6
    assert segment_fields(meta) == ["duration_s", "queue"]
    with pytest.raises(InputError, match="not a field to compare by"):
        segment_frame(version, meta, "ref")


def test_movers_frame(version, meta) -> None:
    months = period_choices(meta, "month")
    assert months == [pd.Timestamp("2026-05-01"), pd.Timestamp("2026-06-01")]
    mv = movers_frame(version, meta, "month", months[0], months[1], n_boot=50)
    row = mv.set_index("theme_id")
    assert row.loc[11, "change"] == pytest.approx(-100.0)  # leads 3 of 3 in May, 0 of 2 in June
    assert row.loc[12, "change"] == pytest.approx(100.0)
    assert list(mv["theme_id"][:2]) == [11, 12] and "hidden" in mv
    with pytest.raises(InputError, match="two different periods"):
        movers_frame(version, meta, "month", months[0], months[0])
