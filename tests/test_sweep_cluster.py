"""The same sweep code on a real Dask cluster whose workers share no disk with the client.

A `dask scheduler` and two `dask worker` processes are started here on 127.0.0.1. Where the
kernel allows it (`unshare` of a user and mount namespace), each worker runs with the test's
whole temporary folder — the workspace included — hidden under an empty tmpfs, so a worker
that opened a workspace path would fail; the sweep must still finish, its inputs travelling
to the workers and its results back to the client, which alone writes the workspace.
Faults: a worker killed (SIGKILL) while it fits a cell.
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import subprocess
import sys
import threading
import time
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pytest
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.preps import install_prep

from talkthemes.sweep.run import SweepResult, run_sweep
from talkthemes.workspace import Workspace

DASK = Path(sys.executable).with_name("dask")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _can_mask() -> bool:
    """Whether this kernel lets us hide a folder from a process (user + mount namespace)."""
    if shutil.which("unshare") is None:
        return False
    probe = subprocess.run(
        ["unshare", "-rm", "sh", "-c", "mount -t tmpfs none /mnt"],
        capture_output=True,
        check=False,
    )
    return probe.returncode == 0


class Cluster:
    """Addresses and processes of a test cluster."""

    def __init__(self, address: str, workers: list[subprocess.Popen], masked: Path | None):
        self.address = address
        self.workers = workers
        self.masked = masked


def _start(
    tmp_path: Path, *, masked: bool, allowed_failures: int = 3, pause: float = 0.0
) -> Iterator[Cluster]:
    if not DASK.exists():
        pytest.skip("the dask command is not installed next to this Python")
    if masked and not _can_mask():
        pytest.skip("unshare of a user and mount namespace is not permitted here")
    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    env = {
        **os.environ,
        "DASK_DISTRIBUTED__WORKER__DAEMON": "False",
        "DASK_DISTRIBUTED__SCHEDULER__ALLOWED_FAILURES": str(allowed_failures),
    }
    worker_env = dict(env)
    if pause:
        worker_env["TALKTHEMES_TEST_PAUSE_AT"] = "sweep-fit"
        worker_env["TALKTHEMES_TEST_PAUSE_SECONDS"] = str(pause)
    logs = tmp_path / "logs"
    logs.mkdir()
    procs = [
        subprocess.Popen(
            [str(DASK), "scheduler", "--host", "127.0.0.1", "--port", str(port), "--no-dashboard"],
            stdout=(logs / "scheduler.log").open("w"),
            stderr=subprocess.STDOUT,
            env=env,
        )
    ]
    workers = []
    for i in range(2):
        cmd = [
            str(DASK), "worker", address, "--nthreads", "1", "--nworkers", "1",
            "--no-nanny", "--no-dashboard", "--host", "127.0.0.1", "--name", f"w{i}",
        ]  # fmt: skip
        if masked:
            # the whole test folder, workspace included, is an empty tmpfs for this worker
            hide = f"mount -t tmpfs none {tmp_path} && exec " + " ".join(cmd)
            cmd = ["unshare", "-rm", "sh", "-c", hide]
        proc = subprocess.Popen(
            cmd,
            stdout=(logs / f"worker{i}.log").open("w"),
            stderr=subprocess.STDOUT,
            env=worker_env,
            cwd="/",
        )
        procs.append(proc)
        workers.append(proc)
    try:
        from distributed import Client

        deadline = time.time() + 60
        while True:
            try:
                with Client(address, timeout="5s") as c:
                    if len(c.scheduler_info()["workers"]) == 2:
                        break
            except OSError:
                pass
            if time.time() > deadline:
                raise RuntimeError(
                    "the test cluster did not start: "
                    + "".join(p.read_text() for p in sorted(logs.iterdir()))
                )
            time.sleep(0.5)
        yield Cluster(address, workers, tmp_path if masked else None)
    finally:
        for p in procs[::-1]:
            p.terminate()
        for p in procs:
            try:
                p.wait(timeout=20)
            except subprocess.TimeoutExpired:
                p.kill()


@pytest.fixture
def masked_cluster(tmp_path: Path) -> Iterator[Cluster]:
    yield from _start(tmp_path, masked=True)


def _workspace(tmp_path: Path) -> Workspace:
    ws = Workspace(tmp_path / "ws")
    ws.init()
    _, _, texts = make_bars_corpus(200, seed=5)
    install_prep(ws, pixel_names(), texts)
    return ws


def test_workers_that_cannot_see_the_workspace_run_the_whole_sweep(
    tmp_path: Path, masked_cluster: Cluster
) -> None:
    ws = _workspace(tmp_path)
    from distributed import Client

    with Client(masked_cluster.address) as c:
        # the premise: neither worker can reach the workspace, the client can
        seen = c.run(os.path.exists, str(ws.root))
        assert seen and not any(seen.values()), seen
        assert ws.root.exists()
        res = run_sweep(
            ws, k="5,10", families=["nmf", "lda"], seeds=2, scheduler=masked_cluster.address
        )
        # keys of the sweep cells each worker's log shows (a lambda: the workers cannot
        # import this test module)
        ran = c.run(
            lambda dask_worker: {
                str(e[0]) for e in dask_worker.state.log if "talkthemes-sweep" in str(e[0])
            }
        )
    assert len(res.cells) == 8 and not res.failed
    assert set(res.recommendations) == {"lda", "nmf"}
    # both workers fitted cells, and together all of them
    assert all(ran.values()), ran
    assert set().union(*ran.values()) == {
        f"talkthemes-sweep{res.sweep_id}-{cell}" for cell in res.cells["cell"]
    }
    # the client wrote every cell's topics, with the shape of the cell
    vocab = len(pixel_names())
    for row in res.cells.itertuples():
        topics = np.load(res.folder / "topics" / f"{row.cell}.npy", allow_pickle=False)
        assert topics.shape == (row.k, vocab)
        assert np.allclose(topics.sum(axis=1), 1.0, atol=1e-3) or row.family == "nmf"


def test_the_same_cells_as_on_the_local_cluster(tmp_path: Path, masked_cluster: Cluster) -> None:
    """A cell's result depends on its inputs and seed only, not on where it ran."""
    ws = _workspace(tmp_path)
    remote = run_sweep(
        ws, k="6", families=["nmf", "lda"], seeds=1, scheduler=masked_cluster.address
    )
    local = run_sweep(ws, k="6", families=["nmf", "lda"], seeds=1, workers=1, force=True)
    for row in remote.cells.itertuples():
        a = np.load(remote.folder / "topics" / f"{row.cell}.npy", allow_pickle=False)
        b = np.load(local.folder / "topics" / f"{row.cell}.npy", allow_pickle=False)
        np.testing.assert_allclose(a, b, rtol=1e-4, atol=1e-6)


def _kill_a_busy_worker(address: str, stop: threading.Event) -> int | None:
    """SIGKILL the first worker seen fitting a cell; its pid, or None when none was seen."""
    from distributed import Client

    with Client(address) as c:
        pids = c.run(os.getpid)
        while not stop.is_set():
            busy = [w for w, keys in c.processing().items() if keys]
            if busy:
                os.kill(pids[busy[0]], signal.SIGKILL)
                return pids[busy[0]]
            time.sleep(0.05)
    return None


def _sweep_in_thread(ws: Workspace, address: str) -> tuple[threading.Thread, list]:
    out: list = []

    def target() -> None:
        try:
            out.append(run_sweep(ws, k="5,8", families=["nmf"], seeds=2, scheduler=address))
        except BaseException as exc:  # handed to the test thread
            out.append(exc)

    thread = threading.Thread(target=target)
    thread.start()
    return thread, out


@pytest.fixture
def slow_cluster(tmp_path: Path) -> Iterator[Cluster]:
    # every cell sleeps 1.5 s on its worker first, so a kill lands on a running cell
    yield from _start(tmp_path, masked=False, pause=1.5)


def test_a_cell_whose_worker_is_killed_runs_again_on_the_other(
    tmp_path: Path, slow_cluster: Cluster
) -> None:
    ws = _workspace(tmp_path)
    thread, out = _sweep_in_thread(ws, slow_cluster.address)
    stop = threading.Event()
    killed = _kill_a_busy_worker(slow_cluster.address, stop)
    thread.join(timeout=120)
    stop.set()
    [victim] = [w for w in slow_cluster.workers if w.pid == killed]
    assert victim.wait(timeout=10) == -signal.SIGKILL  # it died, mid-cell
    [res] = out
    assert isinstance(res, SweepResult), res
    assert len(res.cells) == 4 and not res.failed
    with ws.store() as store:
        assert store.get_sweep(res.sweep_id).status == "done"


@pytest.fixture
def strict_cluster(tmp_path: Path) -> Iterator[Cluster]:
    # the scheduler gives up on a cell the first time its worker dies
    yield from _start(tmp_path, masked=False, allowed_failures=0, pause=1.5)


def test_a_sweep_that_loses_a_cell_says_so_and_resumes_on_rerun(
    tmp_path: Path, strict_cluster: Cluster
) -> None:
    ws = _workspace(tmp_path)
    thread, out = _sweep_in_thread(ws, strict_cluster.address)
    stop = threading.Event()
    assert _kill_a_busy_worker(strict_cluster.address, stop) is not None
    thread.join(timeout=120)
    stop.set()
    [res] = out
    assert isinstance(res, SweepResult), res
    assert res.failed, "the killed cell should be reported"
    # the cells the dead worker held (running or queued there) are named, with what to do
    for lost in res.failed:
        assert lost["error"].startswith("KilledWorker"), lost
        assert "run the same sweep again" in lost["error"]
    kept = len(res.cells)
    assert kept >= 1 and kept + len(res.failed) == 4  # the finished cells are stored
    with ws.store() as store:
        assert store.get_sweep(res.sweep_id).status == "incomplete"
    # rerun on the worker that is left: only the missing cells are fitted
    again = run_sweep(ws, k="5,8", families=["nmf"], seeds=2, scheduler=strict_cluster.address)
    assert again.sweep_id == res.sweep_id
    assert len(again.cells) == 4 and not again.failed
    assert again.reused_cells == kept
