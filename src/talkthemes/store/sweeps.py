"""Prepared corpora (preps), sweeps and their cells, and where each stage stands."""

from __future__ import annotations

import json
from typing import Any

from talkthemes.store._base import StoreBase, now_iso
from talkthemes.store.records import (
    CellRecord,
    PreparedStage,
    PrepRecord,
    PublishedStage,
    Stages,
    SweepRecord,
    SweptStage,
)

__all__ = ["SweepsMixin"]


class SweepsMixin(StoreBase):
    """Preps, sweeps and cells."""

    # -- preps -----------------------------------------------------------------------
    def record_prep(self, prep_hash: str, info: dict[str, Any]) -> None:
        """Record a prepared corpus and make it the current one (in one transaction)."""
        with self.transaction() as c:
            c.execute("UPDATE preps SET current = 0 WHERE current = 1")
            c.execute(
                "INSERT INTO preps(hash, created_at, info, current) VALUES (?,?,?,1) "
                "ON CONFLICT(hash) DO UPDATE SET info=excluded.info, current=1",
                (prep_hash, now_iso(), json.dumps(info)),
            )

    def current_prep(self) -> PrepRecord | None:
        """The current prep's record, or None."""
        row = self._conn.execute(
            "SELECT hash, created_at, info FROM preps WHERE current = 1"
        ).fetchone()
        return None if row is None else PrepRecord.from_row(*row)

    def stages(self) -> Stages:
        """Where each later stage stands: current prep, latest sweep, current version."""
        prep = self.current_prep()
        sweep = self._conn.execute(
            "SELECT id, created_at, status FROM sweeps ORDER BY id DESC LIMIT 1"
        ).fetchone()
        version = self._conn.execute(
            "SELECT n, created_at FROM versions WHERE current = 1"
        ).fetchone()
        return Stages(
            prepared=None if prep is None else PreparedStage(prep.hash, prep.created_at),
            swept=None if sweep is None else SweptStage(int(sweep[0]), sweep[1], sweep[2]),
            published=None if version is None else PublishedStage(int(version[0]), version[1]),
        )

    # -- sweeps and cells ------------------------------------------------------------
    _SWEEP_SELECT = "SELECT id, prep_hash, created_at, finished_at, status, info FROM sweeps "

    def find_sweep(self, prep_hash: str, grid_key: str) -> SweepRecord | None:
        """The latest sweep of this prep with this grid (:attr:`SweepRecord.grid_key`), or
        None."""
        for row in self._conn.execute(
            self._SWEEP_SELECT + "WHERE prep_hash = ? ORDER BY id DESC", (prep_hash,)
        ):
            record = SweepRecord.from_row(*row)
            if record.grid_key == grid_key:
                return record
        return None

    def start_sweep(self, prep_hash: str, info: dict[str, Any]) -> int:
        """Record a new sweep (status 'running') and return its id."""
        with self.transaction() as c:
            cur = c.execute(
                "INSERT INTO sweeps(prep_hash, created_at, status, info) VALUES (?,?,'running',?)",
                (prep_hash, now_iso(), json.dumps(info)),
            )
            return int(cur.lastrowid)

    def finish_sweep(self, sweep_id: int, info: dict[str, Any]) -> None:
        """Mark a sweep finished and store its summary (recommendation, grid...)."""
        with self.transaction() as c:
            c.execute(
                "UPDATE sweeps SET status='done', finished_at=?, info=? WHERE id=?",
                (now_iso(), json.dumps(info), sweep_id),
            )

    def set_sweep_status(
        self, sweep_id: int, status: str, info: dict[str, Any] | None = None
    ) -> None:
        """Set a sweep's status (``running``, ``interrupted``, ``incomplete``), and its info
        when given."""
        with self.transaction() as c:
            if info is None:
                c.execute("UPDATE sweeps SET status=? WHERE id=?", (status, sweep_id))
            else:
                c.execute(
                    "UPDATE sweeps SET status=?, info=? WHERE id=?",
                    (status, json.dumps(info), sweep_id),
                )

    def mark_sweeps_interrupted(self) -> list[int]:
        """Mark every sweep still ``running`` as ``interrupted`` and return their ids.

        Sweeps run under the workspace lock, so one still running when the next starts (or
        when its own process is gone) was killed.
        """
        with self.transaction() as c:
            ids = [r[0] for r in c.execute("SELECT id FROM sweeps WHERE status='running'")]
            c.execute("UPDATE sweeps SET status='interrupted' WHERE status='running'")
        return ids

    def get_sweep(self, sweep_id: int | None = None) -> SweepRecord | None:
        """A sweep by id, or the latest one; None when there is none."""
        if sweep_id is None:
            row = self._conn.execute(self._SWEEP_SELECT + "ORDER BY id DESC LIMIT 1").fetchone()
        else:
            row = self._conn.execute(self._SWEEP_SELECT + "WHERE id = ?", (sweep_id,)).fetchone()
        return None if row is None else SweepRecord.from_row(*row)

    def sweep_ids(self, prep_hash: str | None = None) -> list[int]:
        """Ids of sweeps (of one prep, or all), newest first."""
        if prep_hash is None:
            rows = self._conn.execute("SELECT id FROM sweeps ORDER BY id DESC")
        else:
            rows = self._conn.execute(
                "SELECT id FROM sweeps WHERE prep_hash = ? ORDER BY id DESC", (prep_hash,)
            )
        return [r[0] for r in rows]

    def add_cell(
        self, sweep_id: int, cell: str, family: str, k: int, seed: int, metrics: dict[str, Any]
    ) -> None:
        """Record a finished cell (replacing an earlier record of the same cell)."""
        with self.transaction() as c:
            c.execute(
                "INSERT INTO cells(sweep_id, cell, family, k, seed, finished_at, metrics) "
                "VALUES (?,?,?,?,?,?,?) ON CONFLICT(sweep_id, cell) DO UPDATE SET "
                "finished_at=excluded.finished_at, metrics=excluded.metrics",
                (sweep_id, cell, family, k, seed, now_iso(), json.dumps(metrics)),
            )

    def cells(self, sweep_id: int) -> list[CellRecord]:
        """Every finished cell of a sweep, by family, K and seed."""
        return [
            CellRecord.from_row(*row)
            for row in self._conn.execute(
                "SELECT sweep_id, cell, family, k, seed, finished_at, metrics FROM cells "
                "WHERE sweep_id = ? ORDER BY family, k, seed",
                (sweep_id,),
            )
        ]

    def get_prep(self, prep_hash: str) -> PrepRecord | None:
        """A recorded prep by hash, or None."""
        row = self._conn.execute(
            "SELECT hash, created_at, info FROM preps WHERE hash = ?", (prep_hash,)
        ).fetchone()
        return None if row is None else PrepRecord.from_row(*row)
