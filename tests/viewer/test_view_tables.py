"""The viewer tables of a published demo version: written with it, equal to what the share
matrix gives, built on first open for a version without them (or with merged themes),
and what the sections show."""

from __future__ import annotations

import json
import shutil

import numpy as np
import pandas as pd
import pytest
from tests.viewer.test_app import open_app, run

import talkthemes as tt
from talkthemes.versions.load import Version, load_version
from talkthemes.versions.metadata import segment_fields, segment_values
from talkthemes.versions.tables import TABLES_DIR, ViewTables, read_tables, tables_dir
from talkthemes.versions.tables_build import TOP_CALLS
from talkthemes.view.calls import calls_table, top_calls_table
from talkthemes.view.metadata import MetaTable, load_metadata
from talkthemes.view.over_time import segment_frame, trend_frame
from talkthemes.view.tables import ensure_tables
from talkthemes.workspace import Workspace


def matrix_groups(version: Version, meta: MetaTable, field: str) -> dict:
    """(segment, day, theme id) → (calls led, share sum), counted from the share matrix."""
    shares = np.asarray(version.doc_topics, dtype=np.float64)
    segments = pd.Series([None] * len(shares), dtype=object) if not field else segment_values(
        meta, field
    )  # fmt: skip
    out: dict = {}
    ids = np.asarray(version.theme_ids)
    for i, lead in enumerate(version.lead()):
        seg = segments.iloc[i]
        if field and seg is None:
            continue
        day = meta.dates.iloc[i]
        key = (seg, None if pd.isna(day) else day.date().isoformat())
        for j, tid in enumerate(ids):
            leads, total = out.get((*key, int(tid)), (0, 0.0))
            out[(*key, int(tid))] = (leads + int(lead == j), total + shares[i, j])
    return out


def table_groups(tables: ViewTables, field: str) -> dict:
    rows = tables.groups[tables.groups["field"] == field]
    return {
        (
            r.segment if field else None,
            None if pd.isna(r.day) else r.day.date().isoformat(),
            int(r.theme_id),
        ): (int(r.leads), float(r.share_sum))
        for r in rows.itertuples()
    }


def assert_tables_match_the_matrix(ws: Workspace, version: Version, tables: ViewTables) -> None:
    meta = load_metadata(ws, version.doc_ids)
    assert tables.n_calls == len(version.doc_ids)
    for field in ["", *segment_fields(meta)]:
        want, got = matrix_groups(version, meta, field), table_groups(tables, field)
        assert set(got) == set(want), field
        for key, (leads, total) in want.items():
            assert got[key][0] == leads, (field, key)
            assert got[key][1] == pytest.approx(total, abs=1e-6), (field, key)
    for freq in ("week", "month"):
        pd.testing.assert_frame_equal(
            trend_frame(version, tables, freq), trend_frame(version, meta, freq)
        )
    for field in segment_fields(meta):
        pd.testing.assert_frame_equal(
            segment_frame(version, tables, field), segment_frame(version, meta, field)
        )
    for pos in range(version.k):
        ours = top_calls_table(version, tables, pos)
        theirs = calls_table(version, meta, pos).head(TOP_CALLS)
        assert ours["transcript_id"].tolist() == theirs["transcript_id"].tolist()
        assert ours["share"].tolist() == theirs["share"].tolist()
        for name in meta.fields:
            assert ours[name].tolist() == theirs[name].astype(object).where(
                theirs[name].notna(), None
            ).tolist()  # fmt: skip


def test_a_publish_writes_tables_equal_to_the_share_matrix(demo_ws) -> None:
    ws = demo_ws.ws
    version = load_version(ws)
    tables = read_tables(version.folder / TABLES_DIR, version.theme_ids, len(version.doc_ids))
    assert tables is not None and tables.built == "publish"
    assert {"queue", "duration_s"} <= set(tables.groups["field"])
    assert_tables_match_the_matrix(ws, version, tables)


def test_a_version_without_tables_opens_and_keeps_the_tables_it_builds(
    ws_copy, monkeypatch
) -> None:
    version = load_version(ws_copy)
    shutil.rmtree(version.folder / TABLES_DIR)  # as a version written before tables
    at = run(open_app(ws_copy.root, monkeypatch), "calls.py")
    doc = json.loads((version.folder / TABLES_DIR / "tables.json").read_text("utf-8"))
    assert doc["built"] == "first open" and doc["n_calls"] == len(version.doc_ids)
    # what the user reads: the selected theme's calls, counted from the matrix
    pos = int(np.argmax(version.coverage()))
    led = int(np.count_nonzero(version.lead() == pos))
    assert any(c.value.startswith(f"{led:,} transcripts match") for c in at.caption)
    listed = at.dataframe[0].value
    meta = load_metadata(ws_copy, version.doc_ids)
    full = calls_table(version, meta, pos)
    assert listed["transcript_id"].tolist() == full["transcript_id"].head(1000).tolist()
    for page in ("theme_map.py", "over_time.py", "theme_cards.py"):
        run(at, page)
        assert not at.error, [e.value for e in at.error]
    fresh = read_tables(version.folder / TABLES_DIR, version.theme_ids, len(version.doc_ids))
    assert_tables_match_the_matrix(ws_copy, version, fresh)


def test_merged_themes_get_tables_of_their_own(ws_copy) -> None:
    before = load_version(ws_copy)
    order = np.argsort(-before.coverage())
    keep, gone = before.theme_ids[int(order[0])], before.theme_ids[int(order[1])]
    tt.Workspace.open(ws_copy.root).merge(gone, into=keep)
    version = load_version(ws_copy)
    assert version.groups is not None and version.k == before.k - 1
    tables = ensure_tables(ws_copy, version)
    target = tables_dir(version.folder, version.groups)
    assert target.name != TABLES_DIR and (target / "tables.json").is_file()
    assert tables.built == "first open" and tables.theme_ids == version.theme_ids
    assert_tables_match_the_matrix(ws_copy, version, tables)
    # the merged theme leads the calls either led, and maybe some more
    merged = version.position(keep)
    assert tables.lead_counts()[merged] >= int(np.count_nonzero(before.lead() == order[0])) + int(
        np.count_nonzero(before.lead() == order[1])
    )
