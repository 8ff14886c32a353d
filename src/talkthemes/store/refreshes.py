"""The refresh log."""

from __future__ import annotations

import json
from typing import Any

from talkthemes.store._base import StoreBase, now_iso
from talkthemes.store.records import RefreshRecord

__all__ = ["RefreshesMixin"]


class RefreshesMixin(StoreBase):
    """The refresh log: one row per refresh, from start to its final status."""

    def start_refresh(self, previous_version: int | None, info: dict[str, Any]) -> int:
        """Log the start of a refresh (status ``running``) and return its id.

        Any refresh still marked ``running`` is marked ``interrupted`` first: refreshes
        hold the workspace lock, so one still running when the next starts was killed.
        """
        with self.transaction() as c:
            c.execute("UPDATE refreshes SET status='interrupted' WHERE status='running'")
            cur = c.execute(
                "INSERT INTO refreshes(started_at, status, previous_version, info) "
                "VALUES (?, 'running', ?, ?)",
                (now_iso(), previous_version, json.dumps(info)),
            )
            return int(cur.lastrowid)

    def finish_refresh(self, refresh_id: int, status: str, info: dict[str, Any]) -> None:
        """Close a refresh's log row with a final ``status`` (not ``published``; see
        :meth:`publish_version`) and its summary."""
        with self.transaction() as c:
            c.execute(
                "UPDATE refreshes SET status=?, finished_at=?, info=? WHERE id=?",
                (status, now_iso(), json.dumps(info), refresh_id),
            )

    def refreshes(self, limit: int | None = None) -> list[RefreshRecord]:
        """The refresh log, newest first."""
        sql = (
            "SELECT id, started_at, finished_at, status, previous_version, version, info "
            "FROM refreshes ORDER BY id DESC"
        )
        params: tuple[int, ...] = ()
        if limit is not None:
            sql += " LIMIT ?"
            params = (int(limit),)
        return [RefreshRecord.from_row(*row) for row in self._conn.execute(sql, params)]
