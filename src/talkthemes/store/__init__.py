"""The embedded store: every SQL statement of talkthemes lives in this package.

SQLite in WAL mode (readers never block the single writer), with a schema version and
forward-only migrations (:mod:`talkthemes.store.schema`). Callers see plain Python values
and the frozen records of :mod:`talkthemes.store.records`, never SQL, so a server database
could replace SQLite later without touching them. :class:`Store` is composed of one mixin
per group of tables: :mod:`~talkthemes.store.runs` (ingest runs, rejects, same-text
pairs, the summary), :mod:`~talkthemes.store.transcripts` (transcripts, turns, metadata),
:mod:`~talkthemes.store.languages` (each call's language),
:mod:`~talkthemes.store.sweeps` (preps, sweeps, cells), :mod:`~talkthemes.store.versions`
(versions, themes, labels, retired themes), :mod:`~talkthemes.store.refreshes` and
:mod:`~talkthemes.store.curation` (merges and the curation log) and
:mod:`~talkthemes.store.tokens` (the HTTP service's access tokens).
"""

from __future__ import annotations

import sqlite3
from pathlib import Path

from talkthemes.errors import StoreError
from talkthemes.store._base import now_iso
from talkthemes.store.curation import CurationMixin
from talkthemes.store.languages import LanguagesMixin
from talkthemes.store.records import StoredTurn, TextMatch
from talkthemes.store.refreshes import RefreshesMixin
from talkthemes.store.runs import IngestRunsMixin
from talkthemes.store.schema import _MIGRATIONS, SCHEMA_VERSION, check_version, connect, migrate
from talkthemes.store.schema import read_schema_version as _read_schema_version
from talkthemes.store.sweeps import SweepsMixin
from talkthemes.store.tokens import TokensMixin
from talkthemes.store.transcripts import AddOutcome, TranscriptsMixin
from talkthemes.store.versions import VersionsMixin

__all__ = ["SCHEMA_VERSION", "AddOutcome", "Store", "StoredTurn", "TextMatch", "now_iso"]


class Store(
    IngestRunsMixin,
    TranscriptsMixin,
    LanguagesMixin,
    SweepsMixin,
    VersionsMixin,
    RefreshesMixin,
    CurationMixin,
    TokensMixin,
):
    """The SQLite store of a workspace. Open with :meth:`Store.open`."""

    # -- opening ---------------------------------------------------------------
    @classmethod
    def open(cls, path: str | Path, *, readonly: bool = False) -> Store:
        """Open (creating and migrating unless ``readonly``) the store at ``path``.

        Raises
        ------
        StoreError
            When the file is not a database, or was written by a newer talkthemes.
        """
        path = Path(path)
        try:
            store = cls(connect(path, readonly=readonly), path)
            if not readonly:
                store._migrate()
            else:
                store._check_version()
            return store
        except sqlite3.DatabaseError as exc:
            raise StoreError(f"{path}: cannot open the store: {exc}") from None

    def close(self) -> None:
        """Close the connection."""
        self._conn.close()

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def schema_version(self) -> int:
        """The schema version recorded in the store (0 for a new file)."""
        return _read_schema_version(self._conn)

    # The migration list and version are read from this module's namespace when a store
    # opens, so a test can stand in an older schema by replacing them here.
    def _check_version(self) -> int:
        return check_version(self._conn, self.path, SCHEMA_VERSION)

    def _migrate(self) -> None:
        migrate(self._conn, self.path, _MIGRATIONS[:SCHEMA_VERSION])

    def integrity_problems(self) -> list[str]:
        """SQLite's integrity and foreign-key checks; empty when the store is sound."""
        problems = [str(r[0]) for r in self._conn.execute("PRAGMA integrity_check") if r[0] != "ok"]
        problems += [
            f"foreign key: {table} row {rowid} -> {parent}"
            for table, rowid, parent, _ in self._conn.execute("PRAGMA foreign_key_check")
        ]
        return problems
