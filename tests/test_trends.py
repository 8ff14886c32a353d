"""Theme shares per period and segment, movers, and their bootstrap intervals."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from talkthemes import trends_counts
from talkthemes.errors import InputError
from talkthemes.trends import (
    lead_share_by_period,
    lead_share_by_segment,
    movers,
    period_range,
    period_start,
)

# --------------------------------------------------------------------------- periods


def test_weeks_start_on_monday() -> None:
    dates = pd.Series(
        pd.to_datetime(
            [
                "2024-01-01 00:00",  # a Monday
                "2024-01-03 15:30",  # Wednesday
                "2024-01-07 23:59",  # Sunday, same week
                "2024-01-08 00:01",  # next Monday
                None,
            ]
        ),
        index=[10, 11, 12, 13, 14],
        name="date",
    )
    out = period_start(dates, "week")
    expected = pd.to_datetime(["2024-01-01", "2024-01-01", "2024-01-01", "2024-01-08", None])
    assert out.tolist()[:4] == expected.tolist()[:4]
    assert pd.isna(out.iloc[4])
    assert out.index.tolist() == [10, 11, 12, 13, 14]
    assert out.name == "date"
    assert (out.dropna().dt.day_of_week == 0).all()


def test_months_start_on_the_first() -> None:
    dates = pd.Series(["2024-01-31", "2024-02-29T08:00:00", "2024-03-01"])
    out = period_start(dates, "month")
    assert out.tolist() == pd.to_datetime(["2024-01-01", "2024-02-01", "2024-03-01"]).tolist()


def test_period_start_keeps_time_zone() -> None:
    dates = pd.Series(pd.to_datetime(["2024-01-03 23:30"]).tz_localize("Europe/Berlin"))
    out = period_start(dates, "week")
    assert str(out.dt.tz) == "Europe/Berlin"
    assert out.iloc[0] == pd.Timestamp("2024-01-01", tz="Europe/Berlin")


def test_period_start_names_the_bad_row() -> None:
    with pytest.raises(InputError, match=r"row 1: 'next tuesday' is not a date \(column 'date'\)"):
        period_start(pd.Series(["2024-01-01", "next tuesday"], name="date"), "week")
    with pytest.raises(InputError, match="freq"):
        period_start(pd.Series(["2024-01-01"]), "day")  # type: ignore[arg-type]


def test_period_range_fills_gaps() -> None:
    periods = period_start(pd.Series(["2024-01-02", "2024-01-30"]), "week")
    weeks = period_range(periods, "week")
    assert list(weeks) == list(pd.date_range("2024-01-01", "2024-01-29", freq="7D"))
    months = period_range(period_start(pd.Series(["2024-01-15", "2024-04-02"]), "month"), "month")
    assert [d.month for d in months] == [1, 2, 3, 4]
    assert len(period_range(pd.Series([pd.NaT]), "month")) == 0


# --------------------------------------------------------------------------- shares


def _two_weeks() -> tuple[np.ndarray, pd.Series]:
    lead = np.array([0, 0, 1, 2, 1, 1, 1, 0, 2, 2])
    periods = pd.Series(pd.to_datetime(["2024-01-01"] * 4 + ["2024-01-08"] * 6))
    return lead, periods


def test_known_shares_per_period() -> None:
    lead, periods = _two_weeks()
    out = lead_share_by_period(lead, periods, 3, n_boot=200, names=["a", "b", "c"])
    assert list(out.columns) == ["period", "theme_id", "name", "share", "lo", "hi", "n"]
    week1 = out[out["period"] == pd.Timestamp("2024-01-01")]
    week2 = out[out["period"] == pd.Timestamp("2024-01-08")]
    assert week1["share"].tolist() == pytest.approx([0.5, 0.25, 0.25])
    assert week2["share"].tolist() == pytest.approx([1 / 6, 3 / 6, 2 / 6])
    assert week1["n"].tolist() == [4, 4, 4]
    assert week2["n"].tolist() == [6, 6, 6]
    assert out["name"].tolist() == ["a", "b", "c"] * 2
    assert out.groupby("period")["share"].sum().tolist() == pytest.approx([1.0, 1.0])


def test_theme_ids_map_column_indices() -> None:
    lead, periods = _two_weeks()
    out = lead_share_by_period(lead, periods, 3, n_boot=50, theme_ids=[7, 3, 11])
    assert out["theme_id"].tolist() == [3, 7, 11] * 2  # sorted by id within a period
    row = out[(out["period"] == pd.Timestamp("2024-01-01")) & (out["theme_id"] == 7)]
    assert row["share"].item() == pytest.approx(0.5)  # column 0 is theme 7
    assert row["name"].item() == "theme 7"


def test_intervals_contain_estimate_and_shrink_with_n() -> None:
    rng = np.random.default_rng(5)
    small = rng.permutation(np.repeat([0, 1, 2], [6, 10, 4]))  # n = 20
    large = rng.permutation(np.repeat([0, 1, 2], [600, 1000, 400]))  # n = 2000, same p̂
    lead = np.concatenate([small, large])
    periods = pd.Series(pd.to_datetime(["2024-01-01"] * small.size + ["2024-01-08"] * large.size))
    out = lead_share_by_period(lead, periods, 3, n_boot=1000, seed=1)
    assert ((out["lo"] <= out["share"]) & (out["share"] <= out["hi"])).all()
    width = (out["hi"] - out["lo"]).to_numpy().reshape(2, 3)
    assert out["share"].to_numpy()[:3] == pytest.approx(out["share"].to_numpy()[3:])
    # Width scales like 1/sqrt(n): a hundred times the transcripts, about a tenth the width.
    assert (width[1] < width[0] / 5).all()
    assert (width[1] > 0).all()


def test_deterministic_for_a_seed() -> None:
    lead = np.random.default_rng(0).integers(0, 3, size=300)
    periods = pd.Series(pd.to_datetime(["2024-01-01", "2024-01-08"]).repeat(150))
    a = lead_share_by_period(lead, periods, 3, n_boot=50, seed=42)
    b = lead_share_by_period(lead, periods, 3, n_boot=50, seed=42)
    c = lead_share_by_period(lead, periods, 3, n_boot=50, seed=43)
    pd.testing.assert_frame_equal(a, b)
    assert not np.allclose(a[["lo", "hi"]].to_numpy(), c[["lo", "hi"]].to_numpy())


@pytest.mark.filterwarnings("error")
def test_empty_periods_have_no_share_and_no_division_by_zero() -> None:
    lead, periods = _two_weeks()
    weeks = pd.date_range("2024-01-01", "2024-01-22", freq="W-MON")  # two empty weeks
    out = lead_share_by_period(lead, periods, 3, n_boot=100, all_periods=weeks)
    assert out["period"].nunique() == 4
    empty = out[out["period"] >= pd.Timestamp("2024-01-15")]
    assert (empty["n"] == 0).all()
    assert empty[["share", "lo", "hi"]].isna().all().all()
    full = out[out["period"] < pd.Timestamp("2024-01-15")]
    assert full[["share", "lo", "hi"]].notna().all().all()


def test_missing_periods_are_left_out() -> None:
    lead = np.array([0, 1, 1, 0])
    periods = pd.Series(pd.to_datetime(["2024-01-01", "2024-01-01", None, "2024-01-01"]))
    out = lead_share_by_period(lead, periods, 2, n_boot=50)
    assert out["n"].tolist() == [3, 3]
    assert out["share"].tolist() == pytest.approx([2 / 3, 1 / 3])


def test_resampling_in_chunks_covers_every_period(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(trends_counts, "_MAX_DRAWS_PER_CHUNK", 1)  # one period per chunk
    lead, periods = _two_weeks()
    out = lead_share_by_period(lead, periods, 3, n_boot=100, seed=3)
    assert out[["lo", "hi"]].notna().all().all()
    assert ((out["lo"] <= out["share"]) & (out["share"] <= out["hi"])).all()


def test_binomial_draws_match_an_explicit_resampling_loop() -> None:
    """The vectorised bootstrap equals resampling transcripts one by one, in distribution."""
    rng = np.random.default_rng(11)
    n = 50
    lead = rng.permutation(np.repeat([0, 1, 2], [15, 25, 10]))
    periods = pd.Series(pd.to_datetime(["2024-03-04"] * n))
    n_boot = 4000
    fast = lead_share_by_period(lead, periods, 3, n_boot=n_boot, seed=2)

    loop_rng = np.random.default_rng(99)
    replicates = np.empty((n_boot, 3))
    for b in range(n_boot):
        sample = lead[loop_rng.integers(0, n, size=n)]
        replicates[b] = np.bincount(sample, minlength=3) / n
    lo, hi = np.quantile(replicates, [0.025, 0.975], axis=0)

    # Both estimate the same discrete distribution (steps of 1/n); allow one step plus noise.
    tolerance = 1 / n + 0.005
    assert fast["lo"].to_numpy() == pytest.approx(lo, abs=tolerance)
    assert fast["hi"].to_numpy() == pytest.approx(hi, abs=tolerance)
    # And the spread of the replicates agrees with the binomial standard error.
    p = np.bincount(lead, minlength=3) / n
    assert replicates.std(axis=0) == pytest.approx(np.sqrt(p * (1 - p) / n), rel=0.08)


def test_bad_lead_names_the_row() -> None:
    periods = pd.Series(pd.to_datetime(["2024-01-01"] * 3))
    with pytest.raises(InputError, match=r"row 2: lead theme 3 is outside 0\.\.2"):
        lead_share_by_period(np.array([0, 1, 3]), periods, 3)
    with pytest.raises(InputError, match="3 lead themes but 2 periods"):
        lead_share_by_period(np.array([0, 1, 2]), periods.iloc[:2], 3)
    with pytest.raises(InputError, match="n_boot"):
        lead_share_by_period(np.array([0, 1, 2]), periods, 3, n_boot=0)
    with pytest.raises(InputError, match="integer"):
        lead_share_by_period(np.array([0.0, 1.0, 2.0]), periods, 3)


# --------------------------------------------------------------------------- segments


def test_known_shares_per_segment() -> None:
    lead = np.array([0, 1, 1, 2, 0, 0, 2])
    queue = pd.Series(["billing", "tech", "billing", None, "tech", "tech", "billing"])
    out = lead_share_by_segment(lead, queue, 3, n_boot=100, names=["x", "y", "z"])
    assert list(out.columns) == ["segment", "theme_id", "name", "share", "lo", "hi", "n"]
    billing = out[out["segment"] == "billing"]
    tech = out[out["segment"] == "tech"]
    assert billing["share"].tolist() == pytest.approx([1 / 3, 1 / 3, 1 / 3])
    assert tech["share"].tolist() == pytest.approx([2 / 3, 1 / 3, 0.0])
    assert billing["n"].iloc[0] == 3 and tech["n"].iloc[0] == 3  # the missing one is left out
    assert ((out["lo"] <= out["share"]) & (out["share"] <= out["hi"])).all()


def test_numeric_segments_are_text() -> None:
    out = lead_share_by_segment(np.array([0, 1, 1]), pd.Series([3, 3, 10]), 2, n_boot=20)
    assert sorted(out["segment"].unique()) == ["10", "3"]


# --------------------------------------------------------------------------- movers


def test_movers_known_changes_sorted_by_size() -> None:
    lead = np.array([0, 0, 1, 1, 1, 2, 0, 2])
    before = np.array([1, 1, 1, 1, 0, 0, 0, 0], dtype=bool)
    after = ~before
    out = movers(lead, before, after, 3, n_boot=2000, names=["a", "b", "c"])
    assert list(out.columns) == [
        "theme_id",
        "name",
        "share_before",
        "share_after",
        "change",
        "lo",
        "hi",
        "n_before",
        "n_after",
    ]
    # before: a .5, b .5, c 0; after: a .25, b .25, c .5
    assert out["theme_id"].tolist() == [2, 0, 1]  # |+50| then |-25| (ties by id)
    assert out["change"].tolist() == pytest.approx([50.0, -25.0, -25.0])
    assert out["share_before"].tolist() == pytest.approx([0.0, 0.5, 0.5])
    assert out["share_after"].tolist() == pytest.approx([0.5, 0.25, 0.25])
    assert ((out["lo"] <= out["change"]) & (out["change"] <= out["hi"])).all()
    assert (out["n_before"] == 4).all() and (out["n_after"] == 4).all()


def test_movers_interval_excludes_zero_for_a_clear_rise() -> None:
    lead = np.concatenate([np.repeat([0, 1], [100, 900]), np.repeat([0, 1], [400, 600])])
    a = np.arange(2000) < 1000
    out = movers(lead, a, ~a, 2, n_boot=1000, seed=4)
    rise = out[out["theme_id"] == 0].iloc[0]
    assert rise["change"] == pytest.approx(30.0)
    assert rise["lo"] > 20.0 and rise["hi"] < 40.0


def test_movers_rejects_overlap_and_empty_periods() -> None:
    lead = np.array([0, 1, 0, 1])
    a = np.array([True, True, False, False])
    with pytest.raises(InputError, match="share 1 transcripts"):
        movers(lead, a, np.array([False, True, True, True]), 2)
    with pytest.raises(InputError, match="second \\(after\\) period has no transcripts"):
        movers(lead, a, np.zeros(4, dtype=bool), 2)
    with pytest.raises(InputError, match="boolean array of length 4"):
        movers(lead, a, np.array([0, 0, 1, 1]), 2)
