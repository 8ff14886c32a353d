"""The versions' timeline: one dot per version where it was made, the current one ringed."""

from __future__ import annotations

import dataclasses

import pandas as pd
import pytest
import tests.charts.spec as vl

from talkthemes.charts.history import timeline_chart
from talkthemes.charts.style import BLACK, BLUE, BLUISH_GREEN
from talkthemes.errors import InputError
from talkthemes.store.records import VersionRecord, VersionRefresh
from talkthemes.view.history import versions_timeline

VERSIONS = [
    VersionRecord(n=1, created_at="2026-05-01T09:00:00", current=False, family="nmf", k=8),
    VersionRecord(
        n=2,
        created_at="2026-06-01T09:00:00+00:00",
        current=False,
        family="nmf",
        k=8,
        refresh=VersionRefresh(previous_version=1, new_transcripts=120),
    ),
    VersionRecord(
        n=3,
        created_at="2026-07-01T09:00:00",
        current=True,
        family="nmf",
        k=9,
        refresh=VersionRefresh(previous_version=2, new_transcripts=80),
    ),
]


def test_one_dot_per_version_in_time_order_coloured_by_how_it_was_made() -> None:
    spec = timeline_chart(versions_timeline(VERSIONS)).to_dict()
    scene = vl.scene(spec)
    (_, dots), *_ = [m for m in scene.of_type("symbol") if len(m[1]) == 3]
    dots = sorted(dots, key=lambda d: d["x"])
    assert [d["fill"] for d in dots] == [BLUE, BLUISH_GREEN, BLUISH_GREEN]
    assert dots[0]["y"] > dots[1]["y"] > dots[2]["y"]  # later versions higher up
    (_, ring), *_ = [m for m in scene.of_type("symbol") if len(m[1]) == 1]
    assert ring[0]["stroke"] == BLACK and ring[0]["x"] == pytest.approx(dots[2]["x"])
    ((_, words),) = scene.of_type("text")
    assert [(w["text"], w["x"]) for w in words] == [("current", pytest.approx(dots[2]["x"]))]
    rows = next(iter(spec["datasets"].values()))
    assert [r["n"] for r in rows] == [1, 2, 3]
    assert [r["current"] for r in rows] == [False, False, True]


def test_a_timeline_without_its_columns_is_refused() -> None:
    with pytest.raises(InputError, match="timeline lacks column\\(s\\) kind"):
        timeline_chart(
            pd.DataFrame({"n": [1], "created_at": [pd.Timestamp("2026-01-01")]}).assign(
                current=True, family="NMF", k=5, previous_version=pd.NA, new_transcripts=pd.NA
            )
        )


def test_ticks_read_as_times_whatever_the_span() -> None:
    """Versions made seconds apart (a demo) once read ".800 … .800 :54"."""
    from talkthemes.charts.history import time_format

    def stamps(*values: str) -> pd.Series:
        return pd.Series(pd.to_datetime(list(values)))

    assert time_format(stamps("2026-05-01 09:00:00", "2026-05-01 09:00:41")) == "%H:%M:%S"
    assert time_format(stamps("2026-05-01 09:00", "2026-05-01 17:30")) == "%H:%M"
    assert time_format(stamps("2026-05-01", "2026-06-20")) == "%d %b"
    assert time_format(stamps("2025-05-01", "2026-06-20")) == "%b %Y"
    close = [dataclasses.replace(v, created_at=f"2026-05-01T09:00:{10 + 20 * i:02d}")
             for i, v in enumerate(VERSIONS)]  # fmt: skip
    spec = timeline_chart(versions_timeline(close)).to_dict()
    axis = vl.by_mark(spec, "line")[0]["encoding"]["x"]["axis"]
    assert axis["format"] == "%H:%M:%S" and spec["autosize"]["type"] == "pad"
