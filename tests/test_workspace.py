"""WorkspaceDir: init, the single-writer lock, atomic writes."""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
import threading
import time
from pathlib import Path

import pytest

from talkthemes.errors import NotReadyError, WorkspaceBusyError
from talkthemes.workspace import (
    Workspace,
    atomic_dir,
    atomic_write_text,
    resolve_workspace,
)


def test_init_creates_settings_and_store_and_is_idempotent(tmp_path: Path) -> None:
    ws = Workspace(tmp_path / "w")
    assert ws.init() is True
    assert ws.settings_path.read_text().startswith("# talkthemes workspace settings")
    assert ws.db_path.exists()
    ws.settings_path.write_text("[prepare]\nroles = 'agent'\n")
    assert ws.init() is False
    assert ws.settings().prepare.roles == "agent"  # not overwritten


def test_require_names_the_command_to_run(tmp_path: Path) -> None:
    with pytest.raises(NotReadyError, match="talkthemes init"):
        Workspace(tmp_path / "nothing").require()


def test_resolve_workspace_order(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv("TALKTHEMES_WORKSPACE", str(tmp_path / "env"))
    assert resolve_workspace(tmp_path / "arg") == tmp_path / "arg"
    assert resolve_workspace(None) == tmp_path / "env"
    monkeypatch.delenv("TALKTHEMES_WORKSPACE")
    assert resolve_workspace(None) == Path("talkthemes-work")


def test_second_writer_gets_busy_message_naming_command(ws: Workspace) -> None:
    with ws.lock("ingest"):
        with pytest.raises(WorkspaceBusyError) as info:
            with ws.lock("prepare"):
                pass
    msg = str(info.value)
    assert msg.startswith("workspace busy: ingest since ")
    assert "--wait" in msg
    with ws.lock("prepare"):  # released after the block
        pass


def test_lock_held_by_another_process_and_released_when_it_dies(ws: Workspace) -> None:
    code = textwrap.dedent(
        f"""
        import sys, time
        from talkthemes.workspace import WorkspaceDir
        with WorkspaceDir({str(ws.root)!r}).lock("refresh"):
            print("locked", flush=True)
            time.sleep(60)
        """
    )
    proc = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, text=True)
    try:
        assert proc.stdout is not None
        assert proc.stdout.readline().strip() == "locked"
        with pytest.raises(WorkspaceBusyError, match="workspace busy: refresh since"):
            with ws.lock("ingest"):
                pass
    finally:
        proc.kill()  # a killed holder must not leave a stale lock
        proc.wait()
    with ws.lock("ingest"):
        pass


def test_wait_waits_for_the_holder(ws: Workspace) -> None:
    released = threading.Event()
    messages: list[str] = []

    def hold() -> None:
        with ws.lock("sweep"):
            time.sleep(0.6)
        released.set()

    # flock locks belong to open file descriptions, so a second open in another thread
    # contends like another process would.
    t = threading.Thread(target=hold)
    t.start()
    time.sleep(0.2)
    with ws.lock("ingest", wait=True, poll_seconds=0.05, on_wait=messages.append):
        assert released.is_set()
    t.join()
    assert messages and messages[0].startswith("workspace busy: sweep since")


def test_atomic_write_replaces_whole_file(tmp_path: Path) -> None:
    p = tmp_path / "a" / "f.json"
    atomic_write_text(p, "one")
    atomic_write_text(p, "two")
    assert p.read_text() == "two"
    assert [x.name for x in p.parent.iterdir()] == ["f.json"]  # no temporary left


def test_atomic_dir_keeps_old_state_on_failure(tmp_path: Path) -> None:
    final = tmp_path / "prepared" / "abc"
    with atomic_dir(final) as d:
        (d / "x.txt").write_text("first")
    assert (final / "x.txt").read_text() == "first"
    with pytest.raises(RuntimeError), atomic_dir(final) as d:
        (d / "x.txt").write_text("second")
        raise RuntimeError("crash mid-write")
    assert (final / "x.txt").read_text() == "first"
    assert sorted(os.listdir(final.parent)) == ["abc"]
    with atomic_dir(final) as d:
        (d / "y.txt").write_text("third")
    assert sorted(os.listdir(final)) == ["y.txt"]
    assert sorted(os.listdir(final.parent)) == ["abc"]
