"""Tests for talkthemes.ingest.metadata: manifests never overwrite stored values unasked."""

from __future__ import annotations

from pathlib import Path

from talkthemes.calls.model import Transcript, Turn
from talkthemes.ingest.manifest import Manifest
from talkthemes.ingest.metadata import apply_manifest, unknown_ids
from talkthemes.store import Store


def _manifest(entries: dict[str, dict[str, str]]) -> Manifest:
    rows = {tid: n for n, tid in enumerate(entries, start=1)}
    return Manifest(entries=entries, source="/m/manifest.csv", rows=rows, format="csv")


def test_new_fields_are_added_and_changes_wait_for_update(tmp_path: Path) -> None:
    with Store.open(tmp_path / "s.db") as store:
        store.add_transcripts(
            [Transcript("c1", [Turn("A", "agent", "hi")], "c1.txt", "txt", {"queue": "cards"})],
            None,
        )
        man = _manifest({"c1": {"queue": "moves", "site": "North"}, "c2": {"queue": "x"}})
        out = apply_manifest(store, man)
        assert store.metadata_values(["c1", "c2"]) == {
            "c1": {"queue": "cards", "site": "North"},
            "c2": {"queue": "x"},
        }
        (rej,) = out.rejects
        assert (rej.source, rej.row, rej.format) == ("/m/manifest.csv", 1, "manifest")
        assert rej.reason.startswith("row 1 (counting data rows after the header): id 'c1'")
        assert "'queue': 'cards' → 'moves'" in rej.reason
        assert [(c.tid, c.field, c.old, c.new, c.applied) for c in out.changes] == [
            ("c1", "queue", "cards", "moves", False)
        ]
        again = apply_manifest(store, man, update=True)
        assert not again.rejects and [c.applied for c in again.changes] == [True]
        assert store.metadata_values(["c1"])["c1"]["queue"] == "moves"
        assert "'queue': 'cards' → 'moves'" in again.warnings[0].message
        # the same values once more: nothing changes, nothing to report
        third = apply_manifest(store, man)
        assert not third.rejects and not third.changes and third.written == 0
        missing, warning = unknown_ids(store, man)
        assert missing == ["c2"] and warning is not None and warning.row == 2
        assert warning.message.startswith("1 manifest row(s) name ids with no stored transcript")
