"""A sweep stopped mid-way is marked interrupted and ``status`` says how to finish it; the
next run of the same grid resumes it, and the notice goes away.

The killed sweep is a real ``talkthemes sweep`` process, paused by its test hook
(``TALKTHEMES_TEST_PAUSE_AT=sweep-cell``: after the first cell is recorded) and killed with
SIGKILL there.
"""

from __future__ import annotations

import contextlib
import json
import os
import select
import signal
import subprocess
import sys
import time

import pytest
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.preps import install_prep
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.sweep.run import run_sweep
from talkthemes.workspace import Workspace

runner = CliRunner()
GRID = ["--k", "4,5,6", "--family", "nmf", "--seeds", "2", "--workers", "1"]


@pytest.fixture
def bars(tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    ws = Workspace(tmp_path_factory.mktemp("bars") / "ws")
    ws.init()
    _, _, texts = make_bars_corpus(200, seed=4)
    install_prep(ws, pixel_names(), texts)
    return ws


def _status(ws: Workspace) -> tuple[dict, str]:
    res = runner.invoke(app, ["status", "--json", "-w", str(ws.root)])
    assert res.exit_code == 0, res.stderr
    text = runner.invoke(app, ["status", "-w", str(ws.root)])
    assert text.exit_code == 0, text.stderr
    return json.loads(res.stdout), text.stdout


def _start_paused_sweep(ws: Workspace) -> subprocess.Popen[str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith("TALKTHEMES_TEST_")}
    env["TALKTHEMES_TEST_PAUSE_AT"] = "sweep-cell"
    env["TALKTHEMES_TEST_PAUSE_SECONDS"] = "300"
    proc = subprocess.Popen(
        [sys.executable, "-m", "talkthemes.cli", "sweep", *GRID, "-w", str(ws.root)],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
        start_new_session=True,  # its Dask workers share the session: cleaned up below
    )
    assert proc.stderr is not None
    deadline = time.monotonic() + 180
    seen: list[str] = []
    while time.monotonic() < deadline:
        ready, _, _ = select.select([proc.stderr], [], [], 1.0)
        if ready:
            line = proc.stderr.readline()
            seen.append(line)
            if "sweep paused at stage sweep-cell" in line:
                return proc
            if not line and proc.poll() is not None:
                break
    os.killpg(proc.pid, signal.SIGKILL)
    raise AssertionError("the sweep never paused: " + "".join(seen)[-2000:])


def test_a_killed_sweep_shows_as_interrupted_until_the_same_grid_finishes(
    bars: Workspace,
) -> None:
    proc = _start_paused_sweep(bars)
    os.kill(proc.pid, signal.SIGKILL)  # the sweep's own process, as a crash would
    proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    with contextlib.suppress(ProcessLookupError):
        os.killpg(proc.pid, signal.SIGKILL)  # its worker processes, if any are left
    assert proc.stderr is not None
    proc.stderr.close()

    doc, text = _status(bars)
    assert doc["stages"]["swept"]["status"] == "interrupted"
    [unfinished] = doc["unfinished_sweeps"]
    assert unfinished["status"] == "interrupted"
    assert (unfinished["cells_done"], unfinished["cells_total"]) == (1, 6)
    assert unfinished["rerun"] == "talkthemes sweep --k 4,5,6 --family nmf --seeds 2"
    assert f"Sweep {unfinished['id']} did not finish" in text
    assert "re-run to finish: talkthemes sweep --k 4,5,6 --family nmf --seeds 2" in text

    with bars.lock("sweep"):  # the next run marks the record and resumes it
        res = run_sweep(bars, k="4,5,6", families=["nmf"], seeds=2, workers=1)
    assert res.sweep_id == unfinished["id"] and res.reused_cells == 1
    with bars.store() as store:
        done = store.get_sweep(res.sweep_id)
        assert done is not None and done.status == "done"
    doc, text = _status(bars)
    assert doc["unfinished_sweeps"] == [] and doc["stages"]["swept"]["status"] == "done"
    assert "did not finish" not in text


def test_ctrl_c_marks_the_record_at_once_and_a_rerun_clears_it(bars: Workspace) -> None:
    def stop_after_first_cell(done: int, total: int, what: str = "") -> None:
        if done == 1:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_sweep(
            bars, k="4,5", families=["nmf"], seeds=1, workers=1, progress=stop_after_first_cell
        )
    with bars.store() as store:
        record = store.get_sweep()
    assert record is not None and record.status == "interrupted"  # the record itself says so
    doc, _ = _status(bars)
    assert [u["id"] for u in doc["unfinished_sweeps"]] == [record.id]
    # a forced new run of the same cells also clears the notice of the old record
    res = run_sweep(bars, k="4,5", families=["nmf"], seeds=1, workers=1, force=True)
    assert res.sweep_id != record.id
    doc, _ = _status(bars)
    assert doc["unfinished_sweeps"] == []
