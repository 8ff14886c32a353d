"""Shares per week or month, per segment, and the movers between two periods."""

from __future__ import annotations

import pandas as pd
import pytest

from talkthemes.errors import InputError, NotReadyError
from talkthemes.view.metadata import MetaTable, metadata_table
from talkthemes.view.over_time import (
    default_comparison,
    full_periods,
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
    assert labels[0].startswith("Q1: 1.66") and labels[-1].startswith("Q4:")  # minutes
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


def _dated(dates: list[str]) -> MetaTable:
    ids = [f"t{i}" for i in range(len(dates))]
    return metadata_table(ids, {t: {"date": d} for t, d in zip(ids, dates, strict=True)})


def test_movers_compare_the_last_full_period_with_the_full_ones_before() -> None:
    # Thursday 7 May to Wednesday 17 June 2026: the first and the last week are cut short.
    days = pd.date_range("2026-05-07", "2026-06-17", freq="D").strftime("%Y-%m-%d")
    meta = _dated(list(days))
    weeks = period_choices(meta, "week")
    full = full_periods(meta, "week")
    assert weeks[0] == pd.Timestamp("2026-05-04") and weeks[-1] == pd.Timestamp("2026-06-15")
    assert full == weeks[1:-1]  # neither cut-short week is full
    default = default_comparison(meta, "week")
    assert default.after == pd.Timestamp("2026-06-08")  # the last full week, not the last
    assert default.before == tuple(full[-5:-1])  # the 4 full weeks before it, pooled
    assert weeks[0] not in default.before  # the first, short week is never the baseline
    months = default_comparison(meta, "month")  # no full month: the last against the rest
    assert full_periods(meta, "month") == []
    assert months.after == pd.Timestamp("2026-06-01")
    assert months.before == (pd.Timestamp("2026-05-01"),)
    two = default_comparison(meta, "week", after=weeks[3], baseline=2)
    assert two.before == (weeks[1], weeks[2])


def test_movers_pool_several_periods(version, meta) -> None:
    weeks = period_choices(meta, "week")  # 4 May (t0, t1), 11 May (t2), 1 June (t3, t4)
    mv = movers_frame(version, meta, "week", weeks[:2], weeks[2], n_boot=50)
    row = mv.set_index("theme_id")
    assert int(row["n_before"].iloc[0]) == 3 and int(row["n_after"].iloc[0]) == 2
    assert row.loc[11, "change"] == pytest.approx(-100.0)
    with pytest.raises(InputError, match="two different periods"):
        movers_frame(version, meta, "week", weeks[:2], weeks[1])
