"""Exporting a version: every transcript's lead theme (or the unthemed group), lead share
and share per theme, with the themes named in a companion table and, on request, the
transcripts' metadata; as CSV (spreadsheet-safe) or Parquet.

Share columns are named ``share_<theme id>`` and come in ascending theme id, so a column
keeps its name and its place from one version to the next (a carried theme keeps its id);
``assign`` writes the same layout. The companion table (``<name>.themes.csv``) says, per
share column, which theme it is: id, the name screens show, whether a person gave that
name, whether the theme is marked *not a theme*, coverage, average share and top terms.
See docs/viewer.md, "Exported shares".
"""

from __future__ import annotations

import io
from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from talkthemes.errors import ConfigError, InputError
from talkthemes.privacy import mask_value
from talkthemes.text import csv_frame
from talkthemes.versions.load import Version
from talkthemes.versions.unthemed import UNTHEMED, unthemed_group
from talkthemes.workspace import atomic_write_bytes

__all__ = [
    "companion_path",
    "export_shares",
    "export_themes",
    "share_order",
    "with_metadata",
    "write_table",
]

#: Columns of the themes table written beside the shares.
THEME_COLUMNS = (
    "column", "theme_id", "name", "named_by", "not_a_theme", "coverage", "mean_share",
    "top_terms",
)  # fmt: skip


def share_order(theme_ids: Sequence[int]) -> np.ndarray:
    """Positions of a version's themes in the order their share columns are written
    (ascending theme id)."""
    return np.argsort(np.asarray(theme_ids, dtype=np.int64), kind="stable")


def export_shares(version: Version) -> pd.DataFrame:
    """One row per transcript of the version: id, lead theme id and label, lead share, the
    lead theme's suggested name (what screens show until it is labelled), a share per
    theme, and ``reason``.

    The themed transcripts come first, in the version's order; then its **unthemed**
    transcripts (:mod:`talkthemes.versions.unthemed`), whose lead theme label and suggested
    name say ``unthemed``, with no lead theme id and no shares, and ``reason`` giving the
    preparation's reason (empty on themed rows). Share columns are named
    ``share_<theme id>``, in ascending theme id; merged themes are one column.
    """
    lead = version.lead()
    ids = np.asarray(version.theme_ids, dtype=np.int64)
    order = share_order(ids)
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
        np.round(np.asarray(version.doc_topics, dtype=np.float64)[:, order], 6),
        columns=[f"share_{t}" for t in ids[order]],
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
            **{f"share_{t}": np.full(n, np.nan) for t in ids[order]},
            "reason": list(group.reasons.values()),
        }
    )
    return pd.concat([themed, rows], ignore_index=True)


def export_themes(version: Version, *, n_terms: int = 10) -> pd.DataFrame:
    """The table that names each share column of :func:`export_shares`.

    Returns
    -------
    DataFrame
        One row per theme, in the order of the share columns: ``column``
        (``share_<id>``), ``theme_id``, ``name`` (its label, or its suggested name until
        labelled), ``named_by`` (``label`` or ``suggested``), ``not_a_theme``,
        ``coverage`` and ``mean_share`` (as on the theme cards) and ``top_terms`` (the
        ``n_terms`` most probable, comma-separated).
    """
    ids = [int(t) for t in version.theme_ids]
    names = version.names()
    coverage, mean = version.coverage(), version.mean_share()
    rows = [
        {
            "column": f"share_{ids[pos]}",
            "theme_id": ids[pos],
            "name": names[pos],
            "named_by": "label" if version.themes[pos].label.strip() else "suggested",
            "not_a_theme": bool(version.themes[pos].hidden),
            "coverage": round(float(coverage[pos]), 6),
            "mean_share": round(float(mean[pos]), 6),
            "top_terms": ", ".join(version.top_terms(int(pos), n_terms)),
        }
        for pos in share_order(ids)
    ]
    return pd.DataFrame(rows, columns=list(THEME_COLUMNS))


def with_metadata(
    frame: pd.DataFrame,
    metadata: Mapping[str, Mapping[str, str]],
    fields: Sequence[str] | None = None,
    *,
    masked: bool = True,
) -> pd.DataFrame:
    """``frame`` with the transcripts' metadata as its last columns.

    Parameters
    ----------
    frame : DataFrame
        Has ``transcript_id``.
    metadata : mapping
        ``{transcript id: {field: value}}`` as the manifests gave them.
    fields : sequence of str, optional
        The fields to write, in this order; default every field some transcript has, sorted.
        A field no transcript has is refused, naming the fields there are.
    masked : bool
        Mask personal data in the values as screens do (:func:`talkthemes.privacy.mask_value`);
        pass False only where ``[view] original_text`` allows the original.

    Returns
    -------
    DataFrame
        A new frame; a field whose name is already a column is written as ``meta_<field>``;
        a transcript without the field has an empty cell.
    """
    present = sorted({f for values in metadata.values() for f in values})
    wanted = list(dict.fromkeys(fields)) if fields is not None else present
    unknown = [f for f in wanted if f not in present]
    if unknown:
        raise InputError(
            "export: no transcript has the metadata field(s) "
            + ", ".join(map(repr, unknown))
            + f" (fields: {', '.join(present) or 'none'})"
        )
    out = frame.copy()
    taken = set(out.columns)
    for field in wanted:
        column = field if field not in taken else f"meta_{field}"
        values = [metadata.get(tid, {}).get(field) for tid in out["transcript_id"]]
        if masked:
            values = [None if v is None else mask_value(str(v)) for v in values]
        out[column] = pd.Series(values, index=out.index, dtype=object)
    return out


def companion_path(path: Path) -> Path:
    """Where the themes table of an export to ``path`` goes: ``<stem>.themes<suffix>``."""
    return path.with_name(f"{path.stem}.themes{path.suffix}")


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
