"""The store: schema versions, deduplication, never overwriting, streaming, summaries."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest

from talkthemes.calls.model import Transcript, Turn
from talkthemes.errors import StoreError
from talkthemes.store import SCHEMA_VERSION, Store
from talkthemes.store.records import (
    LabelRecord,
    LikelyReexports,
    MetadataField,
    ReexportPair,
    Stages,
    ThemeRecord,
)


def _t(tid: str, *texts: str, fmt: str = "txt", **meta: str) -> Transcript:
    turns = [
        Turn(
            speaker="Agent" if i % 2 == 0 else "Customer",
            role="agent" if i % 2 == 0 else "customer",
            text=x,
        )
        for i, x in enumerate(texts)
    ]
    return Transcript(tid=tid, turns=turns, source=f"/in/{tid}.{fmt}", format=fmt, metadata=meta)


@pytest.fixture
def store(tmp_path: Path) -> Store:
    s = Store.open(tmp_path / "t.db")
    yield s
    s.close()


def test_new_store_is_at_current_schema_in_wal_mode(store: Store) -> None:
    assert store.schema_version() == SCHEMA_VERSION
    mode = store._conn.execute("PRAGMA journal_mode").fetchone()[0]
    assert mode == "wal"


def test_newer_schema_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "t.db"
    Store.open(path).close()
    con = sqlite3.connect(path)
    con.execute("UPDATE meta SET value = ? WHERE key = 'schema_version'", (SCHEMA_VERSION + 1,))
    con.commit()
    con.close()
    with pytest.raises(StoreError, match="newer than this talkthemes"):
        Store.open(path)


def test_not_a_database_is_a_store_error(tmp_path: Path) -> None:
    path = tmp_path / "t.db"
    path.write_bytes(b"this is not sqlite" * 100)
    with pytest.raises(StoreError, match="cannot open the store"):
        Store.open(path)


LONG = " ".join(f"word{i}" for i in range(30))  # long enough to identify a call


def test_same_long_text_under_another_id_is_a_likely_reexport(store: Store) -> None:
    a = _t("a", "Hello there. " + LONG, "My bill is high!")
    b = _t("b", "hello there " + LONG.upper(), "my   bill is HIGH")  # exported differently
    out = store.add_transcripts([a, b], None)
    assert [t.tid for t in out.added] == ["a"]
    assert [(t.tid, orig) for t, orig in out.duplicates] == [("b", "a")]
    assert [(m.tid, m.original, m.kind) for m in out.same_text] == [("b", "a", "reexport_skipped")]
    again = store.add_transcripts([a], None)
    assert [t.tid for t in again.unchanged] == ["a"]
    assert store.count_transcripts() == 1
    s = store.summary()
    assert s.likely_reexports == LikelyReexports(1, 1, 0, (ReexportPair("b", "a", False),))
    assert s.to_json()["likely_reexports"] == {
        "count": 1,
        "skipped": 1,
        "kept": 0,
        "first": [{"id": "b", "same_text_as": "a", "kept": False}],
    }


def test_short_same_text_under_other_ids_is_stored_for_each_call(store: Store) -> None:
    calls = [_t(f"hang{i}", "Hello?", "Hello?") for i in range(7)]
    out = store.add_transcripts(calls[:3], None)
    out2 = store.add_transcripts(calls[3:], None)
    assert store.transcript_ids() == [c.tid for c in calls]
    assert not out.duplicates and not out2.duplicates
    matches = out.same_text + out2.same_text
    assert [(m.tid, m.original, m.kind) for m in matches] == [
        (f"hang{i}", "hang0", "same_text") for i in range(1, 7)
    ]
    assert "short text (2 words < 25)" in matches[0].reason
    s = store.summary()
    assert s.same_text_pairs == 6 and s.likely_reexports.count == 0


def test_reexport_rule_keep_and_metadata_conflicts(store: Store) -> None:
    from talkthemes.calls.identity import ReexportRule

    store.add_transcripts([_t("a", LONG, date="2026-03-01", agent="Noor")], None)
    # same text, another day: a different call
    out = store.add_transcripts([_t("b", LONG, date="2026-03-02")], None)
    assert [t.tid for t in out.added] == ["b"]
    (m,) = out.same_text
    assert (m.original, m.kind) == ("a", "same_text")
    assert "date '2026-03-02' vs '2026-03-01'" in m.reason
    # same text, same day as b (a date-time of that day): a re-export of b, not of a
    out = store.add_transcripts([_t("c", LONG, date="2026-03-02T09:30:00")], None)
    assert [(t.tid, orig) for t, orig in out.duplicates] == [("c", "b")]
    # metadata stored from a manifest for a new id counts as that call's
    store.set_metadata({"e": {"agent": "Sam"}})
    out = store.add_transcripts([_t("e", LONG, date="2026-03-01")], None)
    assert [t.tid for t in out.added] == ["e"]
    assert "agent 'Sam' vs 'Noor'" in out.same_text[0].reason
    # the keep setting stores a likely re-export, still logged
    out = store.add_transcripts([_t("d", LONG)], None, rule=ReexportRule(action="keep"))
    assert [t.tid for t in out.added] == ["d"]
    assert [(x.original, x.kind) for x in out.same_text] == [("a", "reexport_kept")]
    assert store.summary().likely_reexports.count == 2


def test_interrupted_ingest_runs_until_a_later_run_finishes(store: Store) -> None:
    killed = store.start_ingest_run(["a"])  # never finished: the process was killed
    assert store.summary().interrupted_ingest_runs == 1
    rerun = store.start_ingest_run(["a"])
    status = dict(store._conn.execute("SELECT id, status FROM ingest_runs"))
    assert status == {killed: "interrupted", rerun: "running"}
    store.finish_ingest_run(rerun, added=1, unchanged=0, duplicate=0, rejected=0)
    assert store.summary().interrupted_ingest_runs == 0


def test_same_id_with_other_text_is_rejected_and_stored_text_kept(store: Store) -> None:
    store.add_transcripts([_t("a", "original words here")], None)
    out = store.add_transcripts([_t("a", "different words now"), _t("c", "fresh call")], None)
    assert len(out.rejects) == 1
    assert "already stored" in out.rejects[0].reason
    assert [t.tid for t in out.added] == ["c"]
    assert [u.text for u in store.get_turns("a")] == ["original words here"]


def test_turns_roundtrip_in_order(store: Store) -> None:
    t = Transcript(
        tid="x",
        turns=[
            Turn("Agent", "agent", "hi", 0.0, 1.5),
            Turn("Caller", "customer", "hello", 1.5, None),
        ],
        source="/in/x.vtt",
        format="vtt",
    )
    store.add_transcripts([t], None)
    got = store.get_turns("x")
    assert [(u.seq, u.speaker, u.role, u.start, u.end, u.text) for u in got] == [
        (0, "Agent", "agent", 0.0, 1.5, "hi"),
        (1, "Caller", "customer", 1.5, None, "hello"),
    ]
    assert store.get_turns("missing") == []


def test_manifest_metadata_wins_over_inline_and_may_precede_transcripts(store: Store) -> None:
    store.set_metadata({"a": {"queue": "billing", "date": "2026-05-02"}})
    store.add_transcripts([_t("a", "some words", queue="faults", site="north")], None)
    assert store.metadata_for(["a"]) == {
        "a": {"queue": "billing", "date": "2026-05-02", "site": "north"}
    }
    store.set_metadata({"a": {"queue": "moves"}})
    assert store.metadata_for()["a"]["queue"] == "moves"


def test_iter_turn_batches_streams_everything_in_order(store: Store) -> None:
    calls = [_t(f"c{i:03d}", f"call number {i}", f"reply {i}") for i in range(23)]
    store.add_transcripts(calls, None)
    batches = list(store.iter_turn_batches(5))
    assert [len(b) for b in batches] == [5, 5, 5, 5, 3]
    flat = [item for b in batches for item in b]
    assert [tid for tid, _ in flat] == [c.tid for c in calls]
    assert flat[4][1] == [("agent", "call number 4"), ("customer", "reply 4")]


def test_fingerprint_changes_only_with_the_transcript_set(store: Store) -> None:
    f0 = store.corpus_fingerprint()
    store.add_transcripts([_t("a", "one call")], None)
    f1 = store.corpus_fingerprint()
    store.set_metadata({"a": {"queue": "x"}})
    assert store.corpus_fingerprint() == f1 != f0


def test_summary_counts(store: Store) -> None:
    store.add_transcripts(
        [_t("a", "one two", "three"), _t("b", "four five six", fmt="vtt"), _t("c", "seven")], None
    )
    store.set_metadata(
        {
            "a": {"date": "2026-05-03", "queue": "billing"},
            "b": {"date": "2026-06-10", "queue": "billing"},
            "zz": {"date": "2026-07-01"},
        }
    )
    s = store.summary()
    assert s.transcripts == 3
    assert s.words == 7
    assert s.by_format == {"txt": 2, "vtt": 1}
    assert s.turns_by_role == {"agent": 3, "customer": 1}
    assert s.by_month == {"2026-05": 1, "2026-06": 1}
    assert s.date_range == ("2026-05-03", "2026-06-10")
    assert s.metadata_fields["queue"] == MetadataField(2, 1, {"billing": 2})
    assert s.manifest_rows_without_transcript == 1
    doc = s.to_json()
    assert doc["date_range"] == ["2026-05-03", "2026-06-10"]
    queue = {"transcripts": 2, "distinct": 1, "top": {"billing": 2}}
    assert doc["metadata_fields"]["queue"] == queue


def test_prep_record_switches_current(store: Store) -> None:
    assert store.current_prep() is None
    assert store.stages() == Stages(None, None, None)
    assert store.stages().to_json() == {"prepared": None, "swept": None, "published": None}
    store.record_prep("h1", {"n_docs": 3})
    store.record_prep("h2", {"n_docs": 4, "path": "prepared/h2"})
    cur = store.current_prep()
    assert cur is not None and cur.hash == "h2" and cur.info["n_docs"] == 4
    assert cur.path == "prepared/h2" and cur.frozen_from is None
    h1 = store.get_prep("h1")
    assert h1 is not None and h1.info == {"n_docs": 3} and h1.path is None
    prepared = store.stages().prepared
    assert prepared is not None and (prepared.hash, prepared.at) == ("h2", cur.created_at)


def test_failed_batch_leaves_store_unchanged(store: Store) -> None:
    store.add_transcripts([_t("a", "kept words")], None)
    bad = _t("b", "new words")
    # metadata rows are written last in the batch's transaction: NOT NULL value fails there
    bad.metadata = {"queue": None}  # type: ignore[dict-item]
    with pytest.raises(sqlite3.IntegrityError):
        store.add_transcripts([_t("c", "other words"), bad], None)
    assert store.transcript_ids() == ["a"]  # the whole batch rolled back
    assert store._conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"


def test_migration_from_version_1_keeps_data(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import talkthemes.store as store_mod

    path = tmp_path / "old.db"
    monkeypatch.setattr(store_mod, "_MIGRATIONS", store_mod._MIGRATIONS[:1])
    monkeypatch.setattr(store_mod, "SCHEMA_VERSION", 1)
    with Store.open(path) as old:
        assert old.schema_version() == 1
        # version 1 kept one row per turn: write them as that version did (out of order)
        old._conn.execute(
            "INSERT INTO transcripts(id, tid, source, format, content_hash, n_turns, n_words, "
            "n_chars, added_at) VALUES (7, 'a', 'a.txt', 'txt', 'h', 3, 6, 30, 'now')"
        )
        old._conn.executemany(
            'INSERT INTO turns(transcript, seq, speaker, role, start, "end", text) '
            "VALUES (7,?,?,?,?,?,?)",
            [
                (2, "Agent", "agent", None, None, "bye now"),
                (0, "Agent", "agent", 1.5, 2.25, "kept through the migration"),
                (1, "Ana", "customer", 3.0, None, "thanks"),
            ],
        )
    monkeypatch.undo()
    with Store.open(path) as new:
        assert new.schema_version() == SCHEMA_VERSION
        got = new.get_turns("a")
        assert [(u.seq, u.speaker, u.role, u.start, u.end, u.text) for u in got] == [
            (0, "Agent", "agent", 1.5, 2.25, "kept through the migration"),
            (1, "Ana", "customer", 3.0, None, "thanks"),
            (2, "Agent", "agent", None, None, "bye now"),
        ]
        assert new.turns_for(["a"]) == [
            (
                "a",
                [
                    ("agent", "kept through the migration"),
                    ("customer", "thanks"),
                    ("agent", "bye now"),
                ],
            )
        ]
        summary = new.summary()
        assert summary.turns_by_role == {"agent": 2, "customer": 1}
        assert summary.transcripts_with_role == {"agent": 1, "customer": 1}
        assert new.integrity_problems() == []
        assert new.next_version_number() == 1


def test_sweep_cells_resume_records(store: Store) -> None:
    assert store.get_sweep() is None
    sid = store.start_sweep("p1", {"grid_key": "g1"})
    store.add_cell(sid, "lda-k005-s0", "lda", 5, 0, {"c_npmi": 0.1})
    store.add_cell(sid, "lda-k005-s0", "lda", 5, 0, {"c_npmi": 0.2})  # re-run replaces
    found = store.find_sweep("p1", "g1")
    assert found is not None and (found.id, found.status, found.grid_key) == (sid, "running", "g1")
    assert store.find_sweep("p1", "other") is None
    (cell,) = store.cells(sid)
    assert (cell.sweep_id, cell.cell, cell.family, cell.k, cell.seed) == (
        sid, "lda-k005-s0", "lda", 5, 0,
    )  # fmt: skip
    assert cell.metrics == {"c_npmi": 0.2} and cell.fit_seconds is None
    assert cell.row() == {"cell": "lda-k005-s0", "family": "lda", "k": 5, "seed": 0, "c_npmi": 0.2}
    store.finish_sweep(sid, {"grid_key": "g1", "recommendations": {"lda": {"k": 5}}})
    got = store.get_sweep(sid)
    assert got is not None and got.status == "done" and got.finished_at
    assert got.recommendations == {"lda": {"k": 5}}
    swept = store.stages().swept
    assert swept is not None and (swept.id, swept.status) == (sid, "done")


def test_versions_themes_and_labels(store: Store) -> None:
    ids = store.reserve_theme_ids(3)
    assert ids == [1, 2, 3]
    assert store.reserve_theme_ids(1) == [4]  # never reused
    store.add_version(
        1, {"k": 3}, [{"theme_id": t, "position": i, "status": "new"} for i, t in enumerate(ids)]
    )
    store.set_label(2, label="Payment plans", note="arrears too")
    row = store.set_label(2, hidden=True)
    assert row == LabelRecord(2, "Payment plans", "arrears too", True)
    assert row.to_json() == {
        "theme_id": 2, "label": "Payment plans", "note": "arrears too", "hidden": True,
    }  # fmt: skip
    themes = store.themes(1)
    assert [t.theme_id for t in themes] == [1, 2, 3]
    assert themes[1] == ThemeRecord(
        theme_id=2, position=1, status="new", label="Payment plans", note="arrears too",
        hidden=True,
    )  # fmt: skip
    assert themes[0].label == "" and themes[0].hidden is False
    with pytest.raises(StoreError, match="no theme 99"):
        store.set_label(99, label="x")
    store.add_version(
        2,
        {"k": 3},
        [{"theme_id": t, "position": i, "status": "carried"} for i, t in enumerate(ids)],
    )
    current = store.current_version()
    assert current is not None and (current.n, current.k, current.current) == (2, 3, True)
    assert store.themes(2)[1].label == "Payment plans"  # labels follow the theme id
    store.set_current_version(1)
    assert store.current_version() == store.versions()[0]
    assert [(v.n, v.current) for v in store.versions()] == [(1, True), (2, False)]
    with pytest.raises(StoreError, match="no version 7"):
        store.set_current_version(7)


def test_migration_to_identity_first_keeps_rows_and_allows_same_text(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import talkthemes.store as store_mod

    path = tmp_path / "old.db"
    monkeypatch.setattr(store_mod, "_MIGRATIONS", store_mod._MIGRATIONS[:4])
    monkeypatch.setattr(store_mod, "SCHEMA_VERSION", 4)
    with Store.open(path) as old:
        run = old.start_ingest_run(["x"])
        old.add_transcripts([_t("a", "Hello?"), _t("b", "kept words")], run)
        with pytest.raises(sqlite3.IntegrityError):  # version 4: one row per text
            old._conn.execute(
                "INSERT INTO transcripts(tid, source, format, content_hash, n_turns, n_words, "
                "n_chars, added_at) SELECT 'z', source, format, content_hash, 1, 1, 1, 'now' "
                "FROM transcripts WHERE tid = 'a'"
            )
    monkeypatch.undo()
    with Store.open(path) as new:
        assert new.schema_version() == SCHEMA_VERSION >= 5
        assert new.get_turns("b")[0].text == "kept words"
        assert new.integrity_problems() == []
        new.add_transcripts([_t("c", "Hello?")], None)
        assert new.transcript_ids() == ["a", "b", "c"]
        # the turn sets still belong to their rows, and deleting cascades as before
        assert new._conn.execute("PRAGMA foreign_keys").fetchone()[0] == 1
        assert new.summary().same_text_pairs == 1
