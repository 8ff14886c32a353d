"""Ingest throughput: transcripts/s and MB/s for N invented demo calls, and peak memory.

Usage::

    .venv/bin/python bench/ingest.py [--n 20000] [--repeat 3]

Writes N demo calls as speaker-labelled ``.txt`` files (about 3 KB each) into a temporary
folder, then ingests them into a fresh workspace ``--repeat`` times and prints the median.
Not a test: it prints figures for docs/performance.md.
"""

from __future__ import annotations

import argparse
import resource
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

from talkthemes.demo.calls import iter_demo_calls
from talkthemes.demo.render import render_txt
from talkthemes.ingest.run import ingest
from talkthemes.workspace import Workspace


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=20000, help="number of transcripts")
    ap.add_argument("--repeat", type=int, default=3, help="ingest runs (median is printed)")
    ap.add_argument("--seed", type=int, default=11)
    args = ap.parse_args()

    tmp = Path(tempfile.mkdtemp(prefix="tt-bench-ingest-"))
    try:
        src = tmp / "calls"
        t0 = time.perf_counter()
        n_bytes = 0
        for i, call in enumerate(iter_demo_calls(args.n, args.seed)):
            sub = src / f"{i // 1000:03d}"
            if i % 1000 == 0:
                sub.mkdir(parents=True, exist_ok=True)
            data = render_txt(call).encode("utf-8")
            n_bytes += len(data)
            (sub / f"{call.call_id}.txt").write_bytes(data)
        gen_s = time.perf_counter() - t0
        print(
            f"generated {args.n:,} files, {n_bytes / 1e6:.1f} MB "
            f"({n_bytes / args.n / 1e3:.2f} KB/file) in {gen_s:.1f} s"
        )

        times = []
        for r in range(args.repeat):
            ws = Workspace(tmp / f"ws{r}")
            ws.init()
            t0 = time.perf_counter()
            with ws.lock("bench"):
                report = ingest(ws, [src])
            times.append(time.perf_counter() - t0)
            assert report.total("added") == args.n, report.to_json()["totals"]
            shutil.rmtree(ws.root)
        med = statistics.median(times)
        peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        print(f"ingest runs (s): {', '.join(f'{t:.2f}' for t in times)}")
        print(
            f"median: {med:.2f} s  →  {args.n / med:,.0f} transcripts/s, "
            f"{n_bytes / 1e6 / med:.1f} MB/s"
        )
        print(f"peak memory (max RSS of this process): {peak_mb:,.0f} MB")
        print(f"python {sys.version.split()[0]}")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
