"""What this machine gives two processes: the speed-up of a trivially parallel job.

Usage::

    .venv/bin/python bench/parallel_ceiling.py [--tasks 4] [--repeat 3]

Runs the same CPU-bound task (single-threaded numpy products plus a pure-Python loop, no I/O,
no communication) ``--tasks`` times in one process, then spread over a pool of two processes,
and prints the speed-up of each repeat. On a dedicated 2-core machine it is close to 2×; on a
shared one it shows how much of the second core other work leaves, which bounds the speed-up
any two-worker sweep can reach in the same minutes. Not a test: it prints figures for
docs/performance.md.
"""

from __future__ import annotations

import argparse
import multiprocessing
import statistics
import time

import numpy as np
from threadpoolctl import threadpool_limits


def _task(seed: int) -> float:
    with threadpool_limits(1):
        a = np.random.default_rng(seed).random((400, 400))
        for _ in range(60):
            a = a @ a
            a /= a.max()
    total = 0
    for i in range(3_000_000):
        total += i * i
    return float(a[0, 0]) + total * 0.0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--tasks", type=int, default=4)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    ratios = []
    ctx = multiprocessing.get_context("forkserver")
    with ctx.Pool(2) as pool:
        pool.map(_task, range(2))  # start both processes before timing
        for _ in range(args.repeat):
            t = time.perf_counter()
            for i in range(args.tasks):
                _task(i)
            one = time.perf_counter() - t
            t = time.perf_counter()
            pool.map(_task, range(args.tasks), chunksize=1)
            two = time.perf_counter() - t
            ratios.append(one / two)
            print(f"1 process {one:.2f} s, 2 processes {two:.2f} s → {one / two:.2f}×")
    print(f"median speed-up of 2 processes over 1: {statistics.median(ratios):.2f}×")


if __name__ == "__main__":
    main()
