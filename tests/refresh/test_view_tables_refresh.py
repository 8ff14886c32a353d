"""After a refresh, the new version's viewer tables count every call, October's new ones
included, as its share matrix does."""

from __future__ import annotations

import numpy as np
import pandas as pd

from talkthemes.demo.records import DemoFiles
from talkthemes.refresh.run import refresh
from talkthemes.versions.load import load_version
from talkthemes.versions.tables import TABLES_DIR, read_tables
from talkthemes.view.calls import calls_table, top_calls_table
from talkthemes.view.metadata import load_metadata
from talkthemes.view.over_time import segment_frame, trend_frame
from talkthemes.workspace import Workspace


def test_a_refresh_writes_tables_that_hold_the_new_calls(
    published: Workspace, demo_files: DemoFiles
) -> None:
    ws = published
    before = load_version(ws)
    old = read_tables(before.folder / TABLES_DIR, before.theme_ids, len(before.doc_ids))
    assert old is not None
    old_days = old.dates
    assert old_days.max() < pd.Timestamp("2026-10-01")  # October is held back

    with ws.lock("test"):
        result = refresh(ws, ingest_paths=[demo_files.inbox])
    assert result.status == "published"
    after = load_version(ws)
    assert after.n == before.n + 1 and len(after.doc_ids) > len(before.doc_ids)
    tables = read_tables(after.folder / TABLES_DIR, after.theme_ids, len(after.doc_ids))
    assert tables is not None and tables.built == "publish"
    assert tables.n_calls == len(after.doc_ids)
    assert int(tables.lead_counts().sum()) == len(after.doc_ids)

    meta = load_metadata(ws, after.doc_ids)
    october = (meta.dates >= pd.Timestamp("2026-10-01")).to_numpy(dtype=bool, na_value=False)
    assert october.sum() > 100
    # the new calls, per theme, counted from the new version's share matrix
    lead = after.lead()
    want = np.bincount(lead[october], minlength=after.k)
    rows = tables.groups[(tables.groups["field"] == "") & (tables.groups["day"] >= "2026-10-01")]
    got = rows.groupby("theme_id")["leads"].sum().reindex(after.theme_ids, fill_value=0)
    assert got.tolist() == want.tolist()
    assert tables.dates.max() >= pd.Timestamp("2026-10-01")
    for freq in ("week", "month"):
        pd.testing.assert_frame_equal(
            trend_frame(after, tables, freq), trend_frame(after, meta, freq)
        )
    pd.testing.assert_frame_equal(
        segment_frame(after, tables, "queue"), segment_frame(after, meta, "queue")
    )
    for pos in range(after.k):
        assert (
            top_calls_table(after, tables, pos)["transcript_id"].tolist()
            == calls_table(after, meta, pos)["transcript_id"].head(1000).tolist()
        )
