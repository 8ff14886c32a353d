"""Curation: labels, notes and *not a theme* marks written with their log, themes merged
into others, and the curation log itself.

Every curation action is one row of ``curation_log`` (when, what, which theme, the
current version, and the values before and after), written in the same transaction as
the change. A merge is one row of ``theme_merges`` (``theme_id`` merged into ``into_id``):
merges belong to theme ids, like labels, so every version holding those ids shows the
themes as one (see :mod:`talkthemes.versions.curation`).
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Mapping, Sequence
from typing import Any

from talkthemes.errors import StoreError
from talkthemes.store._base import StoreBase, now_iso
from talkthemes.store.records import CURATION_ACTIONS, CurationEntry, LabelRecord

__all__ = [
    "ACTIONS",
    "CurationMixin",
    "log_label_changes",
    "merge_root",
    "write_label",
]

#: The curation actions the log records.
ACTIONS = CURATION_ACTIONS


def merge_root(merges: Mapping[int, int], theme_id: int) -> int:
    """The theme id a theme is shown as: followed through its merges to the end.

    Parameters
    ----------
    merges : mapping of int to int
        ``theme_id → into_id`` (:meth:`CurationMixin.theme_merges`).
    theme_id : int

    Returns
    -------
    int
        ``theme_id`` itself when it is not merged.
    """
    seen = {int(theme_id)}
    t = int(theme_id)
    while t in merges:
        t = int(merges[t])
        if t in seen:  # a cycle cannot be stored; stop rather than loop
            break
        seen.add(t)
    return t


def _current_version(c: sqlite3.Connection) -> int | None:
    row = c.execute("SELECT n FROM versions WHERE current = 1").fetchone()
    return None if row is None else int(row[0])


def _log(c: sqlite3.Connection, action: str, theme_id: int, detail: dict[str, Any]) -> None:
    c.execute(
        "INSERT INTO curation_log(at, action, theme_id, version, detail) VALUES (?,?,?,?,?)",
        (now_iso(), action, int(theme_id), _current_version(c), json.dumps(detail)),
    )


def log_label_changes(
    c: sqlite3.Connection,
    theme_id: int,
    before: Sequence[Any],
    after: Sequence[Any],
) -> None:
    """Log each of label, note and hidden flag that changed (rows ``(label, note, hidden)``)."""
    if (before[0] or "") != (after[0] or ""):
        _log(c, "label", theme_id, {"before": before[0] or "", "after": after[0] or ""})
    if (before[1] or "") != (after[1] or ""):
        _log(c, "note", theme_id, {"before": before[1] or "", "after": after[1] or ""})
    if bool(before[2]) != bool(after[2]):
        _log(c, "not_a_theme" if after[2] else "a_theme", theme_id, {})


def write_label(
    c: sqlite3.Connection,
    theme_id: int,
    *,
    label: str | None = None,
    note: str | None = None,
    hidden: bool | None = None,
) -> LabelRecord:
    """Set a theme's label, note or hidden flag inside a transaction, and log the changes.

    Returns
    -------
    LabelRecord
        The values after the change.

    Raises
    ------
    StoreError
        When no version has a theme with this id.
    """
    if c.execute("SELECT 1 FROM themes WHERE theme_id = ?", (theme_id,)).fetchone() is None:
        raise StoreError(f"there is no theme {theme_id}")
    c.execute(
        "INSERT INTO labels(theme_id, updated_at) VALUES (?, ?) ON CONFLICT(theme_id) DO NOTHING",
        (theme_id, now_iso()),
    )
    before = c.execute(
        "SELECT label, note, hidden FROM labels WHERE theme_id = ?", (theme_id,)
    ).fetchone()
    changes = {"label": label, "note": note, "hidden": None if hidden is None else int(hidden)}
    for column, value in changes.items():
        if value is not None:
            c.execute(
                f"UPDATE labels SET {column}=?, updated_at=? WHERE theme_id=?",
                (value, now_iso(), theme_id),
            )
    after = c.execute(
        "SELECT label, note, hidden FROM labels WHERE theme_id = ?", (theme_id,)
    ).fetchone()
    log_label_changes(c, theme_id, before, after)
    return LabelRecord(int(theme_id), str(after[0] or ""), str(after[1] or ""), bool(after[2]))


class CurationMixin(StoreBase):
    """Merges, labels set in bulk, and the curation log."""

    def theme_merges(self) -> dict[int, int]:
        """Every merge: ``theme_id → into_id`` (follow with :func:`merge_root`)."""
        return {
            int(t): int(i)
            for t, i in self._conn.execute("SELECT theme_id, into_id FROM theme_merges")
        }

    def merge_theme(self, theme_id: int, into_id: int) -> int:
        """Merge a theme into another; the other keeps its id (logged as ``merge``).

        ``into_id`` may itself be merged: the theme joins the one it is shown as. A theme
        with themes merged into it brings them along.

        Returns
        -------
        int
            The id the merged theme is shown as.

        Raises
        ------
        StoreError
            When either id is no theme, ``theme_id`` is already merged into another, or
            both are already one theme.
        """
        theme_id, into_id = int(theme_id), int(into_id)
        with self.transaction() as c:
            for t in (theme_id, into_id):
                if c.execute("SELECT 1 FROM themes WHERE theme_id = ?", (t,)).fetchone() is None:
                    raise StoreError(f"there is no theme {t}")
            merges = {
                int(a): int(b) for a, b in c.execute("SELECT theme_id, into_id FROM theme_merges")
            }
            if theme_id in merges:
                raise StoreError(
                    f"theme {theme_id} is already merged into theme {merge_root(merges, theme_id)}"
                )
            root = merge_root(merges, into_id)
            if root == theme_id:
                raise StoreError(f"themes {theme_id} and {into_id} are already one theme")
            c.execute(
                "INSERT INTO theme_merges(theme_id, into_id, version, merged_at) VALUES (?,?,?,?)",
                (theme_id, root, _current_version(c), now_iso()),
            )
            _log(c, "merge", theme_id, {"into": root})
        return root

    def unmerge_theme(self, theme_id: int) -> list[int]:
        """Undo merges: a merged theme comes back on its own, or, for a theme others were
        merged into, every one of them does (each logged as ``unmerge``).

        Returns
        -------
        list of int
            The ids set apart again.

        Raises
        ------
        StoreError
            When the theme is in no merge.
        """
        theme_id = int(theme_id)
        with self.transaction() as c:
            own = c.execute(
                "SELECT theme_id, into_id FROM theme_merges WHERE theme_id = ?", (theme_id,)
            ).fetchall()
            rows = (
                own
                or c.execute(
                    "SELECT theme_id, into_id FROM theme_merges WHERE into_id = ? "
                    "ORDER BY theme_id",
                    (theme_id,),
                ).fetchall()
            )
            if not rows:
                raise StoreError(f"theme {theme_id} is not merged with another theme")
            for t, into in rows:
                c.execute("DELETE FROM theme_merges WHERE theme_id = ?", (t,))
                _log(c, "unmerge", int(t), {"from": int(into)})
        return [int(t) for t, _ in rows]

    def labels_for(self, theme_ids: Sequence[int]) -> dict[int, LabelRecord]:
        """Label, note and hidden flag of the given theme ids (blank for ids never labelled)."""
        out = {int(t): LabelRecord(int(t), "", "", False) for t in theme_ids}
        ids = list(out)
        for i in range(0, len(ids), 500):
            chunk = ids[i : i + 500]
            q = ",".join("?" * len(chunk))
            for t, label, note, hidden in self._conn.execute(
                f"SELECT theme_id, label, note, hidden FROM labels WHERE theme_id IN ({q})", chunk
            ):
                out[int(t)] = LabelRecord(int(t), label or "", note or "", bool(hidden))
        return out

    def apply_labels(
        self, changes: Sequence[tuple[int, str | None, str | None]]
    ) -> list[LabelRecord]:
        """Set the label and note of several themes in one transaction: all or nothing.

        Parameters
        ----------
        changes : sequence of (theme_id, label, note)
            ``None`` leaves a field as it is.

        Returns
        -------
        list of LabelRecord
            The values after the change, one per entry.

        Raises
        ------
        StoreError
            When an id is no theme (nothing is changed).
        """
        out = []
        with self.transaction() as c:
            for theme_id, label, note in changes:
                out.append(write_label(c, int(theme_id), label=label, note=note))
        return out

    def curation_log(
        self, theme_id: int | None = None, limit: int | None = None
    ) -> list[CurationEntry]:
        """The curation log, newest first (of one theme when ``theme_id`` is given)."""
        sql = "SELECT id, at, action, theme_id, version, detail FROM curation_log"
        params: list[Any] = []
        if theme_id is not None:
            sql += " WHERE theme_id = ?"
            params.append(int(theme_id))
        sql += " ORDER BY id DESC"
        if limit is not None:
            sql += " LIMIT ?"
            params.append(int(limit))
        return [CurationEntry.from_row(*row) for row in self._conn.execute(sql, params)]

    def curation_stamp(self) -> int:
        """A number that changes with every curation action (the newest log row's id)."""
        row = self._conn.execute("SELECT COALESCE(MAX(id), 0) FROM curation_log").fetchone()
        return int(row[0])
