"""Building a version's viewer tables from its share matrix, in chunks of calls.

What :mod:`talkthemes.versions.tables` reads, worked out once from the D × K shares and
the calls' metadata, so that no section of the viewer reads the share matrix again:

* **groups** — per theme × day × segment (of every segment field, and of all calls): the
  calls the theme leads (the largest share of the call, as ``Version.lead``) and the sum
  of the theme's shares. Days add up to the weeks and months the sections show.
* **top calls** — per theme, the :data:`TOP_CALLS` calls it leads with the largest shares
  (ties by transcript id), with their metadata: the Calls list as it first opens.
* **calls** — each call's metadata as the viewer's filters read it (text as shown,
  numbers and dates parsed), by version row: what a filtered Calls list needs besides the
  shares, read from one Parquet file instead of every call's rows in the store;
* **map** — each theme's place on the theme map and the distances between themes
  (classical MDS on Jensen–Shannon distances, docs/methods_metrics.md, "Theme map:
  Jensen–Shannon distance and classical MDS").

The shares are read :data:`CHUNK` calls at a time, so a memory-mapped matrix is never
loaded whole.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from talkthemes.metrics.layout import classical_mds, js_distance_matrix
from talkthemes.versions.metadata import MetaTable, segment_fields, segment_values

__all__ = ["CHUNK", "TOP_CALLS", "BuiltTables", "build_tables", "call_frame", "lead_of"]

#: Calls each theme's top list keeps (the rows the Calls list shows).
TOP_CALLS = 1000
#: Calls read from the share matrix at a time.
CHUNK = 200_000


class BuiltTables:
    """The tables' frames as built (see :func:`build_tables`; written by
    :func:`talkthemes.versions.tables.write_tables`)."""

    def __init__(
        self,
        groups: pd.DataFrame,
        top: pd.DataFrame,
        layout: pd.DataFrame,
        distances: np.ndarray,
        explained: float,
        n_calls: int,
        calls: pd.DataFrame,
    ) -> None:
        self.calls = calls
        self.groups = groups
        self.top = top
        self.layout = layout
        self.distances = distances
        self.explained = explained
        self.n_calls = n_calls


def lead_of(doc_topics: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each call's lead theme (row of its largest share, as ``Version.lead``) and that
    share, read in chunks."""
    d = int(doc_topics.shape[0])
    lead = np.empty(d, dtype=np.int64)
    best = np.empty(d, dtype=np.float64)
    for start in range(0, d, CHUNK):
        block = np.asarray(doc_topics[start : start + CHUNK])
        lead[start : start + len(block)] = np.argmax(block, axis=1)
        best[start : start + len(block)] = block[np.arange(len(block)), lead[start:][: len(block)]]
    return lead, best


def _codes(values: pd.Series) -> tuple[np.ndarray, list]:
    """Integer code per call (-1: missing) and the distinct values, sorted."""
    missing = values.isna().to_numpy()
    keys = sorted(set(values[~missing].tolist()))
    index = {v: i for i, v in enumerate(keys)}
    codes = np.full(len(values), -1, dtype=np.int64)
    codes[~missing] = [index[v] for v in values[~missing].tolist()]
    return codes, keys


def _grouped(
    codes: np.ndarray, n_groups: int, lead: np.ndarray, doc_topics: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Lead counts and share sums per (group, theme); calls with code -1 left out."""
    k = int(doc_topics.shape[1])
    keep = codes >= 0
    leads = np.bincount(codes[keep] * k + lead[keep], minlength=n_groups * k).reshape(n_groups, k)
    sums = np.zeros((n_groups, k), dtype=np.float64)
    for start in range(0, len(codes), CHUNK):
        block = np.asarray(doc_topics[start : start + CHUNK], dtype=np.float64)
        c = codes[start : start + len(block)]
        sel = c >= 0
        for j in range(k):
            sums[:, j] += np.bincount(c[sel], weights=block[sel, j], minlength=n_groups)
    return leads, sums


def _group_rows(
    field: str,
    seg_codes: np.ndarray,
    seg_keys: list,
    day_codes: np.ndarray,
    day_keys: list,
    lead: np.ndarray,
    doc_topics: np.ndarray,
    theme_ids: Sequence[int],
) -> pd.DataFrame:
    """Rows of one field (segment × day × theme), only for groups that hold calls."""
    n_days = len(day_keys) + 1  # the last day code: calls without a date
    days = np.where(day_codes >= 0, day_codes, len(day_keys))
    codes = np.where(seg_codes >= 0, seg_codes * n_days + days, -1)
    leads, sums = _grouped(codes, len(seg_keys) * n_days, lead, doc_topics)
    filled = np.flatnonzero(leads.sum(axis=1) > 0)
    k = len(theme_ids)
    day_values = pd.DatetimeIndex([*day_keys, pd.NaT])
    seg_values = np.asarray(seg_keys, dtype=object)
    return pd.DataFrame(
        {
            "field": field,
            "segment": np.repeat(seg_values[filled // n_days], k) if field else None,
            "day": np.repeat(day_values[filled % n_days], k),
            "theme_id": np.tile(np.asarray(theme_ids, dtype=np.int64), filled.size),
            "leads": leads[filled].ravel().astype(np.int64),
            "share_sum": sums[filled].ravel(),
        }
    )


def _top_calls(
    lead: np.ndarray,
    best: np.ndarray,
    doc_ids: Sequence[str],
    meta: MetaTable,
    theme_ids: Sequence[int],
    top: int,
) -> pd.DataFrame:
    """Per theme, the calls it leads with the largest shares (ties by id), as the Calls
    list orders them, with the calls' metadata columns (``m:<field>``)."""
    ids = np.asarray(doc_ids, dtype=object)
    parts = []
    for pos, tid in enumerate(theme_ids):
        rows = np.flatnonzero(lead == pos)
        if rows.size > top:  # candidates: at least the top share values (ties kept)
            cut = np.partition(best[rows], rows.size - top)[rows.size - top]
            rows = rows[best[rows] >= cut]
        order = np.lexsort((ids[rows].astype(str), -best[rows]))[:top]
        rows = rows[order]
        parts.append(
            pd.DataFrame(
                {
                    "theme_id": np.int64(tid),
                    "rank": np.arange(1, rows.size + 1, dtype=np.int64),
                    "row": rows.astype(np.int64),
                    "transcript_id": ids[rows].astype(str),
                    "share": best[rows],
                }
            )
        )
    out = pd.concat(parts, ignore_index=True)
    extra = meta.frame.iloc[out["row"].to_numpy()].reset_index(drop=True)
    for name in extra.columns:
        out[f"m:{name}"] = extra[name].astype(object).where(extra[name].notna(), None)
    return out


def call_frame(meta: MetaTable) -> pd.DataFrame:
    """Each call's metadata by version row: ``m:<field>`` the text as the frame shows it,
    ``n:<field>`` a number field's values (NaN when missing), ``d:<field>`` the dates of
    the date field."""
    out = pd.DataFrame(index=range(len(meta.frame)))
    for name in meta.frame.columns:
        col = meta.frame[name].astype(object)
        out[f"m:{name}"] = col.where(col.notna(), None)
    for name, values in meta.numbers.items():
        out[f"n:{name}"] = np.asarray(values, dtype=np.float64)
    if meta.date_field is not None and meta.dates is not None:
        out[f"d:{meta.date_field}"] = meta.dates.to_numpy()
    return out


def build_tables(
    doc_topics: np.ndarray,
    doc_ids: Sequence[str],
    meta: MetaTable,
    theme_ids: Sequence[int],
    topic_terms: np.ndarray,
    *,
    top: int = TOP_CALLS,
) -> BuiltTables:
    """Count a version's calls into its viewer tables.

    Parameters
    ----------
    doc_topics : ndarray (D, K)
        The shares (a memory map is read in chunks).
    doc_ids : sequence of str
        The calls, by row.
    meta : MetaTable
        Their metadata, aligned with ``doc_ids``
        (:func:`talkthemes.versions.metadata.metadata_table`).
    theme_ids : sequence of int
        The themes, by column.
    topic_terms : ndarray (K, V)
        For the map.
    top : int
        Calls kept per theme in the top list.

    Returns
    -------
    BuiltTables
    """
    lead, best = lead_of(doc_topics)
    if meta.dates is not None:
        day_codes, day_keys = _codes(meta.dates)
    else:
        day_codes, day_keys = np.full(len(doc_ids), -1, dtype=np.int64), []
    frames = [
        _group_rows(
            "", np.zeros(len(doc_ids), np.int64), [None], day_codes, day_keys, lead, doc_topics,
            theme_ids,
        )
    ]  # fmt: skip
    for name in segment_fields(meta):
        seg_codes, seg_keys = _codes(segment_values(meta, name).astype(object))
        if seg_keys:
            frames.append(
                _group_rows(
                    name, seg_codes, [str(s) for s in seg_keys], day_codes, day_keys, lead,
                    doc_topics, theme_ids,
                )
            )  # fmt: skip
    groups = pd.concat(frames, ignore_index=True)
    groups["segment"] = groups["segment"].astype(object)
    distances = js_distance_matrix(np.asarray(topic_terms, dtype=np.float64))
    mds = classical_mds(distances, 2)
    layout = pd.DataFrame(
        {
            "theme_id": np.asarray(theme_ids, dtype=np.int64),
            "x": mds.coordinates[:, 0],
            "y": mds.coordinates[:, 1],
        }
    )
    return BuiltTables(
        groups=groups,
        top=_top_calls(lead, best, doc_ids, meta, theme_ids, top),
        layout=layout,
        distances=np.asarray(distances, dtype=np.float64),
        explained=float(mds.explained),
        n_calls=len(doc_ids),
        calls=call_frame(meta),
    )
