"""Benchmark of the HTTP service's ``POST /v1/assign`` (not a test).

    python bench/service.py                       # 4,000 training calls, LDA K=12
    python bench/service.py --train 2000 --family nmf --k 8

Steps:

1. Setup (timed, not part of the figures): a temporary workspace holding ``--train`` demo
   calls is ingested, prepared and a version of ``--family`` at ``--k`` published, through
   the public API; a read token is made.
2. ``--pool`` other demo calls (another generator seed) are read into records (their
   turns), as a call-recording pipeline would post them.
3. ``talkthemes serve`` starts in its own process on a free port of 127.0.0.1 (uvicorn,
   ``[service] threads`` at its default), and is warmed up (the first request loads the
   version and compiles the LDA E-step).
4. For 1 and 50 transcripts per request, with 1 and 8 concurrent clients (threads, each
   with its own keep-alive ``httpx`` connection), ``--requests`` requests are sent (at most
   ``--seconds`` each run). Printed per run: requests/s, transcripts/s, and the latency
   percentiles p50 and p95 (milliseconds) over the requests.

Targets (issue 15): at least 300 transcripts/s through HTTP with 8 clients, and p95 under
500 ms for single-transcript requests. Only this machine's loopback address is used.
"""

from __future__ import annotations

import argparse
import json
import os
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path
from typing import Any

import httpx
import numpy as np


def setup(root: Path, train: int, family: str, k: int) -> tuple[float, str]:
    """A workspace at ``root/ws`` with one published version; (seconds, read token)."""
    import talkthemes as tt
    from talkthemes.demo.writer import write_demo

    t0 = time.perf_counter()
    files = write_demo(root / "train", size=train, seed=7)
    ws = tt.Workspace.create(root / "ws")
    ws.ingest([files.exports], manifests=[files.manifest])
    ws.prepare()
    ws.publish(k=k, family=family)
    token = ws.add_token("bench", "read").token
    return time.perf_counter() - t0, token


def records(root: Path, n: int) -> list[dict[str, Any]]:
    """``n`` new demo calls as records with their turns."""
    from talkthemes.assign import read_transcripts
    from talkthemes.calls.model import Transcript
    from talkthemes.config import IngestSettings
    from talkthemes.demo.writer import write_demo

    files = write_demo(root / "new", size=n, seed=11)
    out = []
    for item in read_transcripts([files.exports], IngestSettings(), skip=[files.manifest]):
        if isinstance(item, Transcript):
            turns = [{"speaker": u.speaker, "text": u.text} for u in item.turns]
            out.append({"id": item.tid, "turns": turns})
    return out


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def serve(root: Path) -> tuple[subprocess.Popen, str]:
    port = free_port()
    process = subprocess.Popen(
        [sys.executable, "-m", "talkthemes.cli", "serve", "-w", str(root / "ws"),
         "--port", str(port)],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )  # fmt: skip
    url = f"http://127.0.0.1:{port}"
    end = time.monotonic() + 120
    while time.monotonic() < end:
        try:
            if httpx.get(f"{url}/v1/health", timeout=2).status_code == 200:
                return process, url
        except httpx.TransportError:
            time.sleep(0.2)
    process.kill()
    raise SystemExit("the service did not start")


def run(
    url: str, token: str, pool: list[dict[str, Any]], batch: int, clients: int, n: int,
    seconds: float,
) -> dict[str, float]:  # fmt: skip
    """``n`` requests of ``batch`` transcripts from ``clients`` threads."""
    latencies: list[float] = []
    lock = threading.Lock()
    counter = iter(range(n))
    deadline = time.monotonic() + seconds
    failures = []

    def client() -> None:
        with httpx.Client(
            base_url=url, headers={"Authorization": f"Bearer {token}"}, timeout=60
        ) as c:
            while time.monotonic() < deadline:
                with lock:
                    i = next(counter, None)
                if i is None:
                    return
                start = (i * batch) % max(1, len(pool) - batch)
                body = {"items": pool[start : start + batch]}
                t0 = time.perf_counter()
                res = c.post("/v1/assign", json=body)
                elapsed = time.perf_counter() - t0
                with lock:
                    latencies.append(elapsed)
                    if res.status_code != 200:
                        failures.append(res.status_code)

    t0 = time.perf_counter()
    threads = [threading.Thread(target=client) for _ in range(clients)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    wall = time.perf_counter() - t0
    ms = np.asarray(latencies) * 1000
    return {
        "batch": batch,
        "clients": clients,
        "requests": len(latencies),
        "failed": len(failures),
        "requests_per_s": len(latencies) / wall,
        "transcripts_per_s": len(latencies) * batch / wall,
        "p50_ms": float(np.percentile(ms, 50)),
        "p95_ms": float(np.percentile(ms, 95)),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--train", type=int, default=4000)
    parser.add_argument("--family", default="lda")
    parser.add_argument("--k", type=int, default=12)
    parser.add_argument("--pool", type=int, default=1000, help="new calls to assign")
    parser.add_argument("--requests", type=int, default=300, help="requests per run (1/req)")
    parser.add_argument("--seconds", type=float, default=60, help="longest run")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="tt-bench-service-") as tmp:
        root = Path(tmp)
        setup_s, token = setup(root, args.train, args.family, args.k)
        pool = records(root, args.pool)
        words = np.mean([sum(len(t["text"].split()) for t in r["turns"]) for r in pool])
        print(
            f"setup {setup_s:.1f} s: {args.train} training calls, {args.family} K={args.k}; "
            f"{len(pool)} new calls of {words:.0f} words on average; cores: {os.cpu_count()}"
        )
        process, url = serve(root)
        try:
            run(url, token, pool, 50, 2, 6, args.seconds)  # warm-up
            results = []
            for batch in (1, 50):
                for clients in (1, 8):
                    n = args.requests if batch == 1 else max(16, args.requests // 5)
                    r = run(url, token, pool, batch, clients, n, args.seconds)
                    results.append(r)
                    print(
                        f"{batch:>3} per request, {clients} client(s): {r['requests']:>4} "
                        f"requests, {r['requests_per_s']:7.1f} req/s, "
                        f"{r['transcripts_per_s']:7.1f} transcripts/s, "
                        f"p50 {r['p50_ms']:6.1f} ms, p95 {r['p95_ms']:6.1f} ms"
                        + (f", {r['failed']} failed" if r["failed"] else "")
                    )
            print(json.dumps({"setup_s": setup_s, "runs": results}))
        finally:
            process.send_signal(signal.SIGTERM)
            process.wait(30)


if __name__ == "__main__":
    main()
