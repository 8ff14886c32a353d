"""A publish that does not fit on the disk: refused (or stopped) with how much room it
needs, the previous version stays current and no half-written folder is left behind."""

from __future__ import annotations

import errno
import os
import shutil
import subprocess
import sys
from collections import namedtuple
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from talkthemes.cli import app
from talkthemes.diskspace import MARGIN, check_room, human_bytes
from talkthemes.errors import DiskFullError
from talkthemes.workspace import Workspace

runner = CliRunner()
Usage = namedtuple("Usage", "total used free")


def _swept(ws: Workspace) -> Workspace:
    """The published workspace with a recorded sweep cell to publish (NMF, K = 4)."""
    with ws.store() as store:
        prepared = store.stages().prepared
        assert prepared is not None
        sid = store.start_sweep(prepared.hash, {})
        store.add_cell(
            sid, "nmf-k004-s0", "nmf", 4, 0, {"c_npmi": 0.1, "top_terms": [[0, 1, 2]] * 4}
        )
        store.finish_sweep(sid, {})
    return ws


def _state(ws: Workspace) -> tuple[int | None, list[int], list[str]]:
    with ws.store() as store:
        current = store.current_version()
        numbers = [v.n for v in store.versions()]
    return (current.n if current else None), numbers, sorted(os.listdir(ws.versions_dir))


def _publish(ws: Workspace) -> tuple[int, str]:
    res = runner.invoke(app, ["publish", "--cell", "nmf-k004-s0", "-w", str(ws.root)])
    return res.exit_code, " ".join(res.stderr.split())


def test_human_bytes() -> None:
    assert human_bytes(512) == "512 bytes"
    assert human_bytes(1536) == "1.5 KB"
    assert human_bytes(5 * 2**30) == "5.0 GB"


def test_check_room_names_the_room_needed_and_free(monkeypatch, tmp_path: Path) -> None:
    monkeypatch.setattr(shutil, "disk_usage", lambda _p: Usage(10**9, 10**9, 2**20))
    with pytest.raises(DiskFullError) as caught:
        check_room(tmp_path / "not-yet", 3 * 2**20, "write a thing")
    err = caught.value
    assert err.needed == 3 * 2**20 + MARGIN and err.free == 2**20
    assert f"it needs about {human_bytes(3 * 2**20 + MARGIN)} and 1.0 MB is free" in str(err)
    assert str(tmp_path / "not-yet") in str(err)
    # with room enough nothing is raised
    monkeypatch.setattr(shutil, "disk_usage", lambda _p: Usage(10**12, 0, 10**12))
    check_room(tmp_path, 3 * 2**20, "write a thing")


def test_publish_on_a_full_disk_is_refused_before_writing(published: Workspace, monkeypatch):
    ws = _swept(published)
    before = _state(ws)
    monkeypatch.setattr(
        "talkthemes.diskspace.shutil.disk_usage", lambda _p: Usage(10**9, 10**9, 5 * 2**20)
    )
    code, err = _publish(ws)
    assert code == 1, err
    assert f"not enough disk space to publish a version in {ws.versions_dir}" in err
    assert "and 5.0 MB is free" in err and "what was current stays current" in err
    assert _state(ws) == before  # version 1 current, no new record, no folder left


def test_a_disk_that_fills_up_during_the_write_leaves_the_last_version(
    published: Workspace, monkeypatch
) -> None:
    ws = _swept(published)
    before = _state(ws)
    calls = []

    def full(path, *args, **kwargs):  # the third array written finds the disk full
        calls.append(path)
        if len(calls) == 3:
            raise OSError(errno.ENOSPC, "No space left on device", str(path))
        return real_save(path, *args, **kwargs)

    real_save = np.save
    monkeypatch.setattr("talkthemes.versions.write.np.save", full)
    code, err = _publish(ws)
    assert code == 1, err
    assert "not enough disk space to publish a version" in err and "it needs about" in err
    assert len(calls) == 3
    assert _state(ws) == before


def _can_mount() -> bool:
    if shutil.which("unshare") is None:
        return False
    probe = subprocess.run(
        ["unshare", "-rm", "sh", "-c", "mount -t tmpfs none /mnt"], capture_output=True
    )
    return probe.returncode == 0


@pytest.mark.skipif(not _can_mount(), reason="unshare of a mount namespace is not permitted")
def test_publish_onto_a_real_small_filesystem(published: Workspace, tmp_path: Path) -> None:
    """``versions/`` on a 4 MB tmpfs holding version 1: the publish is refused by the real
    free space of that filesystem, and version 1 stays current."""
    ws = _swept(published)
    before = _state(ws)
    keep = tmp_path / "versions-copy"
    shutil.copytree(ws.versions_dir, keep)
    versions = ws.versions_dir
    script = (
        f"mount -t tmpfs -o size=4m none {versions} && cp -a {keep}/. {versions}/ && "
        f"exec {sys.executable} -m talkthemes.cli publish --cell nmf-k004-s0 -w {ws.root}"
    )
    proc = subprocess.run(
        ["unshare", "-rm", "sh", "-c", script],
        capture_output=True,
        text=True,
        env={**os.environ, "COLUMNS": "300"},
        timeout=300,
    )
    err = " ".join(proc.stderr.split())
    assert proc.returncode == 1, proc.stderr + proc.stdout
    assert f"not enough disk space to publish a version in {versions}" in err
    assert "it needs about" in err and "MB is free" in err
    assert _state(ws) == before  # the store (on the real disk) still has version 1 current
