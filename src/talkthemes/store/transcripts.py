"""Transcripts with their turns, and metadata."""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass, field

from talkthemes.calls.identity import SAME_TEXT, SKIPPED, ReexportRule
from talkthemes.calls.model import Reject, Transcript
from talkthemes.store._base import PARAM_CHUNK, StoreBase, chunks, now_iso
from talkthemes.store.languages import language_clause
from talkthemes.store.records import StoredTurn, TextMatch

DEFAULT_RULE = ReexportRule()

__all__ = ["DEFAULT_RULE", "AddOutcome", "TranscriptsMixin"]


@dataclass(slots=True)
class AddOutcome:
    """What happened to each transcript offered to :meth:`Store.add_transcripts`."""

    added: list[Transcript]
    unchanged: list[Transcript]
    duplicates: list[tuple[Transcript, str]]  # likely re-exports skipped: (call, original id)
    rejects: list[Reject]
    same_text: list[TextMatch]  # every call whose text equals a stored call's, however judged


@dataclass(slots=True)
class _SameText:
    """Stored (and batch) ids per text hash, and the metadata to judge same-text pairs."""

    originals: dict[str, list[str]] = field(default_factory=dict)
    wanted: set[str] = field(default_factory=set)  # hashes met more than once
    meta: dict[str, dict[str, str]] = field(default_factory=dict)

    def judge(self, t: Transcript, h: str, rule: ReexportRule) -> TextMatch:
        """The first stored call with ``t``'s text that ``t`` is a likely re-export of, else
        the first one (then the two are different calls)."""
        mine = self.meta.get(t.tid, t.metadata)
        n_words = t.stored_form().n_words
        first: TextMatch | None = None
        for original in self.originals[h]:
            kind, why = rule.judge(n_words, mine, self.meta.get(original, {}))
            match = TextMatch(t.tid, t.source, original, kind, why)
            if kind != SAME_TEXT:
                return match
            first = first or match
        assert first is not None  # originals[h] is never empty
        return first


class TranscriptsMixin(StoreBase):
    """Transcripts, turn sets and metadata."""

    # -- transcripts -------------------------------------------------------------
    def add_transcripts(
        self,
        batch: Sequence[Transcript],
        run_id: int | None,
        *,
        rule: ReexportRule = DEFAULT_RULE,
    ) -> AddOutcome:
        """Store a batch of transcripts in one transaction; the id is a call's identity.

        A transcript whose id is already stored is unchanged when its text is the same, and
        rejected when it differs (stored data is never overwritten). A transcript with a
        new id whose normalised text equals a stored one's (or an earlier one's in the
        batch) is judged by ``rule``: a likely re-export is skipped or kept as the rule
        says; any other is a different call with the same text and is stored. Every such
        pair is logged (:meth:`text_matches`) and returned.

        Parameters
        ----------
        batch : sequence of Transcript
        run_id : int or None
            The ingest run adding them.
        rule : ReexportRule
            When the same text is a likely re-export, and what to do with one.

        Returns
        -------
        AddOutcome
        """
        outcome = AddOutcome([], [], [], [], [])
        if not batch:
            return outcome
        hashes = [t.content_hash() for t in batch]
        by_tid: dict[str, tuple[str, str]] = {}
        for chunk in chunks(sorted({t.tid for t in batch}), PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, h, src in self._conn.execute(
                f"SELECT tid, content_hash, source FROM transcripts WHERE tid IN ({q})", chunk
            ):
                by_tid[tid] = (h, src)
        same = self._same_text_candidates(batch, hashes, by_tid)

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
            if h in same.originals:
                match = same.judge(t, h, rule)
                outcome.same_text.append(match)
                if match.kind == SKIPPED:
                    outcome.duplicates.append((t, match.original))
                    continue
            if h in same.wanted:
                same.originals.setdefault(h, []).append(t.tid)
            by_tid[t.tid] = (h, t.source)
            to_add.append((t, h))
        if to_add or outcome.same_text:
            self._insert(to_add, run_id, outcome)
        return outcome

    def _same_text_candidates(
        self, batch: Sequence[Transcript], hashes: list[str], by_tid: dict[str, tuple[str, str]]
    ) -> _SameText:
        """The stored ids of each batch text that is stored already or repeats within the
        batch, and the metadata needed to judge them (usually nothing: one query)."""
        same = _SameText()
        for chunk in chunks(sorted(set(hashes)), PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, h in self._conn.execute(
                f"SELECT tid, content_hash FROM transcripts WHERE content_hash IN ({q}) "
                "ORDER BY id",
                chunk,
            ):
                same.originals.setdefault(h, []).append(tid)
        new = [(t, h) for t, h in zip(batch, hashes, strict=True) if t.tid not in by_tid]
        seen: set[str] = set()
        for _, h in new:
            if h in seen or h in same.originals:
                same.wanted.add(h)
            seen.add(h)
        if not same.wanted:
            return same
        tids = {tid for h in same.wanted for tid in same.originals.get(h, ())}
        tids |= {t.tid for t, h in new if h in same.wanted}
        stored = self.metadata_values(sorted(tids))
        for t, h in new:
            if h in same.wanted and t.tid not in same.meta:
                # manifest values already stored for a new id win over the call's own
                same.meta[t.tid] = {**t.metadata, **stored.get(t.tid, {})}
        for tid, fields in stored.items():
            same.meta.setdefault(tid, fields)
        return same

    def _insert(
        self, to_add: list[tuple[Transcript, str]], run_id: int | None, outcome: AddOutcome
    ) -> None:
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
            if outcome.same_text:
                c.executemany(
                    "INSERT INTO text_matches(run_id, tid, source, original, kind, reason) "
                    "VALUES (?,?,?,?,?,?)",
                    [(run_id, m.tid, m.source, m.original, m.kind, m.reason)
                     for m in outcome.same_text],
                )  # fmt: skip

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

    def count_transcripts(self, languages: Sequence[str] | None = None) -> int:
        """Number of stored transcripts (in ``languages`` or unsettled, when given)."""
        where, args = language_clause(languages)
        sql = f"SELECT COUNT(*) FROM transcripts WHERE {where}"
        return int(self._conn.execute(sql, args).fetchone()[0])

    def transcript_ids(self, languages: Sequence[str] | None = None) -> list[str]:
        """Every stored transcript id (in ``languages`` or unsettled), in storage order."""
        where, args = language_clause(languages)
        sql = f"SELECT tid FROM transcripts WHERE {where} ORDER BY id"
        return [r[0] for r in self._conn.execute(sql, args)]

    def corpus_fingerprint(self, languages: Sequence[str] | None = None) -> str:
        """A hash over the set of stored transcripts (ids and content hashes), of
        ``languages`` (and unsettled calls) when given."""
        where, args = language_clause(languages)
        h = hashlib.sha256()
        sql = f"SELECT tid, content_hash FROM transcripts WHERE {where} ORDER BY tid"
        for tid, ch in self._conn.execute(sql, args):
            h.update(tid.encode("utf-8"))
            h.update(b"\0")
            h.update(ch.encode("ascii"))
            h.update(b"\n")
        return h.hexdigest()

    def iter_turn_batches(
        self,
        batch_size: int,
        *,
        speakers: bool = False,
        languages: Sequence[str] | None = None,
    ) -> Iterator[list[tuple[str, list[tuple[str, ...]]]]]:
        """Stream transcripts in storage order as batches of ``(tid, [(role, text), ...])``
        (``(role, text, speaker label)`` with ``speakers=True``); only those in
        ``languages`` (or unsettled) when given.

        Only one batch is held in memory at a time.
        """
        where, args = language_clause(languages)
        last = 0
        while True:
            ids = self._conn.execute(
                f"SELECT id, tid FROM transcripts WHERE id > ? AND {where} ORDER BY id LIMIT ?",
                (last, *args, batch_size),
            ).fetchall()
            if not ids:
                return
            first, last = ids[0][0], ids[-1][0]
            turns: dict[int, list[tuple[str, ...]]] = {i: [] for i, _ in ids}
            for tr, packed in self._conn.execute(
                "SELECT transcript, turns FROM turn_sets WHERE transcript BETWEEN ? AND ?",
                (first, last),
            ):
                if tr not in turns:  # a call between the batch's ids in another language
                    continue
                units = json.loads(packed)
                turns[tr] = (
                    [(u[1], u[4], u[0]) for u in units]
                    if speakers
                    else [(u[1], u[4]) for u in units]
                )
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

    def stored_ids(self, tids: Sequence[str]) -> set[str]:
        """Those of ``tids`` that have a stored transcript."""
        found: set[str] = set()
        for chunk in chunks(list(dict.fromkeys(tids)), PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            found.update(
                r[0]
                for r in self._conn.execute(
                    f"SELECT tid FROM transcripts WHERE tid IN ({q})", chunk
                )
            )
        return found

    def metadata_values(self, tids: Sequence[str]) -> dict[str, dict[str, str]]:
        """Stored metadata of the given ids, whether or not a transcript is stored for them
        (a manifest may name calls that arrive later)."""
        out: dict[str, dict[str, str]] = {}
        for chunk in chunks(list(dict.fromkeys(tids)), PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, key, value in self._conn.execute(
                f"SELECT tid, key, value FROM metadata WHERE tid IN ({q})", chunk
            ):
                out.setdefault(tid, {})[key] = value
        return out

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

    def turns_for(
        self, tids: Sequence[str], *, speakers: bool = False
    ) -> list[tuple[str, list[tuple[str, ...]]]]:
        """``(tid, [(role, text), ...])`` for the given stored transcripts, in the order
        given (ids not stored are left out); ``(role, text, speaker label)`` with
        ``speakers=True``."""
        found: dict[str, list[tuple[str, ...]]] = {}
        for chunk in chunks(list(dict.fromkeys(tids)), PARAM_CHUNK):
            q = ",".join("?" * len(chunk))
            for tid, packed in self._conn.execute(
                "SELECT t.tid, u.turns FROM turn_sets u JOIN transcripts t "
                f"ON t.id = u.transcript WHERE t.tid IN ({q})",
                chunk,
            ):
                units = json.loads(packed)
                found[tid] = (
                    [(u[1], u[4], u[0]) for u in units]
                    if speakers
                    else [(u[1], u[4]) for u in units]
                )
        return [(t, found[t]) for t in dict.fromkeys(tids) if t in found]

    def ids_with_metadata(
        self,
        equals: dict[str, Sequence[str]],
        *,
        date_from: str | None = None,
        date_to: str | None = None,
    ) -> set[str]:
        """Ids whose stored metadata has, for each field of ``equals``, one of its values,
        and a ``date`` within ``[date_from, date_to]`` (ISO dates, both ends included;
        a call without a date is left out as soon as either end is given).

        Ids are returned whether or not a transcript is stored for them.
        """
        conditions: list[tuple[str, list[str]]] = []
        for key, values in equals.items():
            q = ",".join("?" * len(values))
            conditions.append((f"key = ? AND value IN ({q})", [key, *values]))
        if date_from is not None:
            conditions.append(("key = 'date' AND substr(value, 1, 10) >= ?", [date_from]))
        if date_to is not None:
            conditions.append(("key = 'date' AND substr(value, 1, 10) <= ?", [date_to]))
        found: set[str] | None = None
        for where, params in conditions:
            ids = {
                r[0] for r in self._conn.execute(f"SELECT tid FROM metadata WHERE {where}", params)
            }
            found = ids if found is None else found & ids
        return set() if found is None else found
