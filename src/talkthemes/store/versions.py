"""Published versions, their themes, labels and retired themes."""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import Any

from talkthemes.errors import StoreError
from talkthemes.store._base import StoreBase, now_iso
from talkthemes.store.records import LabelRecord, RetiredTheme, ThemeRecord, VersionRecord

__all__ = ["VersionsMixin"]


class VersionsMixin(StoreBase):
    """Versions, themes, labels and retired themes."""

    # -- versions, themes, labels -----------------------------------------------------
    def next_version_number(self) -> int:
        """The number the next published version will get."""
        return int(self._conn.execute("SELECT COALESCE(MAX(n), 0) + 1 FROM versions").fetchone()[0])

    def reserve_theme_ids(self, n: int) -> list[int]:
        """Hand out ``n`` new theme ids, never reused."""
        with self.transaction() as c:
            first = int(c.execute("SELECT next FROM theme_ids").fetchone()[0])
            c.execute("UPDATE theme_ids SET next = ?", (first + n,))
        return list(range(first, first + n))

    def add_version(self, n: int, info: dict[str, Any], themes: Sequence[dict[str, Any]]) -> None:
        """Record version ``n`` with its themes and make it current, in one transaction.

        Each theme dict has ``theme_id``, ``position`` (row in the version's arrays),
        ``status`` and optionally ``info``. The version's files must already be in place.
        """
        self.publish_version(n, info, themes)

    def set_current_version(self, n: int) -> None:
        """Make an existing version current again (roll back or forward)."""
        with self.transaction() as c:
            if c.execute("SELECT 1 FROM versions WHERE n = ?", (n,)).fetchone() is None:
                raise StoreError(f"there is no version {n}")
            c.execute("UPDATE versions SET current = 0 WHERE current = 1")
            c.execute("UPDATE versions SET current = 1 WHERE n = ?", (n,))

    def current_version(self) -> VersionRecord | None:
        """The current version's record, or None."""
        row = self._conn.execute(
            "SELECT n, created_at, current, info FROM versions WHERE current = 1"
        ).fetchone()
        return None if row is None else VersionRecord.from_row(*row)

    def versions(self) -> list[VersionRecord]:
        """Every recorded version, oldest first."""
        return [
            VersionRecord.from_row(*row)
            for row in self._conn.execute(
                "SELECT n, created_at, current, info FROM versions ORDER BY n"
            )
        ]

    def themes(self, version: int) -> list[ThemeRecord]:
        """Themes of a version, by position, with their label, note and hidden flag."""
        return [
            ThemeRecord.from_row(*row)
            for row in self._conn.execute(
                "SELECT t.theme_id, t.position, t.status, t.info, l.label, l.note, l.hidden "
                "FROM themes t LEFT JOIN labels l ON l.theme_id = t.theme_id "
                "WHERE t.version = ? ORDER BY t.position",
                (version,),
            )
        ]

    def set_label(
        self,
        theme_id: int,
        *,
        label: str | None = None,
        note: str | None = None,
        hidden: bool | None = None,
    ) -> LabelRecord:
        """Set a theme's label, note or hidden flag (``None`` leaves a field as it is).

        Raises
        ------
        StoreError
            When no version has a theme with this id.
        """
        with self.transaction() as c:
            if c.execute("SELECT 1 FROM themes WHERE theme_id = ?", (theme_id,)).fetchone() is None:
                raise StoreError(f"there is no theme {theme_id}")
            c.execute(
                "INSERT INTO labels(theme_id, updated_at) VALUES (?, ?) "
                "ON CONFLICT(theme_id) DO NOTHING",
                (theme_id, now_iso()),
            )
            if label is not None:
                c.execute(
                    "UPDATE labels SET label=?, updated_at=? WHERE theme_id=?",
                    (label, now_iso(), theme_id),
                )
            if note is not None:
                c.execute(
                    "UPDATE labels SET note=?, updated_at=? WHERE theme_id=?",
                    (note, now_iso(), theme_id),
                )
            if hidden is not None:
                c.execute(
                    "UPDATE labels SET hidden=?, updated_at=? WHERE theme_id=?",
                    (int(hidden), now_iso(), theme_id),
                )
            row = c.execute(
                "SELECT label, note, hidden FROM labels WHERE theme_id = ?", (theme_id,)
            ).fetchone()
        return LabelRecord(int(theme_id), row[0], row[1], bool(row[2]))

    # -- publishing with retired themes, pruning, the refresh log ----------------------
    def publish_version(
        self,
        n: int,
        info: dict[str, Any],
        themes: Sequence[dict[str, Any]],
        *,
        retired: Sequence[dict[str, Any]] = (),
        refresh_id: int | None = None,
        refresh_info: dict[str, Any] | None = None,
    ) -> None:
        """Record version ``n`` and make it current, all in one transaction.

        Like :meth:`add_version`, and in the same transaction: the themes this version
        retired (``theme_id`` and optionally ``info`` each), and, for a refresh, its log
        row marked ``published`` with this version. The version's files must already be
        in place.
        """
        with self.transaction() as c:
            c.execute("UPDATE versions SET current = 0 WHERE current = 1")
            c.execute(
                "INSERT INTO versions(n, created_at, current, info) VALUES (?,?,1,?)",
                (n, now_iso(), json.dumps(info)),
            )
            c.executemany(
                "INSERT INTO themes(version, theme_id, position, status, info) VALUES (?,?,?,?,?)",
                [
                    (n, t["theme_id"], t["position"], t["status"], json.dumps(t.get("info", {})))
                    for t in themes
                ],
            )
            if retired:
                c.executemany(
                    "INSERT INTO retired_themes(version, theme_id, info) VALUES (?,?,?)",
                    [(n, r["theme_id"], json.dumps(r.get("info", {}))) for r in retired],
                )
            if refresh_id is not None:
                c.execute(
                    "UPDATE refreshes SET status='published', finished_at=?, version=?, info=? "
                    "WHERE id=?",
                    (now_iso(), n, json.dumps(refresh_info or {}), refresh_id),
                )

    def retired_themes(self, version: int) -> list[RetiredTheme]:
        """Themes that version ``version`` retired, with their label, note and hidden flag."""
        return [
            RetiredTheme.from_row(*row)
            for row in self._conn.execute(
                "SELECT r.theme_id, r.info, l.label, l.note, l.hidden FROM retired_themes r "
                "LEFT JOIN labels l ON l.theme_id = r.theme_id WHERE r.version = ? "
                "ORDER BY r.theme_id",
                (version,),
            )
        ]

    def version_numbers(self) -> list[int]:
        """Numbers of every recorded version, ascending."""
        return [r[0] for r in self._conn.execute("SELECT n FROM versions ORDER BY n")]

    def delete_versions(self, numbers: Sequence[int]) -> list[int]:
        """Forget versions (their themes and retired themes too), in one transaction.

        Labels stay: they belong to theme ids, which later versions may carry.

        Returns
        -------
        list of int
            The numbers actually deleted.

        Raises
        ------
        StoreError
            When one of them is the current version (it is never deleted).
        """
        numbers = sorted({int(x) for x in numbers})
        if not numbers:
            return []
        with self.transaction() as c:
            q = ",".join("?" * len(numbers))
            current = c.execute(
                f"SELECT n FROM versions WHERE current = 1 AND n IN ({q})", numbers
            ).fetchone()
            if current is not None:
                raise StoreError(f"version {current[0]} is current and cannot be deleted")
            found = [
                r[0]
                for r in c.execute(f"SELECT n FROM versions WHERE n IN ({q}) ORDER BY n", numbers)
            ]
            c.execute(f"DELETE FROM themes WHERE version IN ({q})", numbers)
            c.execute(f"DELETE FROM retired_themes WHERE version IN ({q})", numbers)
            c.execute(f"DELETE FROM versions WHERE n IN ({q})", numbers)
        return found
