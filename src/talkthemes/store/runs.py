"""Ingest runs, their rejects and same-text pairs, and the summary ``status`` shows."""

from __future__ import annotations

import json
from collections.abc import Iterable, Sequence

from talkthemes.calls.identity import KEPT, SAME_TEXT, SKIPPED
from talkthemes.calls.model import ROLES, Reject
from talkthemes.store._base import StoreBase, now_iso
from talkthemes.store.records import (
    LikelyReexports,
    MetadataField,
    ReadOnlyDict,
    ReexportPair,
    StoreSummary,
    TextMatch,
)

__all__ = ["IngestRunsMixin"]

#: Same-text pairs listed in the summary.
SUMMARY_PAIRS = 5


class IngestRunsMixin(StoreBase):
    """Ingest runs, rejects, same-text pairs and the summary of what is stored."""

    # -- ingest runs -------------------------------------------------------------
    def start_ingest_run(self, paths: Sequence[str]) -> int:
        """Record the start of an ingest run and return its id.

        A run still marked ``running`` is marked ``interrupted`` first: ingest holds the
        workspace lock, so a run still running when the next starts was killed.
        """
        with self.transaction() as c:
            c.execute("UPDATE ingest_runs SET status='interrupted' WHERE status='running'")
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

    def add_text_matches(self, run_id: int | None, matches: Iterable[TextMatch]) -> None:
        """Log same-text pairs (also done by :meth:`add_transcripts` for its batch)."""
        rows = [(run_id, m.tid, m.source, m.original, m.kind, m.reason) for m in matches]
        if rows:
            with self.transaction() as c:
                c.executemany(_INSERT_MATCH, rows)

    def text_matches(self, limit: int | None = None) -> list[TextMatch]:
        """Logged same-text pairs, oldest first."""
        sql = "SELECT tid, source, original, kind, reason FROM text_matches ORDER BY rowid"
        if limit is not None:
            sql += f" LIMIT {int(limit)}"
        return [TextMatch(*row) for row in self._conn.execute(sql)]

    def _same_text_counts(self) -> tuple[LikelyReexports, int]:
        """Likely re-exports (with the first few pairs), and pairs of calls with the same
        text."""
        counts = dict(self._conn.execute("SELECT kind, COUNT(*) FROM text_matches GROUP BY kind"))
        first = tuple(
            ReexportPair(tid, orig, kind == KEPT)
            for tid, orig, kind in self._conn.execute(
                "SELECT tid, original, kind FROM text_matches WHERE kind IN (?, ?) "
                "ORDER BY rowid LIMIT ?",
                (SKIPPED, KEPT, SUMMARY_PAIRS),
            )
        )
        skipped, kept = int(counts.get(SKIPPED, 0)), int(counts.get(KEPT, 0))
        return (
            LikelyReexports(count=skipped + kept, skipped=skipped, kept=kept, first=first),
            int(counts.get(SAME_TEXT, 0)),
        )

    # -- summaries -----------------------------------------------------------------
    def summary(self) -> StoreSummary:
        """Counts for ``status``: by format, role, month and metadata field; date range;
        unfinished ingest runs; likely re-exports (count and the first few pairs)."""
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
        fields: dict[str, MetadataField] = {}
        for key, count, distinct in c.execute(
            "SELECT m.key, COUNT(*), COUNT(DISTINCT m.value) FROM metadata m "
            "JOIN transcripts t ON t.tid = m.tid GROUP BY m.key ORDER BY m.key"
        ):
            top = c.execute(
                "SELECT m.value, COUNT(*) AS n FROM metadata m JOIN transcripts t ON t.tid = m.tid "
                "WHERE m.key = ? GROUP BY m.value ORDER BY n DESC, m.value LIMIT 5",
                (key,),
            ).fetchall()
            fields[key] = MetadataField(count, distinct, ReadOnlyDict(top))
        unmatched = c.execute(
            "SELECT COUNT(DISTINCT tid) FROM metadata "
            "WHERE tid NOT IN (SELECT tid FROM transcripts)"
        ).fetchone()[0]
        runs = c.execute("SELECT COUNT(*) FROM ingest_runs").fetchone()
        # runs that did not finish since the last one that did (a later run finishes them)
        (unfinished,) = c.execute(
            "SELECT COUNT(*) FROM ingest_runs WHERE status IN ('running', 'interrupted') "
            "AND id > (SELECT COALESCE(MAX(id), 0) FROM ingest_runs WHERE status = 'done')"
        ).fetchone()
        rejects = c.execute("SELECT COUNT(*) FROM rejects").fetchone()[0]
        reexports, same_text = self._same_text_counts()
        return StoreSummary(
            transcripts=int(n),
            words=int(words),
            by_format=ReadOnlyDict(by_format),
            turns_by_role=ReadOnlyDict(turns_by_role),
            transcripts_with_role=ReadOnlyDict(transcripts_by_role),
            by_month=ReadOnlyDict(by_month),
            date_range=(first, last) if first else None,
            metadata_fields=ReadOnlyDict(fields),
            manifest_rows_without_transcript=int(unmatched),
            ingest_runs=int(runs[0] or 0),
            interrupted_ingest_runs=int(unfinished),
            rejected_inputs=int(rejects),
            likely_reexports=reexports,
            same_text_pairs=same_text,
        )


_INSERT_MATCH = (
    "INSERT INTO text_matches(run_id, tid, source, original, kind, reason) VALUES (?,?,?,?,?,?)"
)
