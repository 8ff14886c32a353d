"""The export: shares in theme order, names in a companion table, metadata on request."""

from __future__ import annotations

import csv
import dataclasses
import io

import numpy as np
import pandas as pd
import pytest
from tests.view.data import SHARES, make_version

from talkthemes.errors import InputError
from talkthemes.export_table import export_tables, share_column, write_export


@pytest.fixture
def version():
    v = make_version(SHARES, labels=["Bills", "", ""])
    # theme ids out of row order: columns follow the ids, not the rows
    themes = [
        dataclasses.replace(t, theme_id=tid) for t, tid in zip(v.themes, (30, 12, 21), strict=True)
    ]
    return dataclasses.replace(v, themes=themes)


NAMES = ["Bills", "pay · power", "meter · read"]
META = {
    "t0": {"queue": "billing", "note": "call Dana Whitfield on 555-010-4477"},
    "t3": {"queue": "faults", "note": "=cmd()"},
}


def test_share_columns_in_theme_order_with_their_names_beside(version) -> None:
    tables = export_tables(version, NAMES, top_terms=[["bill"], ["pay"], ["meter"]])
    shares, themes = tables.shares, tables.themes
    assert list(shares.columns) == [
        "transcript_id",
        "lead_theme_id",
        "lead_theme",
        "lead_share",
        "share_12",
        "share_21",
        "share_30",
    ]
    assert themes["column"].tolist() == ["share_12", "share_21", "share_30"]
    assert themes["name"].tolist() == ["pay · power", "meter · read", "Bills"]
    assert themes["named_by"].tolist() == ["suggested", "suggested", "label"]
    np.testing.assert_allclose(shares[share_column(30)], SHARES[:, 0])
    assert shares.loc[3, "lead_theme_id"] == 12 and shares.loc[3, "lead_theme"] == "pay · power"
    assert shares.loc[0, "lead_share"] == pytest.approx(0.9)


def test_metadata_columns_on_request_masked_by_default(version) -> None:
    shares = export_tables(version, NAMES, metadata=META, fields=["note", "queue"]).shares
    assert list(shares.columns[-2:]) == ["note", "queue"]
    note = shares.loc[0, "note"]
    assert "Whitfield" not in note and "4477" not in note and "[phone number]" in note
    assert pd.isna(shares.loc[1, "queue"])  # t1 has no metadata
    raw = export_tables(version, NAMES, metadata=META, masked=False).shares
    assert "Dana Whitfield" in raw.loc[0, "note"]
    with pytest.raises(InputError, match="'site'"):
        export_tables(version, NAMES, metadata=META, fields=["site"])


def test_csv_and_parquet_with_a_companion(version, tmp_path) -> None:
    tables = export_tables(version, NAMES, metadata=META)
    written = write_export(tables, tmp_path / "shares.csv")
    assert [p.name for p in written] == ["shares.csv", "shares.themes.csv"]
    rows = list(csv.reader(io.StringIO(written[0].read_text(encoding="utf-8"))))
    assert rows[0][4:7] == ["share_12", "share_21", "share_30"]
    assert "'=cmd()" in rows[4]  # a formula is written as text
    themes = list(csv.DictReader(io.StringIO(written[1].read_text(encoding="utf-8"))))
    assert [t["column"] for t in themes] == rows[0][4:7]
    parquet = write_export(tables, tmp_path / "shares.parquet")
    back = pd.read_parquet(parquet[0])
    assert list(back.columns) == list(tables.shares.columns)
    with pytest.raises(InputError, match=r"csv or a \.parquet"):
        write_export(tables, tmp_path / "shares.xlsx")
