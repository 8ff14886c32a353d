"""Opening and creating a workspace, and the writer lock the API takes for its callers."""

from __future__ import annotations

import threading
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

import talkthemes as tt
from talkthemes.cli._common import app
from talkthemes.workspace import WorkspaceDir

runner = CliRunner()


def _one_call(folder: Path, name: str = "c001") -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"{name}.txt"
    path.write_text("Agent: Hello.\nCustomer: My meter reading is wrong.\n", encoding="utf-8")
    return folder


# -- open and create ----------------------------------------------------------------------
def test_open_refuses_a_folder_that_is_not_a_workspace_with_the_cli_message(
    tmp_path: Path,
) -> None:
    missing = tmp_path / "typo"
    with pytest.raises(tt.NotReadyError) as info:
        tt.Workspace.open(missing)
    res = runner.invoke(app, ["status", "-w", str(missing)])
    assert res.exit_code == 2
    assert f"talkthemes: {info.value}" in " ".join(res.stderr.split())
    assert str(info.value) == f"no workspace at {missing}: run 'talkthemes init {missing}' first"
    assert not missing.exists()  # a mistyped path never becomes a workspace


def test_create_makes_a_workspace_once_and_never_overwrites(tmp_path: Path) -> None:
    ws = tt.Workspace.create(tmp_path / "w")
    assert ws.created and ws.root == tmp_path / "w"
    assert ws.folder.settings_path.is_file() and ws.folder.db_path.is_file()
    ws.folder.settings_path.write_text("[prepare]\nroles = 'agent'\n", encoding="utf-8")
    again = tt.Workspace.create(tmp_path / "w")
    assert not again.created
    assert again.settings().prepare.roles == "agent"
    assert tt.Workspace.open(tmp_path / "w").settings().prepare.roles == "agent"


def test_create_refuses_a_file(tmp_path: Path) -> None:
    (tmp_path / "f").write_text("x", encoding="utf-8")
    with pytest.raises(tt.InputError, match="exists and is not a folder"):
        tt.Workspace.create(tmp_path / "f")


def test_open_without_a_path_follows_the_environment(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    tt.Workspace.create(tmp_path / "env-ws")
    monkeypatch.setenv("TALKTHEMES_WORKSPACE", str(tmp_path / "env-ws"))
    assert tt.Workspace.open().root == tmp_path / "env-ws"


def test_the_folder_is_the_layer_below(tmp_path: Path) -> None:
    ws = tt.Workspace.create(tmp_path / "w")
    assert isinstance(ws.folder, WorkspaceDir) and ws.folder.root == ws.root
    assert repr(ws) == f"Workspace({str(tmp_path / 'w')!r})"


def test_folder_attributes_still_answer_with_a_warning(tmp_path: Path) -> None:
    """Code written against the folder class keeps working through the merge."""
    ws = tt.Workspace.create(tmp_path / "w")
    with pytest.warns(DeprecationWarning, match="Workspace.folder.store"):
        with ws.store() as store:
            assert store.count_transcripts() == 0
    with pytest.raises(AttributeError):
        ws.no_such_thing  # noqa: B018


# -- the writer lock ----------------------------------------------------------------------
def test_a_writer_refuses_a_busy_workspace_and_changes_nothing(tmp_path: Path) -> None:
    ws = tt.Workspace.create(tmp_path / "w")
    calls = _one_call(tmp_path / "calls")
    with WorkspaceDir(ws.root).lock("refresh"):  # another writer (its own lock handle)
        with pytest.raises(tt.WorkspaceBusyError, match="workspace busy: refresh since"):
            ws.ingest(calls)
    assert ws.status().transcripts == 0
    assert ws.ingest(calls).total("added") == 1  # free again


def test_a_writer_waits_when_asked_and_says_so_once(tmp_path: Path) -> None:
    ws = tt.Workspace.create(tmp_path / "w")
    calls = _one_call(tmp_path / "calls")
    held, release = threading.Event(), threading.Event()

    def other_writer() -> None:
        with WorkspaceDir(ws.root).lock("sweep"):
            held.set()
            release.wait(10)

    thread = threading.Thread(target=other_writer)
    thread.start()
    held.wait(10)
    messages: list[str] = []
    threading.Timer(0.8, release.set).start()
    t0 = time.monotonic()
    report = ws.ingest(calls, wait=True, on_wait=messages.append)
    thread.join()
    assert time.monotonic() - t0 >= 0.7  # it waited for the release
    assert report.total("added") == 1
    assert len(messages) == 1 and messages[0].startswith("workspace busy: sweep since")


def test_hold_keeps_the_lock_across_calls_of_this_thread_only(tmp_path: Path) -> None:
    ws = tt.Workspace.create(tmp_path / "w")
    calls = _one_call(tmp_path / "calls")
    errors: list[BaseException] = []

    def from_another_thread() -> None:
        try:
            ws.ingest(calls)
        except BaseException as exc:
            errors.append(exc)

    with ws.hold("script"):
        assert ws.ingest(calls).total("added") == 1  # uses the lock held
        with pytest.raises(tt.WorkspaceBusyError, match="busy: script"):
            tt.Workspace.open(ws.root).ingest(calls)  # another object: another writer
        thread = threading.Thread(target=from_another_thread)
        thread.start()
        thread.join()
    assert len(errors) == 1 and isinstance(errors[0], tt.WorkspaceBusyError)
    assert ws.ingest(calls).total("unchanged") == 1  # released at the end of the block


def test_ingest_reports_progress_through_the_one_protocol(tmp_path: Path) -> None:
    ws = tt.Workspace.create(tmp_path / "w")
    calls = tmp_path / "calls"
    for i in range(3):
        _one_call(calls, f"c{i:03d}")
    seen: list[tuple[int, int, str]] = []
    ws.ingest(calls, progress=lambda done, total, what="": seen.append((done, total, what)))
    assert seen and seen[-1][:2] == (3, 3)
    assert all(0 < done <= total for done, total, _ in seen)
    assert all(what.endswith(".txt") for _, _, what in seen)


def test_ingest_writes_the_rejects_it_reports(tmp_path: Path) -> None:
    ws = tt.Workspace.create(tmp_path / "w")
    calls = _one_call(tmp_path / "calls")
    (calls / "empty.txt").write_text("", encoding="utf-8")
    report = ws.ingest([calls], rejects_csv=tmp_path / "rejects.csv")
    assert report.exit_code == 3 and report.total("added") == 1
    lines = (tmp_path / "rejects.csv").read_text(encoding="utf-8").splitlines()
    assert lines[0] == "source,row,format,reason"
    assert len(lines) == 1 + len(report.rejects) and "empty.txt" in lines[1]
