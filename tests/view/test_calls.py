"""A theme's transcripts, by share, filtered by any metadata field; the list as safe CSV."""

from __future__ import annotations

import datetime as dt
import io

import pandas as pd
import pytest

from talkthemes.errors import InputError
from talkthemes.view.calls import CallFilter, calls_csv, calls_table


def test_calls_lists_the_theme_s_transcripts_by_share(version, meta) -> None:
    calls = calls_table(version, meta, 0)
    assert list(calls["transcript_id"]) == ["t0", "t2", "t1"]
    assert calls["share"].tolist() == pytest.approx([0.9, 0.7, 0.6])
    assert set(calls["lead_theme"]) == {"Bills"}
    assert {"date", "queue", "duration_s", "ref"} <= set(calls.columns)
    wider = calls_table(version, meta, 0, CallFilter(lead_only=False, min_share=0.2))
    assert list(wider["transcript_id"]) == ["t0", "t2", "t1", "t4", "t3"]
    assert wider.set_index("transcript_id")["lead_share"]["t4"] == pytest.approx(0.5)
    assert calls_table(version, meta, 0, CallFilter(min_share=0.65))["share"].min() >= 0.65


def test_calls_filters(version, meta) -> None:
    def ids(**kw) -> list[str]:
        flt = CallFilter(lead_only=False, **kw)
        return sorted(calls_table(version, meta, 0, flt)["transcript_id"])

    assert ids(categories={"queue": ["faults"]}) == ["t1", "t3"]
    assert ids(categories={"queue": []}) == [f"t{i}" for i in range(6)]
    assert ids(ranges={"duration_s": (2.5, 7.5)}) == ["t1", "t2", "t3"]  # minutes
    assert ids(contains={"ref": "B-"}) == ["t1"]
    assert ids(date_from=dt.date(2026, 5, 5), date_to=dt.date(2026, 6, 1)) == ["t1", "t2", "t3"]
    assert ids(date_from=dt.date(2026, 6, 1)) == ["t3", "t4"]  # undated t5 left out
    with pytest.raises(InputError, match="'nope' is not a category or text field"):
        ids(categories={"nope": ["x"]})
    with pytest.raises(InputError, match="not a number field"):
        ids(ranges={"queue": (0, 1)})
    with pytest.raises(InputError, match="outside"):
        calls_table(version, meta, 3)


def test_calls_csv_defuses_formulas(version, meta) -> None:
    frame = calls_table(version, meta, 0, CallFilter(lead_only=False))
    text = calls_csv(frame, meta).decode("utf-8")
    assert "'=cmd()" in text and "\n=cmd()" not in text and ",=cmd()" not in text
    back = pd.read_csv(io.StringIO(text))
    assert back["Share of this theme"].tolist() == pytest.approx(frame["share"].tolist())
    # columns named as on screen, never as raw field names
    assert list(back.columns[:5]) == [
        "Transcript", "Share of this theme", "Lead theme", "Lead theme id", "Lead share"
    ]  # fmt: skip
    assert "Duration (min)" in back.columns and "duration_s" not in back.columns


def test_calls_csv_defuses_a_formula_in_a_field_name() -> None:
    frame = pd.DataFrame({"transcript_id": ["t0"], "=HYPERLINK(1)": ["-2+3"], "share": [0.5]})
    header, row = calls_csv(frame).decode("utf-8").splitlines()
    assert header == "Transcript,'=HYPERLINK(1),Share of this theme"
    assert row == "t0,'-2+3,0.5"
