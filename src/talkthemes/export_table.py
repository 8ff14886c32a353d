"""The tables ``talkthemes export`` writes: shares in theme order, and the themes beside them.

:func:`export_tables` builds, for every transcript of a version, its id, lead theme (id,
name, share) and one share column per theme, in ascending theme id, named
``share_<theme id>`` so a column keeps its meaning across versions; optionally followed by
the transcripts' metadata columns (as the manifest gave them, free text masked by
default: :func:`talkthemes.privacy.mask_value`). The companion table names each share
column's theme: id, name, whether the name is a person's label or a suggestion, hidden,
coverage, average share and top terms. :func:`write_export` writes both, as CSV (the
companion as ``<name>.themes.csv``) or Parquet.

Pure frame building over a loaded version; the caller passes the themes' display names
(labels or suggested names), so this module needs no viewer code.
"""

from __future__ import annotations

import io
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from talkthemes.errors import InputError
from talkthemes.privacy import mask_value
from talkthemes.text import csv_frame
from talkthemes.workspace import atomic_write_bytes, atomic_write_text

__all__ = ["ExportTables", "export_tables", "share_column", "write_export"]


def share_column(theme_id: int) -> str:
    """The name of a theme's share column (``share_12``)."""
    return f"share_{int(theme_id)}"


@dataclass(frozen=True)
class ExportTables:
    """What ``export`` writes: one row per transcript, and one row per theme."""

    shares: pd.DataFrame
    themes: pd.DataFrame


def export_tables(
    version: object,
    names: Sequence[str],
    *,
    metadata: Mapping[str, Mapping[str, str]] | None = None,
    fields: Sequence[str] | None = None,
    top_terms: Sequence[Sequence[str]] | None = None,
    masked: bool = True,
) -> ExportTables:
    """Build the export of a version.

    Parameters
    ----------
    version : Version
        A loaded version (``doc_ids``, ``doc_topics``, ``themes``, ``theme_ids``,
        ``lead()``, ``lead_share()``, ``coverage()``, ``mean_share()``).
    names : sequence of str
        Each theme's display name, by row (its label, or its suggested name).
    metadata : mapping, optional
        ``{transcript id: {field: value}}``; when given, its fields become columns after
        the shares (all fields, or ``fields`` in that order).
    fields : sequence of str, optional
        The metadata fields to write (a field no transcript has is refused).
    top_terms : sequence of sequences of str, optional
        Each theme's top terms, by row, for the companion table.
    masked : bool
        Mask personal data in metadata values (pass False only where the workspace allows
        the original text).

    Returns
    -------
    ExportTables
        ``shares``: ``transcript_id, lead_theme_id, lead_theme, lead_share`` and
        ``share_<id>`` per theme in ascending id, then metadata columns. ``themes``:
        ``column, theme_id, name, named_by, hidden, coverage, mean_share, top_terms``,
        in the same order as the share columns.
    """
    ids = [int(t) for t in version.theme_ids]  # type: ignore[attr-defined]
    if len(names) != len(ids):
        raise InputError(f"export: {len(names)} names for {len(ids)} themes")
    order = np.argsort(ids, kind="stable")
    shares = np.asarray(version.doc_topics, dtype=np.float64)  # type: ignore[attr-defined]
    lead = np.asarray(version.lead())  # type: ignore[attr-defined]
    out = pd.DataFrame(
        {
            "transcript_id": list(version.doc_ids),  # type: ignore[attr-defined]
            "lead_theme_id": np.asarray(ids, dtype=np.int64)[lead],
            "lead_theme": np.asarray(list(names), dtype=object)[lead],
            "lead_share": np.asarray(version.lead_share(), dtype=np.float64),  # type: ignore[attr-defined]
        }
    )
    for pos in order:
        out[share_column(ids[pos])] = shares[:, pos]
    if metadata is not None:
        present = sorted({f for values in metadata.values() for f in values})
        wanted = list(fields) if fields is not None else present
        unknown = [f for f in wanted if f not in present]
        if unknown:
            raise InputError(
                "export: no transcript has the metadata field(s) "
                + ", ".join(map(repr, unknown))
                + f" (fields: {', '.join(present) or 'none'})"
            )
        taken = set(out.columns)
        for f in wanted:
            column = f if f not in taken else f"meta_{f}"
            values = [metadata.get(t, {}).get(f) for t in out["transcript_id"]]
            if masked:
                values = [None if v is None else mask_value(str(v)) for v in values]
            out[column] = values
    themes_info = version.themes  # type: ignore[attr-defined]
    cov, mean = version.coverage(), version.mean_share()  # type: ignore[attr-defined]
    themes = pd.DataFrame(
        [
            {
                "column": share_column(ids[pos]),
                "theme_id": ids[pos],
                "name": names[pos],
                "named_by": "label" if str(themes_info[pos].label or "").strip()
                else "suggested",
                "hidden": bool(themes_info[pos].hidden),
                "coverage": float(cov[pos]),
                "mean_share": float(mean[pos]),
                "top_terms": ", ".join(top_terms[pos]) if top_terms is not None else "",
            }
            for pos in order
        ]
    )  # fmt: skip
    return ExportTables(out, themes)


def write_export(tables: ExportTables, path: Path) -> list[Path]:
    """Write the export to ``path`` (``.csv`` or ``.parquet``) and its themes beside it.

    CSV text cells that a spreadsheet would run as a formula get a leading apostrophe
    (:func:`talkthemes.text.csv_frame`). The companion is ``<stem>.themes.csv`` (or
    ``.themes.parquet``). Both are written atomically. Returns the files written.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in (".csv", ".parquet"):
        raise InputError(f"export: {path}: write a .csv or a .parquet file")
    companion = path.with_name(f"{path.stem}.themes{suffix}")
    for frame, target in ((tables.shares, path), (tables.themes, companion)):
        if suffix == ".csv":
            buf = io.StringIO()
            csv_frame(frame).to_csv(buf, index=False)
            atomic_write_text(target, buf.getvalue())
        else:
            raw = io.BytesIO()
            frame.to_parquet(raw, index=False)
            atomic_write_bytes(target, raw.getvalue())
    return [path, companion]
