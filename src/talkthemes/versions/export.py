"""Exporting a version: every transcript's lead theme (or the unthemed group), lead share
and share per theme, as CSV (spreadsheet-safe) or Parquet."""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pandas as pd

from talkthemes.errors import ConfigError
from talkthemes.text import csv_frame
from talkthemes.versions.load import Version
from talkthemes.versions.unthemed import UNTHEMED, unthemed_group
from talkthemes.workspace import atomic_write_bytes

__all__ = ["export_shares", "write_table"]


def export_shares(version: Version) -> pd.DataFrame:
    """One row per transcript of the version: id, lead theme id and label, lead share, the
    lead theme's suggested name (what screens show until it is labelled), a share per
    theme, and ``reason``.

    The themed transcripts come first, in the version's order; then its **unthemed**
    transcripts (:mod:`talkthemes.versions.unthemed`), whose lead theme label and suggested
    name say ``unthemed``, with no lead theme id and no shares, and ``reason`` giving the
    preparation's reason (empty on themed rows). Share columns are named
    ``share_<theme id>``; merged themes are one column.
    """
    lead = version.lead()
    ids = np.asarray(version.theme_ids)
    labels = [t.label for t in version.themes]
    suggested = version.suggested_names()
    frame = pd.DataFrame(
        {
            "transcript_id": version.doc_ids,
            "lead_theme_id": pd.array(ids[lead], dtype="Int64"),
            "lead_theme_label": [labels[i] for i in lead],
            "lead_share": np.round(version.lead_share().astype(np.float64), 6),
            "lead_theme_suggested_name": [suggested[i] for i in lead],
        }
    )
    shares = pd.DataFrame(
        np.round(np.asarray(version.doc_topics, dtype=np.float64), 6),
        columns=[f"share_{t}" for t in ids],
    )
    themed = pd.concat([frame, shares], axis=1).assign(reason="")
    group = unthemed_group(version.folder, version.doc_ids)
    if not group.count:
        return themed
    n = group.count
    rows = pd.DataFrame(
        {
            "transcript_id": list(group.reasons),
            "lead_theme_id": pd.array([None] * n, dtype="Int64"),
            "lead_theme_label": [UNTHEMED] * n,
            "lead_share": np.full(n, np.nan),
            "lead_theme_suggested_name": [UNTHEMED] * n,
            **{f"share_{t}": np.full(n, np.nan) for t in ids},
            "reason": list(group.reasons.values()),
        }
    )
    return pd.concat([themed, rows], ignore_index=True)


def write_table(frame: pd.DataFrame, path: Path) -> None:
    """Write a frame as CSV or Parquet (by extension), atomically.

    A CSV is opened in spreadsheets, so every text cell that would start a formula (``=``,
    ``+``, ``-``, ``@``, tab, carriage return) is prefixed with ``'``, as the OWASP guidance
    on CSV injection advises (:func:`talkthemes.text.csv_frame`); Parquet keeps the values
    as they are.
    """
    suffix = path.suffix.lower()
    if suffix == ".csv":
        atomic_write_bytes(
            path, csv_frame(frame).to_csv(index=False, lineterminator="\r\n").encode("utf-8")
        )
    elif suffix == ".parquet":
        buf = io.BytesIO()
        frame.to_parquet(buf, index=False)
        atomic_write_bytes(path, buf.getvalue())
    else:
        raise ConfigError(f"--out {path}: expected a .csv or .parquet file name")
