"""The same sweep code on a real Dask cluster: a `dask scheduler` and two `dask worker`
processes started here on 127.0.0.1, workers reading the prep from the workspace path."""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.preps import install_prep

from talkthemes.sweep.run import run_sweep
from talkthemes.workspace import Workspace

DASK = Path(sys.executable).with_name("dask")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture
def cluster(tmp_path: Path):
    if not DASK.exists():
        pytest.skip("the dask command is not installed next to this Python")
    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    env = {**os.environ, "DASK_DISTRIBUTED__WORKER__DAEMON": "False"}
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
    for i in range(2):
        procs.append(
            subprocess.Popen(
                [
                    str(DASK),
                    "worker",
                    address,
                    "--nthreads",
                    "1",
                    "--nworkers",
                    "1",
                    "--no-dashboard",
                    "--host",
                    "127.0.0.1",
                    "--name",
                    f"w{i}",
                ],
                stdout=(logs / f"worker{i}.log").open("w"),
                stderr=subprocess.STDOUT,
                env=env,
            )
        )
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
                    "the test cluster did not start: " + (logs / "scheduler.log").read_text()
                )
            time.sleep(0.5)
        yield address
    finally:
        for p in procs[::-1]:
            p.terminate()
        for p in procs:
            try:
                p.wait(timeout=20)
            except subprocess.TimeoutExpired:
                p.kill()


def test_sweep_on_an_external_scheduler_with_two_workers(tmp_path: Path, cluster: str) -> None:
    ws = Workspace(tmp_path / "ws")
    ws.init()
    _, _, texts = make_bars_corpus(200, seed=5)
    install_prep(ws, pixel_names(), texts)
    res = run_sweep(ws, k="5,10", families=["nmf", "lda"], seeds=2, scheduler=cluster)
    assert len(res.cells) == 8
    assert set(res.recommendations) == {"lda", "nmf"}
    from distributed import Client

    with Client(cluster) as c:  # both workers did work
        logs = c.run(lambda: sorted(__import__("talkthemes.sweep.cell").sweep.cell._PREP_CACHE))
    assert len(logs) == 2
    assert all(v for v in logs.values()), logs  # each worker loaded the prep from the path
