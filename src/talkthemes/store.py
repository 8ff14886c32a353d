"""The embedded store: every SQL statement of talkthemes lives in this module.

SQLite in WAL mode (readers never block the single writer), with a schema version and
forward-only migrations. Callers see plain Python values and dataclasses, never SQL, so a
server database could replace SQLite later without touching them.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import hashlib
import json
import sqlite3
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from talkthemes.errors import StoreError
from talkthemes.ingest.model import ROLES, Reject, StoredForm, Transcript, Turn

__all__ = ["SCHEMA_VERSION", "Store", "StoredTurn", "now_iso"]

# Each entry migrates the schema from version i to i + 1. Never edit a released entry:
# append a new one.
_MIGRATIONS: list[str | Callable[[sqlite3.Connection], None]] = [
    # 1: transcripts, turns, metadata, ingest runs, rejects, preps
    """
    CREATE TABLE ingest_runs (
        id INTEGER PRIMARY KEY,
        started_at TEXT NOT NULL,
        finished_at TEXT,
        paths TEXT NOT NULL,
        added INTEGER NOT NULL DEFAULT 0,
        unchanged INTEGER NOT NULL DEFAULT 0,
        duplicate INTEGER NOT NULL DEFAULT 0,
        rejected INTEGER NOT NULL DEFAULT 0,
        status TEXT NOT NULL DEFAULT 'running'
    );
    CREATE TABLE transcripts (
        id INTEGER PRIMARY KEY,
        tid TEXT NOT NULL UNIQUE,
        source TEXT NOT NULL,
        format TEXT NOT NULL,
        content_hash TEXT NOT NULL UNIQUE,
        n_turns INTEGER NOT NULL,
        n_words INTEGER NOT NULL,
        n_chars INTEGER NOT NULL,
        run_id INTEGER REFERENCES ingest_runs(id),
        added_at TEXT NOT NULL
    );
    CREATE TABLE turns (
        transcript INTEGER NOT NULL REFERENCES transcripts(id) ON DELETE CASCADE,
        seq INTEGER NOT NULL,
        speaker TEXT NOT NULL,
        role TEXT NOT NULL,
        start REAL,
        "end" REAL,
        text TEXT NOT NULL,
        PRIMARY KEY (transcript, seq)
    ) WITHOUT ROWID;
    CREATE TABLE metadata (
        tid TEXT NOT NULL,
        key TEXT NOT NULL,
        value TEXT NOT NULL,
        origin TEXT NOT NULL,
        PRIMARY KEY (tid, key)
    ) WITHOUT ROWID;
    CREATE INDEX metadata_key ON metadata(key, value);
    CREATE TABLE rejects (
        run_id INTEGER NOT NULL REFERENCES ingest_runs(id),
        source TEXT NOT NULL,
        row INTEGER,
        format TEXT NOT NULL,
        reason TEXT NOT NULL
    );
    CREATE TABLE preps (
        hash TEXT PRIMARY KEY,
        created_at TEXT NOT NULL,
        info TEXT NOT NULL,
        current INTEGER NOT NULL DEFAULT 0
    );
    CREATE TABLE sweeps (
        id INTEGER PRIMARY KEY,
        prep_hash TEXT NOT NULL,
        created_at TEXT NOT NULL,
        finished_at TEXT,
        status TEXT NOT NULL DEFAULT 'running',
        info TEXT NOT NULL DEFAULT '{}'
    );
    CREATE TABLE versions (
        n INTEGER PRIMARY KEY,
        created_at TEXT NOT NULL,
        current INTEGER NOT NULL DEFAULT 0,
        info TEXT NOT NULL DEFAULT '{}'
    );
    """,
    # 2: sweep cells, themes of each version, labels (per theme id, across versions)
    """
    CREATE TABLE cells (
        sweep_id INTEGER NOT NULL REFERENCES sweeps(id),
        cell TEXT NOT NULL,
        family TEXT NOT NULL,
        k INTEGER NOT NULL,
        seed INTEGER NOT NULL,
        finished_at TEXT NOT NULL,
        metrics TEXT NOT NULL,
        PRIMARY KEY (sweep_id, cell)
    ) WITHOUT ROWID;
    CREATE TABLE themes (
        version INTEGER NOT NULL REFERENCES versions(n),
        theme_id INTEGER NOT NULL,
        position INTEGER NOT NULL,
        status TEXT NOT NULL,
        info TEXT NOT NULL DEFAULT '{}',
        PRIMARY KEY (version, theme_id)
    ) WITHOUT ROWID;
    CREATE TABLE labels (
        theme_id INTEGER PRIMARY KEY,
        label TEXT NOT NULL DEFAULT '',
        note TEXT NOT NULL DEFAULT '',
        hidden INTEGER NOT NULL DEFAULT 0,
        updated_at TEXT NOT NULL
    );
    CREATE TABLE theme_ids (next INTEGER NOT NULL);
    INSERT INTO theme_ids(next) VALUES (1);
    """,
    # 3: the refresh log, and the themes each version retired
    """
    CREATE TABLE refreshes (
        id INTEGER PRIMARY KEY,
        started_at TEXT NOT NULL,
        finished_at TEXT,
        status TEXT NOT NULL DEFAULT 'running',
        previous_version INTEGER,
        version INTEGER,
        info TEXT NOT NULL DEFAULT '{}'
    );
    CREATE TABLE retired_themes (
        version INTEGER NOT NULL REFERENCES versions(n),
        theme_id INTEGER NOT NULL,
        info TEXT NOT NULL DEFAULT '{}',
        PRIMARY KEY (version, theme_id)
    ) WITHOUT ROWID;
    """,
    # 4: turns packed one row per transcript (see _pack_turns)
    lambda conn: _pack_turns(conn),
]

SCHEMA_VERSION = len(_MIGRATIONS)
_PARAM_CHUNK = 500  # stays below SQLite's bound-parameter limit with room to spare


def now_iso() -> str:
    """The current local time as an ISO 8601 string with offset, to the second."""
    return dt.datetime.now().astimezone().isoformat(timespec="seconds")


@dataclass(frozen=True, slots=True)
class StoredTurn:
    """A turn as stored: position, speaker label, role, times and text."""

    seq: int
    speaker: str
    role: str
    start: float | None
    end: float | None
    text: str


@dataclass(slots=True)
class AddOutcome:
    """What happened to each transcript offered to :meth:`Store.add_transcripts`."""

    added: list[Transcript]
    unchanged: list[Transcript]
    duplicates: list[tuple[Transcript, str]]  # (transcript, id of the stored original)
    rejects: list[Reject]


class Store:
    """The SQLite store of a workspace. Open with :meth:`Store.open`."""

    def __init__(self, conn: sqlite3.Connection, path: Path) -> None:
        self._conn = conn
        self.path = path

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
            if readonly:
                conn = sqlite3.connect(
                    f"file:{path}?mode=ro", uri=True, timeout=30, check_same_thread=False
                )
            else:
                conn = sqlite3.connect(path, timeout=30, check_same_thread=False)
            conn.isolation_level = None  # explicit transactions only
            conn.execute("PRAGMA foreign_keys = ON")
            if not readonly:
                conn.execute("PRAGMA journal_mode = WAL")
                conn.execute("PRAGMA synchronous = NORMAL")
            store = cls(conn, path)
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
        has_meta = self._conn.execute(
            "SELECT 1 FROM sqlite_master WHERE type='table' AND name='meta'"
        ).fetchone()
        if not has_meta:
            return 0
        row = self._conn.execute("SELECT value FROM meta WHERE key='schema_version'").fetchone()
        return int(row[0]) if row else 0

    def _check_version(self) -> int:
        version = self.schema_version()
        if version > SCHEMA_VERSION:
            raise StoreError(
                f"{self.path}: store schema version {version} is newer than this talkthemes "
                f"understands ({SCHEMA_VERSION}); upgrade talkthemes"
            )
        return version

    def _migrate(self) -> None:
        version = self._check_version()
        if version == SCHEMA_VERSION:
            return
        with self.transaction():
            self._conn.execute(
                "CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)"
            )
            version = self._check_version()  # another process may have migrated meanwhile
            for target in range(version, SCHEMA_VERSION):
                step = _MIGRATIONS[target]
                if callable(step):
                    step(self._conn)
                    continue
                for statement in _split_sql(step):
                    self._conn.execute(statement)
            self._conn.execute(
                "INSERT INTO meta(key, value) VALUES('schema_version', ?) "
                "ON CONFLICT(key) DO UPDATE SET value = excluded.value",
                (str(SCHEMA_VERSION),),
            )

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

    # -- ingest runs -------------------------------------------------------------
    def start_ingest_run(self, paths: Sequence[str]) -> int:
        """Record the start of an ingest run and return its id."""
        with self.transaction() as c:
            cur = c.execute(
                "INSERT INTO ingest_runs(started_at, paths) VALUES (?, ?)",
                (now_iso(), json.dumps(list(paths))),
            )
            return int(cur.lastrowid)

    def finish_ingest_run(
        self, run_id: int, *, added: int, unchanged: int, duplicate: int, rejected: int
    ) -> None:
        """Record the totals of a finished ingest run."""
        with self.transaction() as c:
            c.execute(
                "UPDATE ingest_runs SET finished_at=?, added=?, unchanged=?, duplicate=?, "
                "rejected=?, status='done' WHERE id=?",
                (now_iso(), added, unchanged, duplicate, rejected, run_id),
            )

    def add_rejects(self, run_id: int, rejects: Iterable[Reject]) -> None:
        """Store rejected inputs of a run (kept for ``status`` and audits)."""
        rows = [(run_id, r.source, r.row, r.format, r.reason) for r in rejects]
        if not rows:
            return
        with self.transaction() as c:
            c.executemany(
                "INSERT INTO rejects(run_id, source, row, format, reason) VALUES (?,?,?,?,?)", rows
            )

    # -- transcripts -------------------------------------------------------------
    def add_transcripts(self, batch: Sequence[Transcript], run_id: int | None) -> AddOutcome:
        """Store a batch of transcripts in one transaction.

        A transcript whose normalised text is already stored under another id is a
        duplicate and is not stored; one already stored under the same id with the same
        text is unchanged; an id already stored with different text is rejected (stored
        data is never overwritten).

        Parameters
        ----------
        batch : sequence of Transcript
        run_id : int or None
            The ingest run adding them.

        Returns
        -------
        AddOutcome
        """
        outcome = AddOutcome([], [], [], [])
        if not batch:
            return outcome
        hashes = [t.content_hash() for t in batch]
        by_hash: dict[str, tuple[str, str]] = {}
        by_tid: dict[str, tuple[str, str]] = {}
        for chunk in _chunks(sorted(set(hashes)), _PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, h, src in self._conn.execute(
                f"SELECT tid, content_hash, source FROM transcripts WHERE content_hash IN ({q})",
                chunk,
            ):
                by_hash[h] = (tid, src)
        tids = sorted({t.tid for t in batch})
        for chunk in _chunks(tids, _PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, h, src in self._conn.execute(
                f"SELECT tid, content_hash, source FROM transcripts WHERE tid IN ({q})", chunk
            ):
                by_tid[tid] = (h, src)

        to_add: list[tuple[Transcript, str]] = []
        for t, h in zip(batch, hashes, strict=True):
            if t.tid in by_tid:
                stored_hash, stored_src = by_tid[t.tid]
                if stored_hash == h:
                    outcome.unchanged.append(t)
                else:
                    outcome.rejects.append(
                        Reject(
                            t.source,
                            f"transcript id {t.tid!r} is already stored (from {stored_src}) "
                            "with different text; stored data is never overwritten",
                            t.format,
                        )
                    )
                continue
            if h in by_hash:
                outcome.duplicates.append((t, by_hash[h][0]))
                continue
            by_hash[h] = (t.tid, t.source)
            by_tid[t.tid] = (h, t.source)
            to_add.append((t, h))

        if to_add:
            added_at = now_iso()
            with self.transaction() as c:
                # Inside BEGIN IMMEDIATE no other writer can run, so ids can be given here
                # and every row of the batch goes in with one executemany per table.
                (last,) = c.execute("SELECT COALESCE(MAX(id), 0) FROM transcripts").fetchone()
                rows, turn_rows, meta_rows = [], [], []
                for rowid, (t, h) in enumerate(to_add, start=int(last) + 1):
                    form = t.stored_form()
                    rows.append(
                        (
                            rowid,
                            t.tid,
                            t.source,
                            t.format,
                            h,
                            len(t.turns),
                            form.n_words,
                            form.n_chars,
                            run_id,
                            added_at,
                        )
                    )
                    turn_rows.append((rowid, *form.role_turns, form.turns_json))
                    meta_rows.extend((t.tid, k, v) for k, v in t.metadata.items())
                    outcome.added.append(t)
                c.executemany(
                    "INSERT INTO transcripts(id, tid, source, format, content_hash, n_turns, "
                    "n_words, n_chars, run_id, added_at) VALUES (?,?,?,?,?,?,?,?,?,?)",
                    rows,
                )
                c.executemany(
                    "INSERT INTO turn_sets(transcript, agent_turns, customer_turns, "
                    "unknown_turns, turns) VALUES (?,?,?,?,?)",
                    turn_rows,
                )
                if meta_rows:
                    c.executemany(
                        "INSERT INTO metadata(tid, key, value, origin) VALUES (?,?,?,'inline') "
                        "ON CONFLICT(tid, key) DO UPDATE SET value=excluded.value "
                        "WHERE metadata.origin = 'inline'",
                        meta_rows,
                    )
        return outcome

    def set_metadata(self, entries: dict[str, dict[str, str]], *, origin: str = "manifest") -> int:
        """Store metadata fields keyed by transcript id (a manifest's rows).

        Manifest values replace earlier values of the same field; rows may name
        transcripts that are not stored yet (they apply once those arrive).

        Returns
        -------
        int
            The number of (transcript, field) values written.
        """
        rows = [(tid, k, v, origin) for tid, fields in entries.items() for k, v in fields.items()]
        if not rows:
            return 0
        with self.transaction() as c:
            c.executemany(
                "INSERT INTO metadata(tid, key, value, origin) VALUES (?,?,?,?) "
                "ON CONFLICT(tid, key) DO UPDATE SET value=excluded.value, origin=excluded.origin",
                rows,
            )
        return len(rows)

    def count_transcripts(self) -> int:
        """Number of stored transcripts."""
        return int(self._conn.execute("SELECT COUNT(*) FROM transcripts").fetchone()[0])

    def transcript_ids(self) -> list[str]:
        """Every stored transcript id, in storage order."""
        return [r[0] for r in self._conn.execute("SELECT tid FROM transcripts ORDER BY id")]

    def corpus_fingerprint(self) -> str:
        """A hash over the set of stored transcripts (ids and content hashes)."""
        h = hashlib.sha256()
        for tid, ch in self._conn.execute("SELECT tid, content_hash FROM transcripts ORDER BY tid"):
            h.update(tid.encode("utf-8"))
            h.update(b"\0")
            h.update(ch.encode("ascii"))
            h.update(b"\n")
        return h.hexdigest()

    def iter_turn_batches(
        self, batch_size: int
    ) -> Iterator[list[tuple[str, list[tuple[str, str]]]]]:
        """Stream transcripts in storage order as batches of ``(tid, [(role, text), ...])``.

        Only one batch is held in memory at a time.
        """
        last = 0
        while True:
            ids = self._conn.execute(
                "SELECT id, tid FROM transcripts WHERE id > ? ORDER BY id LIMIT ?",
                (last, batch_size),
            ).fetchall()
            if not ids:
                return
            first, last = ids[0][0], ids[-1][0]
            turns: dict[int, list[tuple[str, str]]] = {i: [] for i, _ in ids}
            for tr, packed in self._conn.execute(
                "SELECT transcript, turns FROM turn_sets WHERE transcript BETWEEN ? AND ?",
                (first, last),
            ):
                turns[tr] = [(u[1], u[4]) for u in json.loads(packed)]
            yield [(tid, turns[i]) for i, tid in ids]

    def get_turns(self, tid: str) -> list[StoredTurn]:
        """The turns of one transcript, in order (empty when the id is unknown)."""
        row = self._conn.execute(
            "SELECT u.turns FROM turn_sets u JOIN transcripts t ON t.id = u.transcript "
            "WHERE t.tid = ?",
            (tid,),
        ).fetchone()
        if row is None:
            return []
        return [StoredTurn(i, *u) for i, u in enumerate(json.loads(row[0]))]

    def metadata_for(self, tids: Sequence[str] | None = None) -> dict[str, dict[str, str]]:
        """Metadata of stored transcripts (all of them, or those in ``tids``)."""
        out: dict[str, dict[str, str]] = {}
        sql = "SELECT m.tid, m.key, m.value FROM metadata m JOIN transcripts t ON t.tid = m.tid"
        if tids is None:
            rows: Iterable[tuple[str, str, str]] = self._conn.execute(sql)
        else:
            rows = (
                row
                for chunk in _chunks(list(tids), _PARAM_CHUNK)
                for row in self._conn.execute(
                    sql + f" WHERE m.tid IN ({','.join('?' * len(chunk))})", chunk
                )
            )
        for tid, key, value in rows:
            out.setdefault(tid, {})[key] = value
        return out

    # -- summaries -----------------------------------------------------------------
    def summary(self) -> dict[str, Any]:
        """Counts for ``status``: by format, role, month and metadata field; date range."""
        c = self._conn
        n, words = c.execute(
            "SELECT COUNT(*), COALESCE(SUM(n_words),0) FROM transcripts"
        ).fetchone()
        by_format = dict(
            c.execute("SELECT format, COUNT(*) FROM transcripts GROUP BY format ORDER BY format")
        )
        sums = c.execute(
            "SELECT COALESCE(SUM(agent_turns), 0), COALESCE(SUM(customer_turns), 0), "
            "COALESCE(SUM(unknown_turns), 0), COALESCE(SUM(agent_turns > 0), 0), "
            "COALESCE(SUM(customer_turns > 0), 0), COALESCE(SUM(unknown_turns > 0), 0) "
            "FROM turn_sets"
        ).fetchone()
        turns_by_role = {r: int(n) for r, n in zip(ROLES, sums[:3], strict=True) if n}
        transcripts_by_role = {r: int(n) for r, n in zip(ROLES, sums[3:], strict=True) if n}
        dated = (
            "SELECT m.value FROM metadata m JOIN transcripts t ON t.tid = m.tid WHERE m.key='date'"
        )
        by_month = dict(
            c.execute(
                f"SELECT substr(value, 1, 7) AS month, COUNT(*) FROM ({dated}) "
                "GROUP BY month ORDER BY month"
            )
        )
        first, last = c.execute(f"SELECT MIN(value), MAX(value) FROM ({dated})").fetchone()
        fields: dict[str, dict[str, Any]] = {}
        for key, count, distinct in c.execute(
            "SELECT m.key, COUNT(*), COUNT(DISTINCT m.value) FROM metadata m "
            "JOIN transcripts t ON t.tid = m.tid GROUP BY m.key ORDER BY m.key"
        ):
            top = c.execute(
                "SELECT m.value, COUNT(*) AS n FROM metadata m JOIN transcripts t ON t.tid = m.tid "
                "WHERE m.key = ? GROUP BY m.value ORDER BY n DESC, m.value LIMIT 5",
                (key,),
            ).fetchall()
            fields[key] = {
                "transcripts": count,
                "distinct": distinct,
                "top": {v: k for v, k in top},
            }
        unmatched = c.execute(
            "SELECT COUNT(DISTINCT tid) FROM metadata "
            "WHERE tid NOT IN (SELECT tid FROM transcripts)"
        ).fetchone()[0]
        runs = c.execute("SELECT COUNT(*), SUM(status='running') FROM ingest_runs").fetchone()
        rejects = c.execute("SELECT COUNT(*) FROM rejects").fetchone()[0]
        return {
            "transcripts": int(n),
            "words": int(words),
            "by_format": by_format,
            "turns_by_role": turns_by_role,
            "transcripts_with_role": transcripts_by_role,
            "by_month": by_month,
            "date_range": [first, last] if first else None,
            "metadata_fields": fields,
            "manifest_rows_without_transcript": int(unmatched),
            "ingest_runs": int(runs[0] or 0),
            "interrupted_ingest_runs": int(runs[1] or 0),
            "rejected_inputs": int(rejects),
        }

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

    def current_prep(self) -> dict[str, Any] | None:
        """The current prep's info (with ``hash`` and ``created_at``), or None."""
        row = self._conn.execute(
            "SELECT hash, created_at, info FROM preps WHERE current = 1"
        ).fetchone()
        if row is None:
            return None
        info = json.loads(row[2])
        info.setdefault("hash", row[0])
        info.setdefault("created_at", row[1])
        return info

    def stages(self) -> dict[str, Any]:
        """Where each later stage stands: current prep, latest sweep, current version."""
        prep = self.current_prep()
        sweep = self._conn.execute(
            "SELECT id, created_at, status FROM sweeps ORDER BY id DESC LIMIT 1"
        ).fetchone()
        version = self._conn.execute(
            "SELECT n, created_at FROM versions WHERE current = 1"
        ).fetchone()
        return {
            "prepared": None if prep is None else {"hash": prep["hash"], "at": prep["created_at"]},
            "swept": None
            if sweep is None
            else {"id": sweep[0], "at": sweep[1], "status": sweep[2]},
            "published": None if version is None else {"version": version[0], "at": version[1]},
        }

    # -- sweeps and cells ------------------------------------------------------------
    _SWEEP_SELECT = "SELECT id, prep_hash, created_at, finished_at, status, info FROM sweeps "

    @staticmethod
    def _sweep_record(row: tuple[Any, ...]) -> dict[str, Any]:
        """A sweeps row as one dict: its info, with the columns taking precedence."""
        sid, prep, created, finished, status, info = row
        return {
            **json.loads(info),
            "id": sid,
            "prep_hash": prep,
            "created_at": created,
            "finished_at": finished,
            "status": status,
        }

    def find_sweep(self, prep_hash: str, grid_key: str) -> dict[str, Any] | None:
        """The latest sweep of this prep with this grid (``info['grid_key']``), or None."""
        for row in self._conn.execute(
            self._SWEEP_SELECT + "WHERE prep_hash = ? ORDER BY id DESC", (prep_hash,)
        ):
            record = self._sweep_record(row)
            if record.get("grid_key") == grid_key:
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

    def get_sweep(self, sweep_id: int | None = None) -> dict[str, Any] | None:
        """A sweep by id, or the latest one; None when there is none."""
        if sweep_id is None:
            row = self._conn.execute(self._SWEEP_SELECT + "ORDER BY id DESC LIMIT 1").fetchone()
        else:
            row = self._conn.execute(self._SWEEP_SELECT + "WHERE id = ?", (sweep_id,)).fetchone()
        return None if row is None else self._sweep_record(row)

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

    def cells(self, sweep_id: int) -> list[dict[str, Any]]:
        """Every finished cell of a sweep: ``cell, family, k, seed`` and its metrics."""
        return [
            {"cell": cell, "family": fam, "k": k, "seed": seed, **json.loads(m)}
            for cell, fam, k, seed, m in self._conn.execute(
                "SELECT cell, family, k, seed, metrics FROM cells WHERE sweep_id = ? "
                "ORDER BY family, k, seed",
                (sweep_id,),
            )
        ]

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

    def current_version(self) -> dict[str, Any] | None:
        """The current version's record (``n``, ``created_at`` and its info), or None."""
        row = self._conn.execute(
            "SELECT n, created_at, info FROM versions WHERE current = 1"
        ).fetchone()
        if row is None:
            return None
        return {"n": row[0], "created_at": row[1], **json.loads(row[2])}

    def versions(self) -> list[dict[str, Any]]:
        """Every recorded version, oldest first."""
        return [
            {"n": n, "created_at": c, "current": bool(cur), **json.loads(info)}
            for n, c, cur, info in self._conn.execute(
                "SELECT n, created_at, current, info FROM versions ORDER BY n"
            )
        ]

    def themes(self, version: int) -> list[dict[str, Any]]:
        """Themes of a version, by position, with their label, note and hidden flag."""
        return [
            {
                "theme_id": tid,
                "position": pos,
                "status": status,
                "info": json.loads(info),
                "label": label or "",
                "note": note or "",
                "hidden": bool(hidden),
            }
            for tid, pos, status, info, label, note, hidden in self._conn.execute(
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
    ) -> dict[str, Any]:
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
        return {"theme_id": theme_id, "label": row[0], "note": row[1], "hidden": bool(row[2])}

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

    def retired_themes(self, version: int) -> list[dict[str, Any]]:
        """Themes that version ``version`` retired, with their label, note and hidden flag."""
        return [
            {
                "theme_id": tid,
                "info": json.loads(info),
                "label": label or "",
                "note": note or "",
                "hidden": bool(hidden),
            }
            for tid, info, label, note, hidden in self._conn.execute(
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

    def refreshes(self, limit: int | None = None) -> list[dict[str, Any]]:
        """The refresh log, newest first (``id, started_at, finished_at, status,
        previous_version, version`` and the summary)."""
        sql = (
            "SELECT id, started_at, finished_at, status, previous_version, version, info "
            "FROM refreshes ORDER BY id DESC"
        )
        params: tuple[int, ...] = ()
        if limit is not None:
            sql += " LIMIT ?"
            params = (int(limit),)
        return [
            {
                **json.loads(info),
                "id": rid,
                "started_at": started,
                "finished_at": finished,
                "status": status,
                "previous_version": prev,
                "version": version,
            }
            for rid, started, finished, status, prev, version, info in self._conn.execute(
                sql, params
            )
        ]

    def turns_for(self, tids: Sequence[str]) -> list[tuple[str, list[tuple[str, str]]]]:
        """``(tid, [(role, text), ...])`` for the given stored transcripts, in the order
        given (ids not stored are left out)."""
        found: dict[str, list[tuple[str, str]]] = {}
        for chunk in _chunks(list(dict.fromkeys(tids)), _PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, packed in self._conn.execute(
                "SELECT t.tid, u.turns FROM turn_sets u JOIN transcripts t "
                f"ON t.id = u.transcript WHERE t.tid IN ({q})",
                chunk,
            ):
                found[tid] = [(u[1], u[4]) for u in json.loads(packed)]
        return [(t, found[t]) for t in dict.fromkeys(tids) if t in found]

    def integrity_problems(self) -> list[str]:
        """SQLite's integrity and foreign-key checks; empty when the store is sound."""
        problems = [str(r[0]) for r in self._conn.execute("PRAGMA integrity_check") if r[0] != "ok"]
        problems += [
            f"foreign key: {table} row {rowid} -> {parent}"
            for table, rowid, parent, _ in self._conn.execute("PRAGMA foreign_key_check")
        ]
        return problems

    def get_prep(self, prep_hash: str) -> dict[str, Any] | None:
        """A recorded prep's info by hash, or None."""
        row = self._conn.execute(
            "SELECT hash, created_at, info FROM preps WHERE hash = ?", (prep_hash,)
        ).fetchone()
        if row is None:
            return None
        info = json.loads(row[2])
        info.setdefault("hash", row[0])
        info.setdefault("created_at", row[1])
        return info


def _chunks(items: Sequence[Any], size: int) -> Iterator[Sequence[Any]]:
    for i in range(0, len(items), size):
        yield items[i : i + size]


def _pack_turns(conn: sqlite3.Connection) -> None:
    """Migration 4: one ``turn_sets`` row per transcript instead of one ``turns`` row per turn.

    Storing a transcript's turns as one JSON text (``[[speaker, role, start, end, text],
    ...]``, the :class:`~talkthemes.ingest.model.StoredForm`) with its turn counts per role
    makes ingest write one row per transcript rather than about thirty, the largest cost of
    storing. Existing turns are copied over in transcript order, then the old table goes.
    """
    conn.execute(
        """
        CREATE TABLE turn_sets (
            transcript INTEGER PRIMARY KEY REFERENCES transcripts(id) ON DELETE CASCADE,
            agent_turns INTEGER NOT NULL,
            customer_turns INTEGER NOT NULL,
            unknown_turns INTEGER NOT NULL,
            turns TEXT NOT NULL
        )
        """
    )
    rows = conn.execute(
        'SELECT transcript, speaker, role, start, "end", text FROM turns ORDER BY transcript, seq'
    )
    batch: list[tuple[Any, ...]] = []
    current: int | None = None
    turns: list[Turn] = []

    def flush() -> None:
        if current is not None:
            form = StoredForm.of(turns)
            batch.append((current, *form.role_turns, form.turns_json))

    for transcript, speaker, role, start, end, text in rows:
        if transcript != current:
            flush()
            current, turns = transcript, []
            if len(batch) >= 1000:
                conn.executemany("INSERT INTO turn_sets VALUES (?,?,?,?,?)", batch)
                batch = []
        turns.append(Turn(speaker, role, text, start, end))
    flush()
    if batch:
        conn.executemany("INSERT INTO turn_sets VALUES (?,?,?,?,?)", batch)
    conn.execute("DROP TABLE turns")


def _split_sql(script: str) -> list[str]:
    return [s.strip() for s in script.split(";") if s.strip()]
