"""Ingest runs, rejects, transcripts with their turns, and metadata."""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from typing import Any

from talkthemes.ingest.model import ROLES, Reject, Transcript
from talkthemes.store._base import PARAM_CHUNK, StoreBase, chunks, now_iso

__all__ = ["AddOutcome", "StoredTurn", "TranscriptsMixin"]


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


class TranscriptsMixin(StoreBase):
    """Ingest runs, rejects, transcripts, turn sets and metadata."""

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
        for chunk in chunks(sorted(set(hashes)), PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, h, src in self._conn.execute(
                f"SELECT tid, content_hash, source FROM transcripts WHERE content_hash IN ({q})",
                chunk,
            ):
                by_hash[h] = (tid, src)
        tids = sorted({t.tid for t in batch})
        for chunk in chunks(tids, PARAM_CHUNK):
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
                for chunk in chunks(list(tids), PARAM_CHUNK)
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

    def turns_for(self, tids: Sequence[str]) -> list[tuple[str, list[tuple[str, str]]]]:
        """``(tid, [(role, text), ...])`` for the given stored transcripts, in the order
        given (ids not stored are left out)."""
        found: dict[str, list[tuple[str, str]]] = {}
        for chunk in chunks(list(dict.fromkeys(tids)), PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, packed in self._conn.execute(
                "SELECT t.tid, u.turns FROM turn_sets u JOIN transcripts t "
                f"ON t.id = u.transcript WHERE t.tid IN ({q})",
                chunk,
            ):
                found[tid] = [(u[1], u[4]) for u in json.loads(packed)]
        return [(t, found[t]) for t in dict.fromkeys(tids) if t in found]
