"""Each metadata field's kind: date, number, category or free text."""

from __future__ import annotations

import datetime as dt

import pandas as pd
import pytest

from talkthemes.view.metadata import MetaTable, field_label, metadata_table, seconds_field


def test_metadata_kinds(meta: MetaTable) -> None:
    assert meta.fields["date"].kind == "date" and meta.date_field == "date"
    assert meta.fields["date"].lo == dt.date(2026, 5, 4) and meta.fields["date"].missing == 1
    assert meta.fields["duration_s"].kind == "number"
    # a field of seconds is shown in minutes, under a readable name
    duration = meta.fields["duration_s"]
    assert duration.label == "Duration (min)"
    assert (duration.lo, duration.hi) == pytest.approx((100 / 60, 600 / 60))
    assert meta.frame["duration_s"][0] == "1.7" and meta.numbers["duration_s"][5] == 10.0
    assert meta.fields["queue"].kind == "category"
    assert meta.fields["queue"].values == ("billing", "faults", "moves")  # most frequent first
    assert pd.isna(meta.dates[5]) and meta.frame["queue"][5] == "moves"


def test_many_distinct_values_make_a_text_field() -> None:
    ids = [f"t{i}" for i in range(40)]
    table = metadata_table(ids, {t: {"agent": f"agent {t}"} for t in ids})
    assert table.fields["agent"].kind == "text" and table.date_field is None


@pytest.mark.parametrize(
    ("name", "label"),
    [
        ("duration_s", "Duration (min)"),
        ("hold_seconds", "Hold (min)"),
        ("wait_min", "Wait (min)"),
        ("queue", "Queue"),
        ("call_reason", "Call reason"),
        ("status", "Status"),  # ends in "s", but not seconds
        ("ids", "Ids"),
    ],
)
def test_fields_are_named_as_people_read_them(name: str, label: str) -> None:
    assert field_label(name) == label
    assert seconds_field(name) == (name in ("duration_s", "hold_seconds"))
