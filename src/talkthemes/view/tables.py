"""The viewer's tables of a version: opened once, built on first open when missing.

A version written since the tables exist holds them (:mod:`talkthemes.versions.tables`).
A version written before, or whose themes were merged since (merging changes which theme
leads a call), has none for what the viewer shows: the first open builds them from the
share matrix and the stored metadata — the work the sections did on every open before —
and keeps them in the version's folder for the next open (when the folder cannot be
written, they are kept in memory for this process only).

The helpers below give the sections what they need from the tables, and fall back on the
share matrix for a version in memory without tables (as the tests build).
"""

from __future__ import annotations

import logging

import numpy as np

from talkthemes.versions.load import Version
from talkthemes.versions.tables import (
    ViewTables,
    read_tables,
    tables_dir,
    tables_from_built,
    write_tables,
)
from talkthemes.versions.tables_build import build_tables
from talkthemes.view.metadata import load_metadata
from talkthemes.view.theme_map import ThemeLayout
from talkthemes.workspace import Workspace

__all__ = [
    "ViewTables",
    "ensure_tables",
    "table_coverage",
    "table_layout",
    "table_lead_count",
    "table_mean_share",
]

log = logging.getLogger(__name__)


def ensure_tables(ws: Workspace, version: Version) -> ViewTables:
    """The version's viewer tables, read from its folder or built (and kept) when missing.

    Also attaches them to ``version`` (``version.tables``), where the helpers of this
    module find them.
    """
    if version.tables is not None:
        return version.tables
    target = tables_dir(version.folder, version.groups)
    tables = read_tables(target, version.theme_ids, len(version.doc_ids))
    if tables is None:
        meta = load_metadata(ws, version.doc_ids)
        built = build_tables(
            version.doc_topics, version.doc_ids, meta, version.theme_ids, version.topic_terms
        )
        try:
            write_tables(target, built, meta, version.theme_ids, how="first open")
        except OSError as exc:  # a read-only workspace: keep them for this process
            log.warning("could not keep the viewer tables in %s: %s", target, exc)
        tables = tables_from_built(built, meta, version.theme_ids, "first open")
    version.tables = tables
    return tables


def table_coverage(version: Version) -> np.ndarray:
    """Share of calls each theme leads (from the tables when attached)."""
    return version.tables.coverage() if version.tables is not None else version.coverage()


def table_mean_share(version: Version) -> np.ndarray:
    """Mean share of each theme (from the tables when attached)."""
    return version.tables.mean_share() if version.tables is not None else version.mean_share()


def table_lead_count(version: Version, position: int) -> int:
    """Calls the theme at ``position`` leads (from the tables when attached)."""
    if version.tables is not None:
        return int(version.tables.lead_counts()[position])
    return int(np.count_nonzero(version.lead() == position))


def table_layout(tables: ViewTables) -> ThemeLayout:
    """The map's coordinates as stored in the tables (classical MDS on Jensen–Shannon
    distances, as :func:`talkthemes.view.theme_map.theme_layout` computes them)."""
    xy = tables.layout.set_index("theme_id").reindex(tables.theme_ids)
    return ThemeLayout(
        xy["x"].to_numpy(dtype=np.float64),
        xy["y"].to_numpy(dtype=np.float64),
        tables.explained,
        tables.distances,
    )
