"""Exporting a version: every transcript's lead theme, lead share and share per theme,
as CSV (spreadsheet-safe) or Parquet."""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pandas as pd

from talkthemes.errors import ConfigError
from talkthemes.text import csv_frame
from talkthemes.versions.load import Version
from talkthemes.workspace import atomic_write_bytes

__all__ = ["export_shares", "write_table"]


def export_shares(version: Version) -> pd.DataFrame:
    """One row per transcript: id, lead theme id and label, lead share, a share per theme.

    Share columns are named ``share_<theme id>``.
    """
    lead = version.lead()
    ids = np.asarray(version.theme_ids)
    labels = [t.label for t in version.themes]
    frame = pd.DataFrame(
        {
            "transcript_id": version.doc_ids,
            "lead_theme_id": ids[lead],
            "lead_theme_label": [labels[i] for i in lead],
            "lead_share": np.round(version.lead_share().astype(np.float64), 6),
        }
    )
    shares = pd.DataFrame(
        np.round(np.asarray(version.doc_topics, dtype=np.float64), 6),
        columns=[f"share_{t}" for t in ids],
    )
    return pd.concat([frame, shares], axis=1)


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
