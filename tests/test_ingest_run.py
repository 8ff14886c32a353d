"""Ingest orchestration: parallel parsing stores exactly what serial parsing stores."""

from __future__ import annotations

import time
from pathlib import Path

from talkthemes.demo.writer import write_demo
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


def _sleep_after_watching(pid: int) -> None:
    from talkthemes.ingest.run import watch_parent

    watch_parent(pid, interval=0.1)
    time.sleep(30)


def test_parse_workers_exit_when_the_ingesting_process_is_gone() -> None:
    """A worker whose parent ingest was killed must not wait forever."""
    import multiprocessing
    import subprocess

    parent = subprocess.Popen(["sleep", "0.5"])
    worker = multiprocessing.get_context("fork").Process(
        target=_sleep_after_watching, args=(parent.pid,)
    )
    worker.start()
    time.sleep(1.0)  # the parent has exited but is not reaped yet: a zombie is not alive
    worker.join(timeout=5)
    assert not worker.is_alive()
    assert worker.exitcode == 1
    parent.wait()
