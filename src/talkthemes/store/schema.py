"""The store's schema: the tables, forward-only migrations and the version check.

Each entry of ``_MIGRATIONS`` migrates the schema from version i to i + 1: a SQL script, or
a function of the connection when rows must be rewritten. All steps of one upgrade run in
one transaction; a store written by a newer talkthemes is refused.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from talkthemes.calls.model import StoredForm, Turn
from talkthemes.errors import StoreError

__all__ = ["SCHEMA_VERSION", "check_version", "connect", "migrate", "read_schema_version"]

Migration = str | Callable[[sqlite3.Connection], None]

# Each entry migrates the schema from version i to i + 1. Never edit a released entry:
# append a new one.
_MIGRATIONS: list[Migration] = [
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
    # 5: identity first: a text hash no longer unique; same-text pairs (see _identity_first)
    lambda conn: _identity_first(conn),
    # 6: curation: themes merged into others, and the log of every curation action (the
    # labels and notes already set are logged as set when they were last changed)
    """
    CREATE TABLE theme_merges (
        theme_id INTEGER PRIMARY KEY,
        into_id INTEGER NOT NULL,
        version INTEGER,
        merged_at TEXT NOT NULL
    );
    CREATE TABLE curation_log (
        id INTEGER PRIMARY KEY,
        at TEXT NOT NULL,
        action TEXT NOT NULL,
        theme_id INTEGER NOT NULL,
        version INTEGER,
        detail TEXT NOT NULL DEFAULT '{}'
    );
    CREATE INDEX curation_log_theme ON curation_log(theme_id);
    INSERT INTO curation_log(at, action, theme_id, detail)
        SELECT updated_at, 'label', theme_id, json_object('after', label) FROM labels
        WHERE label != '' ORDER BY theme_id;
    INSERT INTO curation_log(at, action, theme_id, detail)
        SELECT updated_at, 'note', theme_id, json_object('after', note) FROM labels
        WHERE note != '' ORDER BY theme_id;
    INSERT INTO curation_log(at, action, theme_id, detail)
        SELECT updated_at, 'not_a_theme', theme_id, '{}' FROM labels
        WHERE hidden != 0 ORDER BY theme_id;
    """,
    # 7: the HTTP service's access tokens (salted hashes only; see talkthemes.api.tokens)
    """
    CREATE TABLE tokens (
        id INTEGER PRIMARY KEY,
        name TEXT NOT NULL,
        key_id TEXT NOT NULL UNIQUE,
        scope TEXT NOT NULL CHECK (scope IN ('read', 'write')),
        salt BLOB NOT NULL,
        digest BLOB NOT NULL,
        kdf TEXT NOT NULL,
        created_at TEXT NOT NULL,
        revoked_at TEXT
    );
    CREATE UNIQUE INDEX tokens_active_name ON tokens(name) WHERE revoked_at IS NULL;
    """,
    # 8: each call's language: as detected, and in effect (given by the call's metadata, or
    # detected) with where it came from; NULL until the languages are settled
    """
    ALTER TABLE transcripts ADD COLUMN language_detected TEXT;
    ALTER TABLE transcripts ADD COLUMN language TEXT;
    ALTER TABLE transcripts ADD COLUMN language_source TEXT;
    CREATE INDEX transcripts_language ON transcripts(language);
    """,
]

SCHEMA_VERSION = len(_MIGRATIONS)


def connect(path: Path, *, readonly: bool) -> sqlite3.Connection:
    """A connection to the store file: explicit transactions only, foreign keys on, and
    (for writers) WAL journal with normal sync.

    Raises
    ------
    sqlite3.DatabaseError
        When the file is not a database (the caller names the file).
    """
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
    return conn


def read_schema_version(conn: sqlite3.Connection) -> int:
    """The schema version recorded in the store (0 for a new file)."""
    has_meta = conn.execute(
        "SELECT 1 FROM sqlite_master WHERE type='table' AND name='meta'"
    ).fetchone()
    if not has_meta:
        return 0
    row = conn.execute("SELECT value FROM meta WHERE key='schema_version'").fetchone()
    return int(row[0]) if row else 0


def check_version(conn: sqlite3.Connection, path: Path, supported: int) -> int:
    """The store's schema version, refusing one newer than ``supported``.

    Raises
    ------
    StoreError
        When the store was written by a newer talkthemes.
    """
    version = read_schema_version(conn)
    if version > supported:
        raise StoreError(
            f"{path}: store schema version {version} is newer than this talkthemes "
            f"understands ({supported}); upgrade talkthemes"
        )
    return version


def migrate(conn: sqlite3.Connection, path: Path, migrations: Sequence[Migration]) -> None:
    """Bring the schema up to ``len(migrations)`` in one transaction (nothing when current).

    Parameters
    ----------
    conn : sqlite3.Connection
        A writable connection with no transaction open.
    path : Path
        The store file, for messages.
    migrations : sequence
        The migration steps (``_MIGRATIONS``), each a SQL script or a function of the
        connection.
    """
    target_version = len(migrations)
    version = check_version(conn, path, target_version)
    if version == target_version:
        return
    # Foreign keys are off while tables are rebuilt (a dropped parent must not cascade into
    # its children) and checked before the upgrade commits; the pragma only takes effect
    # outside a transaction (SQLite, "ALTER TABLE": other kinds of schema changes).
    conn.execute("PRAGMA foreign_keys = OFF")
    conn.execute("BEGIN IMMEDIATE")
    try:
        conn.execute("CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)")
        version = check_version(conn, path, target_version)  # another process may have migrated
        for target in range(version, target_version):
            step = migrations[target]
            if callable(step):
                step(conn)
                continue
            for statement in _split_sql(step):
                conn.execute(statement)
        conn.execute(
            "INSERT INTO meta(key, value) VALUES('schema_version', ?) "
            "ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            (str(target_version),),
        )
        broken = conn.execute("PRAGMA foreign_key_check").fetchone()
        if broken is not None:
            raise StoreError(
                f"{path}: upgrading the store to schema version {target_version} would break a "
                f"reference ({broken[0]} row {broken[1]} -> {broken[2]}); nothing was changed"
            )
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    else:
        conn.execute("COMMIT")
    finally:
        conn.execute("PRAGMA foreign_keys = ON")


def _pack_turns(conn: sqlite3.Connection) -> None:
    """Migration 4: one ``turn_sets`` row per transcript instead of one ``turns`` row per turn.

    Storing a transcript's turns as one JSON text (``[[speaker, role, start, end, text],
    ...]``, the :class:`~talkthemes.calls.model.StoredForm`) with its turn counts per role
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


def _identity_first(conn: sqlite3.Connection) -> None:
    """Migration 5: two calls may have the same text; pairs with the same text are logged.

    The id is a call's identity, so ``transcripts.content_hash`` loses its UNIQUE
    constraint (an index keeps the look-up fast). SQLite cannot drop a constraint, so the
    table is rebuilt — same columns, same row ids, so ``turn_sets`` keeps pointing at the
    right rows. ``text_matches`` records each call whose text equals a stored call's: a
    likely re-export skipped or kept, or a different call with the same text.
    """
    conn.execute(
        """
        CREATE TABLE transcripts_v5 (
            id INTEGER PRIMARY KEY,
            tid TEXT NOT NULL UNIQUE,
            source TEXT NOT NULL,
            format TEXT NOT NULL,
            content_hash TEXT NOT NULL,
            n_turns INTEGER NOT NULL,
            n_words INTEGER NOT NULL,
            n_chars INTEGER NOT NULL,
            run_id INTEGER REFERENCES ingest_runs(id),
            added_at TEXT NOT NULL
        )
        """
    )
    conn.execute(
        "INSERT INTO transcripts_v5(id, tid, source, format, content_hash, n_turns, n_words, "
        "n_chars, run_id, added_at) SELECT id, tid, source, format, content_hash, n_turns, "
        "n_words, n_chars, run_id, added_at FROM transcripts"
    )
    conn.execute("DROP TABLE transcripts")
    conn.execute("ALTER TABLE transcripts_v5 RENAME TO transcripts")
    conn.execute("CREATE INDEX transcripts_content_hash ON transcripts(content_hash)")
    conn.execute(
        """
        CREATE TABLE text_matches (
            run_id INTEGER REFERENCES ingest_runs(id),
            tid TEXT NOT NULL,
            source TEXT NOT NULL,
            original TEXT NOT NULL,
            kind TEXT NOT NULL,
            reason TEXT NOT NULL
        )
        """
    )
