"""The service as a user runs it: ``talkthemes serve`` in its own process (uvicorn on a
free port of this machine), ``httpx`` as the client.

One run covers: answering over the wire with tokens checked; 20 concurrent assign
requests while a refresh job publishes the next version (every request answered, each
from one consistent version); a graceful stop on SIGTERM; a restart that keeps the tokens.
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from contextlib import contextmanager
from pathlib import Path

import httpx
import pytest
from tests.service.conftest import copy_workspace

import talkthemes as tt
from talkthemes.demo.records import DemoFiles

#: Whole calls (a caller who says it over and over): each has the version's
#: ``[prepare] min_tokens`` words it knows, so each gets a lead theme and its shares.
TEXTS = [
    "Customer: " + " ".join([said] * 7)
    for said in (
        "my smart meter display has gone blank and shows no meter reading.",
        "you took the direct debit payment twice this month, I want a refund.",
        "water is leaking from a pipe in the street outside my house.",
        "I am moving house next week and need a final bill and a meter reading.",
    )
]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@contextmanager
def serving(
    root: Path, env: dict[str, str] | None = None
) -> Iterator[tuple[str, subprocess.Popen]]:
    """``talkthemes serve`` on a free port until the block ends (then SIGTERM)."""
    port = free_port()
    process = subprocess.Popen(
        [sys.executable, "-m", "talkthemes.cli", "serve", "-w", str(root), "--port", str(port)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        env={**os.environ, **(env or {})},
    )
    url = f"http://127.0.0.1:{port}"
    try:
        end = time.monotonic() + 60
        while True:
            try:
                if httpx.get(f"{url}/v1/health", timeout=2).status_code == 200:
                    break
            except httpx.TransportError:
                pass
            if process.poll() is not None or time.monotonic() > end:
                raise AssertionError(process.stderr.read().decode() if process.stderr else "")
            time.sleep(0.2)
        yield url, process
    finally:
        if process.poll() is None:
            process.send_signal(signal.SIGTERM)
            try:
                process.wait(30)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait()


def themes_of(client: httpx.Client, version: int) -> list[int]:
    body = client.get("/v1/themes", params={"version": version}).json()
    return [t["theme_id"] for t in body["themes"]]


@pytest.mark.slow
def test_the_service_end_to_end(published_root: Path, tmp_path: Path, demo: DemoFiles) -> None:
    ws = copy_workspace(published_root, tmp_path / "ws")
    read = ws.add_token("dashboard", "read").token
    write = ws.add_token("scheduler", "write").token
    ws.ingest(demo.inbox)  # the held-back month has arrived
    pause = {"TALKTHEMES_TEST_PAUSE_AT": "version-folder", "TALKTHEMES_TEST_PAUSE_SECONDS": "4"}
    with serving(ws.root, pause) as (url, process):
        reader = httpx.Client(base_url=url, headers={"Authorization": f"Bearer {read}"})
        writer = httpx.Client(base_url=url, headers={"Authorization": f"Bearer {write}"})
        # tokens over the wire
        assert httpx.get(f"{url}/v1/themes").status_code == 401
        assert reader.post("/v1/refresh", json={}).status_code == 403
        assert reader.get("/v1/themes").json()["version"] == 1
        assert "<h1>talkthemes" in httpx.get(f"{url}/docs").text
        assert httpx.get(f"{url}/openapi.json").json()["openapi"].startswith("3.1")

        job = writer.post("/v1/refresh", json={}).json()
        end = time.monotonic() + 120
        while reader.get(f"/v1/jobs/{job['job_id']}").json()["state"] == "starting":
            assert time.monotonic() < end
            time.sleep(0.1)
        items = {"items": [{"id": f"c{i}", "text": t} for i, t in enumerate(TEXTS)]}

        def ask(_: int) -> httpx.Response:
            with httpx.Client(base_url=url, headers=reader.headers, timeout=60) as c:
                return c.post("/v1/assign", json=items)

        with ThreadPoolExecutor(20) as pool:
            answers = list(pool.map(ask, range(20)))
        state_after = reader.get(f"/v1/jobs/{job['job_id']}").json()["state"]
        while reader.get(f"/v1/jobs/{job['job_id']}").json()["state"] not in ("done", "failed"):
            assert time.monotonic() < end
            time.sleep(0.2)
        done = reader.get(f"/v1/jobs/{job['job_id']}").json()
        assert done["state"] == "done", done
        assert state_after == "running"  # the answers came while the refresh ran

        assert [a.status_code for a in answers] == [200] * 20
        by_version = {1: themes_of(reader, 1), 2: themes_of(reader, 2)}
        for answer in answers:
            body = answer.json()
            ids = by_version[body["version"]]
            for result in body["results"]:  # every share from that one version's themes
                assert [s["theme_id"] for s in result["shares"]] == ids
        assert reader.get("/v1/versions").json()["current"] == 2

        # a graceful stop: uvicorn finishes, then ends by the signal it was sent (as
        # systemd expects of a service stopped with SIGTERM)
        process.send_signal(signal.SIGTERM)
        assert process.wait(30) in (0, -signal.SIGTERM)
        log = process.stderr.read().decode() if process.stderr else ""
        assert "Application shutdown complete" in log and "Traceback" not in log

    # a restart keeps the tokens (and a revocation made meanwhile is honoured)
    tt.Workspace.open(ws.root).revoke_token("dashboard")
    with serving(ws.root) as (url, _):
        assert (
            httpx.get(f"{url}/v1/versions", headers={"Authorization": f"Bearer {write}"}).json()[
                "current"
            ]
            == 2
        )
        gone = httpx.get(f"{url}/v1/versions", headers={"Authorization": f"Bearer {read}"})
        assert gone.status_code == 401
