"""Never lose work: a ``talkthemes refresh`` process killed (SIGKILL) at each stage leaves
the previous version current and the workspace consistent, a concurrent refresh is
refused, and the next run succeeds.

The refresh pauses at a named stage through its test hook (``TALKTHEMES_TEST_PAUSE_AT``,
see :mod:`talkthemes.refresh`); the test waits for the pause message on stderr, then kills
the process there.
"""

from __future__ import annotations

import json
import os
import select
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
from typer.testing import CliRunner

from talkthemes import cli
from talkthemes.demo.records import DemoFiles
from talkthemes.versions.load import load_version
from talkthemes.workspace import Workspace

_ENTRY = "from talkthemes import cli; cli.main()"


def _start(ws: Workspace, inbox: Path, stage: str | None) -> subprocess.Popen[str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith("TALKTHEMES_TEST_")}
    if stage is not None:
        env["TALKTHEMES_TEST_PAUSE_AT"] = stage
        env["TALKTHEMES_TEST_PAUSE_SECONDS"] = "300"
    return subprocess.Popen(
        [sys.executable, "-c", _ENTRY, "refresh", "-w", str(ws.root), "-i", str(inbox), "--json"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
    )


def _wait_for_pause(proc: subprocess.Popen[str], stage: str, timeout: float = 180) -> None:
    assert proc.stderr is not None
    deadline = time.monotonic() + timeout
    seen = []
    while time.monotonic() < deadline:
        ready, _, _ = select.select([proc.stderr], [], [], 1.0)
        if ready:
            line = proc.stderr.readline()
            seen.append(line)
            if f"refresh paused at stage {stage}" in line:
                return
            if not line and proc.poll() is not None:
                break
    proc.kill()
    raise AssertionError(f"the refresh never paused at {stage}: {''.join(seen)[-2000:]}")


def _kill(proc: subprocess.Popen[str]) -> None:
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    for pipe in (proc.stdout, proc.stderr):
        if pipe is not None:
            pipe.close()


def _check_consistent(ws: Workspace, current: int) -> None:
    """The store is sound, ``current`` is current, every recorded version is whole on disk,
    and the lock is free."""
    with ws.store() as store:
        assert store.integrity_problems() == []
        record = store.current_version()
        assert record is not None and record.n == current
        numbers = store.version_numbers()
        themes = {n: store.themes(n) for n in numbers}
    for n in numbers:
        v = load_version(ws, n)
        assert v.topic_terms.shape[0] == v.k == len(themes[n]) == len(v.info["theme_ids"])
        assert v.doc_topics.shape == (len(v.doc_ids), v.k)
        assert np.allclose(v.topic_terms.sum(axis=1), 1, atol=1e-3)
        assert (v.folder / "model" / "params.json").is_file()
    on_disk = {int(p.name) for p in ws.versions_dir.iterdir() if p.name.isdigit()}
    assert set(numbers) <= on_disk
    with ws.lock("check"):  # a killed holder's lock is released by the system
        pass


def test_refresh_killed_at_every_stage_loses_nothing(
    published: Workspace, demo_files: DemoFiles
) -> None:
    ws = published
    v1 = load_version(ws)
    for stage in ("ingested", "prepared", "version-files", "version-folder"):
        proc = _start(ws, demo_files.inbox, stage)
        _wait_for_pause(proc, stage)
        if stage == "prepared":  # meanwhile, a second refresh is refused while it holds the lock
            res = CliRunner().invoke(cli.app, ["refresh", "-w", str(ws.root), "--json"])
            assert res.exit_code == 2
            assert "workspace busy: refresh since" in res.stderr and "--wait" in res.stderr
            assert res.stdout == ""
        _kill(proc)
        _check_consistent(ws, current=1)
        assert load_version(ws).theme_ids == v1.theme_ids
        with ws.store() as store:
            assert store.refreshes()[0].status == "running"  # until the next run starts

    # killed after the commit: the new version is current and whole (pruning not done yet)
    proc = _start(ws, demo_files.inbox, "version-current")
    _wait_for_pause(proc, "version-current")
    _kill(proc)
    _check_consistent(ws, current=2)
    with ws.store() as store:
        log = store.refreshes()
    assert log[0].status == "published" and log[0].version == 2
    assert [r.status for r in log[1:]] == ["interrupted"] * 4
    # leftovers of the killed runs (temporary version folders) are gone
    assert not [p for p in ws.versions_dir.iterdir() if p.name.startswith(".")]

    # the next run finds nothing new, succeeds, and changes nothing
    proc = _start(ws, demo_files.inbox, None)
    out, err = proc.communicate(timeout=180)
    assert proc.returncode == 0, err
    assert json.loads(out)["status"] == "nothing_new"
    _check_consistent(ws, current=2)
