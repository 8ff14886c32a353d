"""The export: shares in theme order, the themes named in a companion table, metadata on
request (masked by default), written spreadsheet-safe."""

from __future__ import annotations

import csv
import dataclasses
import io

import numpy as np
import pandas as pd
import pytest
from tests.view.data import SHARES, make_version

from talkthemes.errors import ConfigError, InputError
from talkthemes.versions.export import (
    companion_path,
    export_shares,
    export_themes,
    with_metadata,
    write_table,
)


@pytest.fixture
def version(tmp_path):
    v = make_version(SHARES, labels=["Bills", "", ""], hidden=[False, False, True])
    # theme ids out of row order: columns follow the ids, not the rows
    themes = [
        dataclasses.replace(t, theme_id=tid) for t, tid in zip(v.themes, (30, 12, 21), strict=True)
    ]
    return dataclasses.replace(v, themes=themes, folder=tmp_path)


META = {
    "t0": {"queue": "billing", "note": "call Dana Whitfield on 555-010-4477"},
    "t3": {"queue": "faults", "note": "=cmd()"},
}


def test_share_columns_in_theme_order_with_their_names_beside(version) -> None:
    shares, themes = export_shares(version), export_themes(version, n_terms=2)
    assert [c for c in shares.columns if c.startswith("share_")] == [
        "share_12",
        "share_21",
        "share_30",
    ]
    # each share column holds its theme's shares, wherever the theme sits in the version
    np.testing.assert_allclose(shares["share_30"], SHARES[:, 0])
    np.testing.assert_allclose(shares["share_12"], SHARES[:, 1])
    assert shares.loc[3, "lead_theme_id"] == 12 and shares.loc[0, "lead_share"] == 0.9
    assert themes["column"].tolist() == ["share_12", "share_21", "share_30"]
    names = version.names()
    assert themes["name"].tolist() == [names[1], names[2], "Bills"]
    assert themes["named_by"].tolist() == ["suggested", "suggested", "label"]
    assert themes["not_a_theme"].tolist() == [False, True, False]
    assert themes.loc[2, "top_terms"] == "bill, pay"  # the label's theme: row 0's top terms
    np.testing.assert_allclose(themes["coverage"], version.coverage()[[1, 2, 0]], atol=1e-6)


def test_metadata_columns_on_request_masked_by_default(version) -> None:
    shares = with_metadata(export_shares(version), META, ["note", "queue"])
    assert list(shares.columns[-2:]) == ["note", "queue"]
    note = shares.loc[0, "note"]
    assert "Whitfield" not in note and "4477" not in note and "[phone number]" in note
    assert pd.isna(shares.loc[1, "queue"])  # t1 has no metadata
    raw = with_metadata(export_shares(version), META, masked=False)
    assert list(raw.columns[-2:]) == ["note", "queue"]  # every field, sorted
    assert "Dana Whitfield" in raw.loc[0, "note"]
    with pytest.raises(InputError, match=r"'site'.*fields: note, queue"):
        with_metadata(export_shares(version), META, ["site"])


def test_a_metadata_field_named_like_a_column_keeps_both(version) -> None:
    shares = with_metadata(export_shares(version), {"t0": {"reason": "complaint"}})
    assert shares.loc[0, "meta_reason"] == "complaint" and shares.loc[0, "reason"] == ""


def test_csv_and_parquet_with_a_companion(version, tmp_path) -> None:
    shares = with_metadata(export_shares(version), META)
    out = tmp_path / "shares.csv"
    write_table(shares, out)
    write_table(export_themes(version), companion_path(out))
    assert companion_path(out).name == "shares.themes.csv"
    rows = list(csv.reader(io.StringIO(out.read_text(encoding="utf-8"))))
    share_cols = [c for c in rows[0] if c.startswith("share_")]
    assert share_cols == ["share_12", "share_21", "share_30"]
    assert "'=cmd()" in rows[4]  # a formula is written as text
    text = companion_path(out).read_text(encoding="utf-8")
    assert [t["column"] for t in csv.DictReader(io.StringIO(text))] == share_cols
    back = tmp_path / "shares.parquet"
    write_table(shares, back)
    assert list(pd.read_parquet(back).columns) == list(shares.columns)
    with pytest.raises(ConfigError, match=r"expected a \.csv or \.parquet"):
        write_table(shares, tmp_path / "shares.xlsx")
