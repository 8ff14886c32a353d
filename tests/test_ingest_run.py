"""Ingest orchestration: parallel parsing stores exactly what serial parsing stores."""

from __future__ import annotations

from pathlib import Path

from talkthemes.demo import write_demo
from talkthemes.ingest.run import PARALLEL_MIN_FILES, ingest
from talkthemes.workspace import Workspace


def _stored(ws: Workspace) -> list[tuple[str, str, int]]:
    with ws.store() as store:
        return store._conn.execute(
            "SELECT tid, content_hash, n_words FROM transcripts ORDER BY tid"
        ).fetchall()


def test_parallel_and_serial_ingest_store_the_same(tmp_path: Path) -> None:
    files = write_demo(tmp_path / "src", size=PARALLEL_MIN_FILES + 250, seed=4)
    results = []
    for workers in (1, 2):
        ws = Workspace(tmp_path / f"ws{workers}")
        ws.init()
        with ws.lock("test"):
            report = ingest(ws, [files.exports], manifests=[files.manifest], workers=workers)
        assert report.files >= PARALLEL_MIN_FILES
        assert report.total("added") == PARALLEL_MIN_FILES + 250
        results.append((_stored(ws), report.to_json()["totals"]))
    assert results[0] == results[1]
