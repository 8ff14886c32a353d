"""How far a workspace has got, and the next command, stage by stage."""

from __future__ import annotations

from pathlib import Path

import pytest

from talkthemes.calls.model import Transcript, Turn
from talkthemes.errors import InputError
from talkthemes.view.readiness import readiness
from talkthemes.workspace import Workspace


def _transcript(tid: str, text: str = "my bill is wrong") -> Transcript:
    return Transcript(tid, [Turn("Customer", "customer", text)], source=f"{tid}.txt", format="txt")


def test_readiness_walks_every_stage_with_the_next_command(tmp_path: Path) -> None:
    ws = Workspace(tmp_path / "w s")
    r = readiness(ws)
    assert r.blocker("version").command == f"talkthemes init '{ws.root}'"
    assert not ws.root.exists()  # looking never creates anything
    ws.init()
    step = readiness(ws).blocker("sweep")
    assert step.stage == "transcripts" and step.command.startswith("talkthemes ingest ")
    assert f"--workspace '{ws.root}'" in step.command
    with ws.store() as store:
        store.add_transcripts([_transcript("a"), _transcript("b", "power is out")], None)
    assert readiness(ws).blocker("version").command.startswith("talkthemes prepare")
    with ws.store() as store:
        store.record_prep("abc", {"counts": {}})
    assert readiness(ws).blocker("sweep").command.startswith("talkthemes sweep")
    assert readiness(ws).blocker("version").command.startswith("talkthemes sweep")
    with ws.store() as store:
        sid = store.start_sweep("abc", {})
    assert readiness(ws).blocker("sweep").stage == "sweep"  # no finished cell yet
    with ws.store() as store:
        store.add_cell(sid, "nmf-k002-s0", "nmf", 2, 0, {"fit_seconds": 1.0})
    r = readiness(ws)
    assert r.blocker("sweep") is None and r.sweep_id == sid and not r.sweep_scored
    assert r.blocker("version").command.startswith("talkthemes publish")
    assert r.next_step is not None and r.next_step.stage == "version"
    with pytest.raises(InputError, match="unknown need"):
        r.blocker("nonsense")  # type: ignore[arg-type]
