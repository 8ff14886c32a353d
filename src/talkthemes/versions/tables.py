"""A version's viewer tables: what the viewer's sections read instead of the share matrix.

Written with the version (:func:`talkthemes.versions.write.write_version`, so a publish
and every refresh write them for all the version's calls) into ``versions/<n>/view_tables/``
(see :mod:`talkthemes.versions.tables_build` for what they hold): ``groups.parquet``,
``top_calls.parquet``, ``calls.parquet``, ``map.parquet``, ``map_distances.npy`` and
``tables.json`` (the format, the theme ids by column, the metadata fields and their kinds,
the date field).
No pickle: Parquet, ``.npy`` without objects, JSON.

Themes merged after a version was written (:mod:`talkthemes.versions.curation`) change
which theme leads a call, so the tables of the merged themes are their own folder
(``view_tables-<key>/``), built from the share matrix the first time the viewer opens the
version so, as are the tables of versions written before tables existed
(:func:`talkthemes.view.tables.ensure_tables`).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import logging
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.versions.metadata import FieldInfo, MetaTable
from talkthemes.versions.tables_build import BuiltTables, build_tables
from talkthemes.workspace import atomic_dir

__all__ = ["FORMAT", "TABLES_DIR", "ViewTables", "read_tables", "tables_dir", "write_tables"]

log = logging.getLogger(__name__)

#: Folder of the tables of a version's themes as written.
TABLES_DIR = "view_tables"
#: Bumped when the tables change shape; older tables are built again.
FORMAT = 1


def tables_dir(folder: Path, groups: list[tuple[int, list[int]]] | None) -> Path:
    """The tables' folder for a version's themes as written (``groups`` None) or merged."""
    if groups is None:
        return Path(folder) / TABLES_DIR
    key = json.dumps([[int(r), [int(x) for x in rows]] for r, rows in groups])
    return Path(folder) / f"{TABLES_DIR}-{hashlib.sha256(key.encode()).hexdigest()[:12]}"


def _field_json(info: FieldInfo) -> dict[str, Any]:
    def plain(v: Any) -> Any:
        return v.isoformat() if isinstance(v, (dt.date, pd.Timestamp)) else v

    return {
        "name": info.name,
        "kind": info.kind,
        "values": list(info.values),
        "lo": plain(info.lo),
        "hi": plain(info.hi),
        "missing": info.missing,
    }


def _field_info(doc: dict[str, Any]) -> FieldInfo:
    lo, hi = doc.get("lo"), doc.get("hi")
    if doc["kind"] == "date":
        lo = dt.date.fromisoformat(lo) if lo else None
        hi = dt.date.fromisoformat(hi) if hi else None
    return FieldInfo(
        str(doc["name"]),
        str(doc["kind"]),
        values=tuple(str(v) for v in doc.get("values") or ()),
        lo=lo,
        hi=hi,
        missing=int(doc.get("missing") or 0),
    )


@dataclass(eq=False)
class ViewTables:
    """A version's viewer tables, loaded.

    It answers what the sections ask of the calls without a call's own row, and stands in
    for a :class:`~talkthemes.versions.metadata.MetaTable` where only the fields and the
    dates are needed (``fields``, ``date_field``, ``dates``: each distinct day once).

    Attributes
    ----------
    n_calls : int
    theme_ids : list of int
        The themes, by column of the version they were counted from.
    groups : DataFrame
        ``field`` ("" for all calls), ``segment``, ``day``, ``theme_id``, ``leads``,
        ``share_sum``.
    top : DataFrame
        ``theme_id, rank, row, transcript_id, share`` and ``m:<field>`` metadata columns.
    fields : dict of str to FieldInfo
    date_field : str or None
    layout : DataFrame
        ``theme_id, x, y``.
    distances : ndarray (K, K)
    explained : float
    built : str
        ``"publish"`` (written with the version) or ``"first open"``.
    folder : Path or None
        Where they were read from (None: built and kept in memory).
    """

    n_calls: int
    theme_ids: list[int]
    groups: pd.DataFrame
    top: pd.DataFrame
    fields: dict[str, FieldInfo]
    date_field: str | None
    layout: pd.DataFrame
    distances: np.ndarray
    explained: float
    built: str = "publish"
    folder: Path | None = None
    _cache: dict[str, Any] = field(default_factory=dict, repr=False)

    @property
    def k(self) -> int:
        return len(self.theme_ids)

    def _all(self) -> pd.DataFrame:
        if "all" not in self._cache:
            self._cache["all"] = self.groups[self.groups["field"] == ""]
        return self._cache["all"]

    @property
    def dates(self) -> pd.Series | None:
        """Each distinct day that holds calls (None without a date field)."""
        if self.date_field is None:
            return None
        if "dates" not in self._cache:
            days = self._all()["day"].dropna().drop_duplicates().sort_values()
            self._cache["dates"] = pd.Series(pd.DatetimeIndex(days), dtype="datetime64[ns]")
        return self._cache["dates"]

    def _per_theme(self, frame: pd.DataFrame, column: str) -> np.ndarray:
        sums = frame.groupby("theme_id", sort=False)[column].sum()
        return sums.reindex(self.theme_ids, fill_value=0).to_numpy()

    def lead_counts(self) -> np.ndarray:
        """Calls each theme leads, by column."""
        if "leads" not in self._cache:
            self._cache["leads"] = self._per_theme(self._all(), "leads").astype(np.int64)
        return self._cache["leads"]

    def coverage(self) -> np.ndarray:
        """Share of calls each theme leads (as ``Version.coverage``)."""
        counts = self.lead_counts()
        return counts / max(1, int(counts.sum()))

    def mean_share(self) -> np.ndarray:
        """Mean share of each theme over calls (as ``Version.mean_share``)."""
        sums = self._per_theme(self._all(), "share_sum").astype(np.float64)
        return sums / max(1, self.n_calls)

    def day_counts(self) -> tuple[pd.DatetimeIndex, np.ndarray]:
        """Distinct days with calls and the lead counts per (day, theme column)."""
        rows = self._all().dropna(subset=["day"])
        table = rows.pivot_table(
            index="day", columns="theme_id", values="leads", aggfunc="sum", fill_value=0
        ).reindex(columns=self.theme_ids, fill_value=0)
        return pd.DatetimeIndex(table.index), table.to_numpy(dtype=np.int64)

    def segment_counts(self, name: str) -> tuple[list[str], np.ndarray]:
        """A field's segments (as text, sorted) and their lead counts per theme column."""
        rows = self.groups[self.groups["field"] == name]
        table = rows.pivot_table(
            index="segment", columns="theme_id", values="leads", aggfunc="sum", fill_value=0
        ).reindex(columns=self.theme_ids, fill_value=0)
        keys = [str(s) for s in table.index]
        order = np.argsort(np.asarray(keys, dtype=object), kind="stable")
        return [keys[i] for i in order], table.to_numpy(dtype=np.int64)[order]

    def top_calls(self, theme_id: int) -> pd.DataFrame:
        """A theme's top list (``rank`` order) with ``m:`` metadata columns."""
        rows = self.top[self.top["theme_id"] == int(theme_id)]
        return rows.sort_values("rank").reset_index(drop=True)

    def call_metadata(self) -> MetaTable:
        """Every call's metadata by version row, as a filtered Calls list reads it (the
        ``calls.parquet`` table, read on first use; the same table
        :func:`~talkthemes.versions.metadata.metadata_table` built when they were written)."""
        if "meta" not in self._cache:
            if self.folder is None:
                raise ValueError("these tables were not written: no call metadata to read")
            calls = pd.read_parquet(self.folder / "calls.parquet")
            text = [c for c in calls.columns if c.startswith("m:")]
            # Text columns as Parquet gives them (pandas strings, missing as NA): what the
            # filters compare, and a million rows are not copied into Python objects.
            frame = calls[text].rename(columns={c: c[2:] for c in text})
            numbers = {
                c[2:]: calls[c].to_numpy(dtype=np.float64)
                for c in calls.columns
                if c.startswith("n:")
            }
            dates = None
            if self.date_field is not None and f"d:{self.date_field}" in calls:
                dates = pd.Series(pd.to_datetime(calls[f"d:{self.date_field}"]), name=None)
            self._cache["meta"] = MetaTable(frame, dict(self.fields), self.date_field, dates,
                                            numbers)  # fmt: skip
        return self._cache["meta"]

    def metadata_frame(self, rows: pd.DataFrame) -> pd.DataFrame:
        """The metadata columns of top-list rows, named as the fields."""
        cols = [c for c in rows.columns if c.startswith("m:")]
        out = rows[cols].rename(columns={c: c[2:] for c in cols}).reset_index(drop=True)
        return out.astype(object).where(out.notna(), None)


def write_tables(target: Path, built: BuiltTables, meta: MetaTable, theme_ids: list[int],
                 *, how: str = "publish") -> None:  # fmt: skip
    """Write built tables to the folder ``target`` (in full under a temporary name)."""
    with atomic_dir(Path(target)) as tmp:
        built.groups.to_parquet(tmp / "groups.parquet", index=False)
        built.top.to_parquet(tmp / "top_calls.parquet", index=False)
        built.calls.to_parquet(tmp / "calls.parquet", index=False)
        built.layout.to_parquet(tmp / "map.parquet", index=False)
        np.save(tmp / "map_distances.npy", built.distances, allow_pickle=False)
        doc = {
            "format": FORMAT,
            "n_calls": built.n_calls,
            "theme_ids": [int(t) for t in theme_ids],
            "fields": [_field_json(i) for i in meta.fields.values()],
            "date_field": meta.date_field,
            "explained": built.explained,
            "built": how,
        }
        (tmp / "tables.json").write_text(json.dumps(doc, indent=1), encoding="utf-8")


def read_tables(target: Path, theme_ids: list[int], n_calls: int) -> ViewTables | None:
    """The tables in ``target``, or None when absent, of another format, or not of these
    themes and calls (then they are built again)."""
    target = Path(target)
    try:
        doc = json.loads((target / "tables.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if (
        doc.get("format") != FORMAT
        or [int(t) for t in doc.get("theme_ids", [])] != [int(t) for t in theme_ids]
        or int(doc.get("n_calls", -1)) != int(n_calls)
    ):
        log.info("viewer tables in %s do not match the version: built again", target)
        return None
    try:
        fields = {f["name"]: _field_info(f) for f in doc.get("fields", [])}
        return ViewTables(
            n_calls=int(doc["n_calls"]),
            theme_ids=[int(t) for t in doc["theme_ids"]],
            groups=pd.read_parquet(target / "groups.parquet"),
            top=pd.read_parquet(target / "top_calls.parquet"),
            fields=fields,
            date_field=doc.get("date_field"),
            layout=pd.read_parquet(target / "map.parquet"),
            distances=np.load(target / "map_distances.npy", allow_pickle=False),
            explained=float(doc.get("explained", 0.0)),
            built=str(doc.get("built", "publish")),
            folder=target,
        )
    except (OSError, ValueError, KeyError) as exc:
        log.warning("viewer tables in %s unreadable (%s): built again", target, exc)
        return None


def tables_from_built(built: BuiltTables, meta: MetaTable, theme_ids: list[int],
                      how: str) -> ViewTables:  # fmt: skip
    """Built tables as loaded ones (kept in memory, with the calls' metadata)."""
    tables = ViewTables(
        n_calls=built.n_calls,
        theme_ids=[int(t) for t in theme_ids],
        groups=built.groups,
        top=built.top,
        fields=dict(meta.fields),
        date_field=meta.date_field,
        layout=built.layout,
        distances=built.distances,
        explained=built.explained,
        built=how,
    )
    tables._cache["meta"] = meta
    return tables


def build_and_write(target: Path, doc_topics: np.ndarray, doc_ids: list[str], meta: MetaTable,
                    theme_ids: list[int], topic_terms: np.ndarray, *,
                    how: str = "publish") -> ViewTables:  # fmt: skip
    """Build the tables of a version's calls and write them to ``target``."""
    built = build_tables(doc_topics, doc_ids, meta, theme_ids, topic_terms)
    write_tables(target, built, meta, theme_ids, how=how)
    return tables_from_built(built, meta, theme_ids, how)
