"""What every part of the store shares: the connection, transactions and small helpers."""

from __future__ import annotations

import contextlib
import datetime as dt
import sqlite3
from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import Any

__all__ = ["PARAM_CHUNK", "StoreBase", "chunks", "now_iso"]

PARAM_CHUNK = 500  # stays below SQLite's bound-parameter limit with room to spare


def now_iso() -> str:
    """The current local time as an ISO 8601 string with offset, to the second."""
    return dt.datetime.now().astimezone().isoformat(timespec="seconds")


def chunks(items: Sequence[Any], size: int) -> Iterator[Sequence[Any]]:
    """Consecutive slices of ``items`` of at most ``size`` elements."""
    for i in range(0, len(items), size):
        yield items[i : i + size]


class StoreBase:
    """The connection and transactions; every table group's mixin builds on this."""

    def __init__(self, conn: sqlite3.Connection, path: Path) -> None:
        self._conn = conn
        self.path = path

    @contextlib.contextmanager
    def transaction(self) -> Iterator[sqlite3.Connection]:
        """A write transaction: committed when the block ends, rolled back if it raises."""
        self._conn.execute("BEGIN IMMEDIATE")
        try:
            yield self._conn
        except BaseException:
            self._conn.execute("ROLLBACK")
            raise
        else:
            self._conn.execute("COMMIT")
