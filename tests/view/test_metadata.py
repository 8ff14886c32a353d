"""Each metadata field's kind: date, number, category or free text."""

from __future__ import annotations

import datetime as dt

import pandas as pd

from talkthemes.view.metadata import MetaTable, metadata_table


def test_metadata_kinds(meta: MetaTable) -> None:
    assert meta.fields["date"].kind == "date" and meta.date_field == "date"
    assert meta.fields["date"].lo == dt.date(2026, 5, 4) and meta.fields["date"].missing == 1
    assert meta.fields["duration_s"].kind == "number"
    assert (meta.fields["duration_s"].lo, meta.fields["duration_s"].hi) == (100.0, 600.0)
    assert meta.fields["queue"].kind == "category"
    assert meta.fields["queue"].values == ("billing", "faults", "moves")  # most frequent first
    assert pd.isna(meta.dates[5]) and meta.frame["queue"][5] == "moves"


def test_many_distinct_values_make_a_text_field() -> None:
    ids = [f"t{i}" for i in range(40)]
    table = metadata_table(ids, {t: {"agent": f"agent {t}"} for t in ids})
    assert table.fields["agent"].kind == "text" and table.date_field is None
