"""A version's viewer tables: the numbers they hold are the ones the share matrix gives.

On the six-call version of ``data.py`` (t0–t2 led by theme 11, t3–t4 by 12, t5 by 13; t5
has no date): the counts per theme × day × segment and the share sums are checked by hand,
and every frame a section draws from the tables is checked against the same frame counted
from the share matrix and the metadata (the path the sections took before the tables).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest
from tests.view.data import META, make_version

from talkthemes.errors import InputError
from talkthemes.versions.load import Version
from talkthemes.versions.metadata import segment_values
from talkthemes.versions.tables import (
    TABLES_DIR,
    ViewTables,
    read_tables,
    tables_dir,
    tables_from_built,
    write_tables,
)
from talkthemes.versions.tables_build import TOP_CALLS, build_tables
from talkthemes.view.calls import CallFilter, calls_table, plain_filter, top_calls_table
from talkthemes.view.metadata import FieldInfo, MetaTable, metadata_table
from talkthemes.view.over_time import (
    default_comparison,
    full_periods,
    movers_frame,
    period_choices,
    segment_frame,
    theme_trends,
    trend_frame,
)
from talkthemes.view.tables import (
    table_coverage,
    table_layout,
    table_lead_count,
    table_mean_share,
)
from talkthemes.view.theme_map import theme_layout
from talkthemes.view.themes import theme_table


def tables_of(version: Version, meta: MetaTable, top: int = TOP_CALLS) -> ViewTables:
    built = build_tables(
        version.doc_topics, version.doc_ids, meta, version.theme_ids, version.topic_terms, top=top
    )
    return tables_from_built(built, meta, version.theme_ids, "publish")


def same_rows(ours: pd.DataFrame, theirs: pd.DataFrame) -> None:
    """The same rows and values (metadata columns compared as text, missing as None)."""

    def plain(frame: pd.DataFrame) -> pd.DataFrame:
        out = frame.astype(object)
        return out.where(out.notna(), None)

    pd.testing.assert_frame_equal(plain(ours), plain(theirs))
    assert ours["share"].dtype == theirs["share"].dtype == np.float64


def _leads(groups: pd.DataFrame, field: str) -> dict:
    rows = groups[(groups["field"] == field) & (groups["leads"] > 0)]
    return {
        (r.segment, None if pd.isna(r.day) else r.day.date().isoformat(), r.theme_id): r.leads
        for r in rows.itertuples()
    }


def test_counts_per_theme_day_and_segment_are_the_calls_each_theme_leads(version, meta) -> None:
    groups = tables_of(version, meta).groups
    assert _leads(groups, "queue") == {
        ("billing", "2026-05-04", 11): 1,
        ("faults", "2026-05-05", 11): 1,
        ("billing", "2026-05-12", 11): 1,
        ("faults", "2026-06-01", 12): 1,
        ("billing", "2026-06-02", 12): 1,
        ("moves", None, 13): 1,  # t5 has no date: counted in its segment all the same
    }
    assert sum(_leads(groups, "").values()) == 6
    # durations (seconds, shown in minutes) in quartile bins, as the segment chart cuts them
    bins = {s for s, _, _ in _leads(groups, "duration_s")}
    assert len(bins) == 4 and bins == set(segment_values(meta, "duration_s").dropna())
    assert "Q1: 1.66667–3.33333" in bins
    assert "ref" not in set(groups["field"])  # free text is no segment


def test_share_sums_per_segment_and_in_all(version, meta) -> None:
    groups = tables_of(version, meta).groups
    billing = groups[(groups["field"] == "queue") & (groups["segment"] == "billing")]
    sums = billing.groupby("theme_id")["share_sum"].sum()
    # t0, t2, t4: theme 11 0.9 + 0.7 + 0.4, theme 12 0.1 + 0.2 + 0.5, theme 13 0 + 0.1 + 0.1
    assert sums.to_dict() == pytest.approx({11: 2.0, 12: 0.8, 13: 0.2})
    every = groups[groups["field"] == ""].groupby("theme_id")["share_sum"].sum()
    assert every.to_numpy() == pytest.approx(np.asarray(version.doc_topics).sum(axis=0))


def test_coverage_mean_share_and_map_equal_the_matrix(version, meta) -> None:
    tables = tables_of(version, meta)
    version.tables = tables
    assert table_coverage(version).tolist() == pytest.approx([3 / 6, 2 / 6, 1 / 6])
    assert table_coverage(version) == pytest.approx(version.coverage())
    assert table_mean_share(version) == pytest.approx(version.mean_share())
    assert [table_lead_count(version, p) for p in range(3)] == [3, 2, 1]
    stored, fresh = table_layout(tables), theme_layout(version.topic_terms)
    assert stored.x == pytest.approx(fresh.x) and stored.y == pytest.approx(fresh.y)
    assert stored.distances == pytest.approx(fresh.distances)
    assert stored.explained == pytest.approx(fresh.explained)
    table = theme_table(version, stored)
    assert table["coverage"].tolist() == pytest.approx([0.5, 2 / 6, 1 / 6])


@pytest.mark.parametrize("freq", ["week", "month"])
def test_frames_over_time_from_the_tables_equal_those_from_the_matrix(version, meta, freq) -> None:
    tables = tables_of(version, meta)
    pd.testing.assert_frame_equal(
        trend_frame(version, tables, freq), trend_frame(version, meta, freq)
    )
    assert period_choices(tables, freq) == period_choices(meta, freq)
    assert full_periods(tables, freq) == full_periods(meta, freq)
    assert default_comparison(tables, freq) == default_comparison(meta, freq)
    comparison = default_comparison(meta, freq)
    pd.testing.assert_frame_equal(
        movers_frame(version, tables, freq, comparison.before, comparison.after),
        movers_frame(version, meta, freq, comparison.before, comparison.after),
    )
    pd.testing.assert_frame_equal(theme_trends(version, tables), theme_trends(version, meta))


@pytest.mark.parametrize("field", ["queue", "duration_s"])
def test_segments_from_the_tables_equal_those_from_the_matrix(version, meta, field) -> None:
    tables = tables_of(version, meta)
    ours = segment_frame(version, tables, field)
    pd.testing.assert_frame_equal(ours, segment_frame(version, meta, field))
    billing = (
        ours[(ours["segment"] == "billing") & (ours["theme_id"] == 11)]
        if field == "queue"
        else None
    )
    if billing is not None:
        assert billing["share"].iloc[0] == pytest.approx(2 / 3) and billing["n"].iloc[0] == 3
    with pytest.raises(InputError, match="not a field to compare by"):
        segment_frame(version, tables, "ref")


def test_movers_from_the_tables_refuse_an_empty_period(version, meta) -> None:
    tables = tables_of(version, meta)
    with pytest.raises(InputError, match=r"before.*no transcripts"):
        movers_frame(
            version, tables, "month", [pd.Timestamp("2026-01-01")], pd.Timestamp("2026-06-01")
        )


def test_top_calls_are_the_first_rows_of_the_calls_list(version, meta) -> None:
    for top in (TOP_CALLS, 2):
        tables = tables_of(version, meta, top=top)
        for pos in range(version.k):
            full = calls_table(version, meta, pos).head(top)
            same_rows(top_calls_table(version, tables, pos), full)
            same_rows(
                top_calls_table(version, tables, pos, masked=False),
                calls_table(version, meta, pos, masked=False).head(top),
            )
    # theme 11 leads t0 (0.9), t2 (0.7), t1 (0.6): the two kept are the largest shares
    assert top_calls_table(version, tables_of(version, meta, 2), 0)["transcript_id"].tolist() == [
        "t0",
        "t2",
    ]


def test_ties_in_the_top_list_go_by_transcript_id() -> None:
    shares = np.array([[0.5, 0.5], [0.7, 0.3], [0.7, 0.3], [0.7, 0.3], [0.9, 0.1]])
    version = make_version(shares)
    version.doc_ids[:] = ["e", "d", "c", "b", "a"]
    meta = metadata_table(version.doc_ids, {})
    tables = tables_of(version, meta, top=3)
    assert top_calls_table(version, tables, 0)["transcript_id"].tolist() == ["a", "b", "c"]
    assert calls_table(version, meta, 0).head(3)["transcript_id"].tolist() == ["a", "b", "c"]


def test_the_plain_filter_is_the_list_as_it_opens() -> None:
    assert plain_filter(CallFilter())
    assert plain_filter(CallFilter(categories={"queue": []}, contains={"ref": ""}))
    assert not plain_filter(CallFilter(lead_only=False))
    assert not plain_filter(CallFilter(min_share=0.2))
    assert not plain_filter(CallFilter(categories={"queue": ["billing"]}))
    assert not plain_filter(CallFilter(ranges={"duration_s": (1.0, 2.0)}))
    assert not plain_filter(CallFilter(date_from=dt.date(2026, 5, 5)))


def test_written_tables_read_back_the_same(version, meta, tmp_path) -> None:
    built = build_tables(
        version.doc_topics, version.doc_ids, meta, version.theme_ids, version.topic_terms
    )
    target = tables_dir(tmp_path, None)
    assert target == tmp_path / TABLES_DIR
    write_tables(target, built, meta, version.theme_ids)
    back = read_tables(target, version.theme_ids, 6)
    assert back is not None and back.built == "publish"
    assert back.fields == meta.fields and back.date_field == "date"
    assert back.fields["date"].lo == dt.date(2026, 5, 4)
    for freq in ("week", "month"):
        pd.testing.assert_frame_equal(
            trend_frame(version, back, freq), trend_frame(version, meta, freq)
        )
    same_rows(top_calls_table(version, back, 0), calls_table(version, meta, 0).head(TOP_CALLS))
    # tables of other themes or other calls are not these: they are built again
    assert read_tables(target, [11, 12, 14], 6) is None
    assert read_tables(target, version.theme_ids, 7) is None
    assert read_tables(tmp_path / "missing", version.theme_ids, 6) is None
    merged = tables_dir(tmp_path, [(11, [0, 1]), (13, [2])])
    assert merged != target and merged.name.startswith(TABLES_DIR + "-")
    assert merged == tables_dir(tmp_path, [(11, [0, 1]), (13, [2])])


def test_the_calls_metadata_kept_with_the_tables_filters_as_the_stored_one(
    version, meta, tmp_path
) -> None:
    built = build_tables(
        version.doc_topics, version.doc_ids, meta, version.theme_ids, version.topic_terms
    )
    write_tables(tmp_path / TABLES_DIR, built, meta, version.theme_ids)
    kept = read_tables(tmp_path / TABLES_DIR, version.theme_ids, 6).call_metadata()
    assert kept.date_field == "date" and kept.fields == meta.fields
    pd.testing.assert_series_equal(kept.dates, meta.dates, check_names=False)
    assert kept.numbers["duration_s"] == pytest.approx(meta.numbers["duration_s"])
    filters = [
        CallFilter(categories={"queue": ["billing"]}),
        CallFilter(ranges={"duration_s": (3.0, 9.0)}, lead_only=False),
        CallFilter(date_from=dt.date(2026, 5, 5), date_to=dt.date(2026, 6, 1), lead_only=False),
        CallFilter(contains={"ref": "B-"}, lead_only=False),
        CallFilter(min_share=0.3, lead_only=False),
    ]
    for flt in filters:
        for pos in range(version.k):
            same_rows(calls_table(version, kept, pos, flt), calls_table(version, meta, pos, flt))
    billing = calls_table(version, kept, 0, filters[0])
    assert billing["transcript_id"].tolist() == ["t0", "t2"]


def test_a_missing_text_value_stays_missing_once_masked(version, tmp_path) -> None:
    rows = {t: dict(v) for t, v in META.items()}
    del rows["t1"]["ref"]
    meta = metadata_table(version.doc_ids, rows)
    meta.fields["ref"] = FieldInfo("ref", "text")
    built = build_tables(
        version.doc_topics, version.doc_ids, meta, version.theme_ids, version.topic_terms
    )
    write_tables(tmp_path / TABLES_DIR, built, meta, version.theme_ids)
    tables = read_tables(tmp_path / TABLES_DIR, version.theme_ids, 6)
    for frame in (
        calls_table(version, tables.call_metadata(), 0),
        calls_table(version, meta, 0),
        top_calls_table(version, tables, 0),
    ):
        refs = dict(zip(frame["transcript_id"], frame["ref"], strict=True))
        assert pd.isna(refs["t1"]) and refs["t0"] == "a-1", refs


def test_a_version_without_dates_has_no_days(version) -> None:
    meta = metadata_table(version.doc_ids, {t: {"queue": v["queue"]} for t, v in META.items()})
    tables = tables_of(version, meta)
    assert tables.dates is None and tables.date_field is None
    pd.testing.assert_frame_equal(
        segment_frame(version, tables, "queue"), segment_frame(version, meta, "queue")
    )
