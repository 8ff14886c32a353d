"""Each call's language: detected, given by its metadata, and in effect.

``transcripts.language_detected`` is what the detector said (``und`` when it could not
decide, NULL until it ran); ``transcripts.language`` is the language in effect — the one a
``language`` (or ``lang``) metadata field gives when it names a language, else the detected
one — and ``language_source`` says which (``given``, ``detected`` or ``default``).
"""

from __future__ import annotations

import json
from collections.abc import Iterator, Mapping, Sequence

from talkthemes.store._base import PARAM_CHUNK, StoreBase, chunks

__all__ = ["LANGUAGE_KEYS", "LanguagesMixin", "language_clause"]

#: Metadata fields (compared lower-cased) that give a call's language.
LANGUAGE_KEYS = ("language", "lang")


def language_clause(languages: Sequence[str] | None) -> tuple[str, list[str]]:
    """A ``WHERE`` condition keeping calls in ``languages`` (or not settled yet), and its
    parameters; ``("1", [])`` when ``languages`` is None (every call)."""
    if languages is None:
        return "1", []
    marks = ",".join("?" * len(languages))
    return f"(language IN ({marks}) OR language IS NULL)", list(languages)


class LanguagesMixin(StoreBase):
    """The language columns of the transcripts."""

    def undetected_batches(self, batch_size: int) -> Iterator[list[tuple[int, list[str]]]]:
        """Calls not yet run through the detector, as batches of ``(row id, turn texts)``.

        Each batch is read after the previous one was handed back, so a caller may store
        its results between batches.
        """
        last = 0
        while True:
            rows = self._conn.execute(
                "SELECT t.id, u.turns FROM transcripts t JOIN turn_sets u "
                "ON u.transcript = t.id WHERE t.id > ? AND t.language_detected IS NULL "
                "ORDER BY t.id LIMIT ?",
                (last, batch_size),
            ).fetchall()
            if not rows:
                return
            last = rows[-1][0]
            yield [(rowid, [u[4] for u in json.loads(packed)]) for rowid, packed in rows]

    def count_undetected(self) -> int:
        """Calls not yet run through the detector."""
        (n,) = self._conn.execute(
            "SELECT COUNT(*) FROM transcripts WHERE language_detected IS NULL"
        ).fetchone()
        return int(n)

    def set_detected_languages(self, rows: Sequence[tuple[int, str]]) -> None:
        """Record the detector's verdict, ``(row id, code)`` per call."""
        with self.transaction() as c:
            c.executemany(
                "UPDATE transcripts SET language_detected = ? WHERE id = ?",
                [(code, rowid) for rowid, code in rows],
            )

    def given_language_values(self) -> dict[str, int]:
        """Each distinct value of a language metadata field, with its number of calls."""
        keys = ",".join("?" * len(LANGUAGE_KEYS))
        return {
            str(v): int(n)
            for v, n in self._conn.execute(
                f"SELECT value, COUNT(*) FROM metadata WHERE lower(key) IN ({keys}) GROUP BY value",
                LANGUAGE_KEYS,
            )
        }

    def apply_languages(self, given: Mapping[str, str], *, default: str | None) -> None:
        """Set every call's language in effect (recomputed only where it can change: calls
        not settled, given or defaulted, and calls with a language field).

        Parameters
        ----------
        given : mapping
            Metadata value → language code, for the values that name a language.
        default : str or None
            The language of a call neither given nor detected (detection off); None
            leaves such a call unsettled.
        """
        keys = ",".join("?" * len(LANGUAGE_KEYS))
        with self.transaction() as c:
            c.execute(
                "CREATE TEMP TABLE IF NOT EXISTS given_codes (value TEXT PRIMARY KEY, code TEXT)"
            )
            c.execute("DELETE FROM given_codes")
            c.executemany("INSERT INTO given_codes VALUES (?, ?)", list(given.items()))
            pick = (
                "(SELECT g.code FROM metadata m JOIN given_codes g ON g.value = m.value "
                f"WHERE m.tid = transcripts.tid AND lower(m.key) IN ({keys}) "
                "ORDER BY m.key LIMIT 1)"
            )
            c.execute(
                f"UPDATE transcripts SET language = COALESCE({pick}, language_detected, ?), "
                f"language_source = CASE WHEN {pick} IS NOT NULL THEN 'given' "
                "WHEN language_detected IS NOT NULL THEN 'detected' "
                "WHEN ? IS NOT NULL THEN 'default' END "
                # a call detected and given nothing keeps its language: only the others
                "WHERE language IS NULL OR language_source IS NOT 'detected' OR tid IN "
                f"(SELECT tid FROM metadata WHERE lower(key) IN ({keys}))",
                [*LANGUAGE_KEYS, default, *LANGUAGE_KEYS, default, *LANGUAGE_KEYS],
            )
            c.execute("DROP TABLE given_codes")

    def language_counts(self) -> dict[tuple[str | None, str | None], int]:
        """Calls per (language in effect, where it came from); NULL while unsettled."""
        return {
            (lang, source): int(n)
            for lang, source, n in self._conn.execute(
                "SELECT language, language_source, COUNT(*) FROM transcripts "
                "GROUP BY language, language_source"
            )
        }

    def languages_of(self, tids: Sequence[str]) -> dict[str, str | None]:
        """The language in effect of each of ``tids`` that is stored."""
        out: dict[str, str | None] = {}
        for chunk in chunks(list(dict.fromkeys(tids)), PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, lang in self._conn.execute(
                f"SELECT tid, language FROM transcripts WHERE tid IN ({q})", chunk
            ):
                out[tid] = lang
        return out

    def copy_language_from(self, source: str, code: str, run_id: int) -> tuple[int, int]:
        """Make this store's calls those of ``source`` (another store file) in ``code``.

        Calls of ``code`` that this store lacks are copied (text, turns, languages; their
        ingest run here is ``run_id``); calls this store holds that ``source`` no longer
        has in ``code`` are removed (their language was corrected); the metadata of every
        call held is made equal to ``source``'s. This store is a language lane: a copy, so
        nothing is lost by removing a call from it.

        Returns
        -------
        (int, int)
            Calls added and removed.
        """
        self._conn.execute("ATTACH DATABASE ? AS src", (source,))
        try:
            with self.transaction() as c:
                (before,) = c.execute("SELECT COUNT(*) FROM transcripts").fetchone()
                c.execute(
                    "DELETE FROM transcripts WHERE tid NOT IN "
                    "(SELECT tid FROM src.transcripts WHERE language = ?)",
                    (code,),
                )
                (kept,) = c.execute("SELECT COUNT(*) FROM transcripts").fetchone()
                c.execute(
                    "INSERT INTO transcripts(tid, source, format, content_hash, n_turns, "
                    "n_words, n_chars, run_id, added_at, language_detected, language, "
                    "language_source) SELECT s.tid, s.source, s.format, s.content_hash, "
                    "s.n_turns, s.n_words, s.n_chars, ?, s.added_at, s.language_detected, "
                    "s.language, s.language_source FROM src.transcripts s WHERE s.language = ? "
                    "AND NOT EXISTS (SELECT 1 FROM transcripts t WHERE t.tid = s.tid) "
                    "ORDER BY s.id",
                    (run_id, code),
                )
                c.execute(
                    "INSERT INTO turn_sets(transcript, agent_turns, customer_turns, "
                    "unknown_turns, turns) SELECT t.id, u.agent_turns, u.customer_turns, "
                    "u.unknown_turns, u.turns FROM transcripts t "
                    "JOIN src.transcripts s ON s.tid = t.tid "
                    "JOIN src.turn_sets u ON u.transcript = s.id WHERE t.run_id = ?",
                    (run_id,),
                )
                (after,) = c.execute("SELECT COUNT(*) FROM transcripts").fetchone()
                c.execute("DELETE FROM metadata")
                c.execute(
                    "INSERT INTO metadata(tid, key, value, origin) SELECT m.tid, m.key, "
                    "m.value, m.origin FROM src.metadata m "
                    "WHERE m.tid IN (SELECT tid FROM transcripts)"
                )
        finally:
            self._conn.execute("DETACH DATABASE src")
        return int(after) - int(kept), int(before) - int(kept)
