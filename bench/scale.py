"""Raw files to a published version at scale: time, calls/s and peak memory of every stage.

    python bench/scale.py --n 50000                       # a fresh run in a temporary folder
    python bench/scale.py --n 1000000 --root /data/scale  # keep the files and the workspace
    python bench/scale.py --n 200000 --sample 50000 --k 20

The invented demo corpus of ``--n`` calls is written by the demo generator, which streams
(one call in memory at a time), with October's calls held back in ``inbox/``. Then each
stage runs as its own ``talkthemes`` command, as a user would run it:

``ingest``   the exports and their manifest
``prepare``  the speech chain
``sweep``    one K (``--k``), both families, one seed (on ``--sample`` calls when given)
``publish``  NMF at that K, fitted on every call
``assign``   the held-back calls, to a Parquet file
``refresh``  ingest the held-back calls and refresh the version

While a stage runs, the resident memory of its process and of every process it started
(the sweep's Dask workers) is sampled every 0.2 s; the table shows the stage's seconds,
calls per second, the command's own peak and the largest peak of any of its child
processes, and the peak of their sum. Not a test: it prints figures for
docs/performance.md ("A million calls").
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path

import psutil

GIB = 2**30
STAGES = ("ingest", "prepare", "sweep", "publish", "assign", "refresh")


def log(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


@dataclass
class Peak:
    """Peak resident memory of a process tree, sampled in a thread."""

    pid: int
    main: int = 0
    child: int = 0
    total: int = 0
    _stop: threading.Event = field(default_factory=threading.Event)

    def _sample(self) -> None:
        try:
            root = psutil.Process(self.pid)
        except psutil.NoSuchProcess:
            return
        while not self._stop.is_set():
            try:
                main = root.memory_info().rss
                kids = [c.memory_info().rss for c in root.children(recursive=True)]
            except psutil.Error:  # the process or a child ended between the two calls
                kids, main = [], self.main
            self.main = max(self.main, main)
            self.child = max(self.child, *kids, 0)
            self.total = max(self.total, main + sum(kids))
            self._stop.wait(0.2)

    def start(self) -> None:
        threading.Thread(target=self._sample, daemon=True).start()

    def stop(self) -> None:
        self._stop.set()


def run_stage(name: str, args: list[str], calls: int, logs: Path) -> dict:
    """Run one ``talkthemes`` command; its seconds, calls/s and peaks (exit on failure)."""
    cmd = [sys.executable, "-m", "talkthemes.cli", *args]
    log(f"[{name}] {' '.join(args)}")
    out = (logs / f"{name}.log").open("w")
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=out, stderr=subprocess.STDOUT)
    peak = Peak(proc.pid)
    peak.start()
    code = proc.wait()
    seconds = time.perf_counter() - t0
    peak.stop()
    out.close()
    if code not in (0, 3):  # 3: done, some inputs rejected
        log((logs / f"{name}.log").read_text()[-3000:])
        raise SystemExit(f"stage {name} failed with exit code {code}")
    return {
        "stage": name,
        "seconds": seconds,
        "calls": calls,
        "calls_per_s": calls / seconds if seconds else float("nan"),
        "peak_main_gib": peak.main / GIB,
        "peak_child_gib": peak.child / GIB,
        "peak_total_gib": peak.total / GIB,
    }


def generate(root: Path, n: int, seed: int) -> tuple[Path, Path, int, int]:
    """The demo corpus; (exports, inbox, calls in exports, calls in inbox)."""
    from talkthemes.demo.writer import write_demo

    t0 = time.perf_counter()
    files = write_demo(root / "demo", size=n, seed=seed, hold_back_last_month=True)
    held = sum(files.inbox_counts.values())
    log(f"generated {n:,} calls in {time.perf_counter() - t0:.0f} s ({held:,} held back)")
    assert files.inbox is not None
    return files.exports, files.inbox, n - held, held


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=50000, help="calls to generate")
    ap.add_argument("--k", type=int, default=20, help="the one topic count swept and published")
    ap.add_argument("--sample", type=int, default=0, help="sweep on this many calls (0 = all)")
    ap.add_argument("--root", type=Path, help="keep files and workspace here (default: temp)")
    ap.add_argument("--stages", default=",".join(STAGES), help="stages to run, in order")
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--json", type=Path, help="also write the table as JSON here")
    args = ap.parse_args()

    keep = args.root is not None
    root = args.root or Path(tempfile.mkdtemp(prefix="tt-bench-scale-"))
    root.mkdir(parents=True, exist_ok=True)
    logs = root / "logs"
    logs.mkdir(exist_ok=True)
    ws = root / "ws"
    try:
        if (root / "demo" / "demo.json").exists() and json.loads(
            (root / "demo" / "demo.json").read_text()
        ).get("size") == args.n:
            exports, inbox = root / "demo" / "exports", root / "demo" / "inbox"
            held = sum(json.loads((root / "demo" / "demo.json").read_text())["inbox"].values())
            stored = args.n - held
            log(f"reusing the {args.n:,} generated calls in {root / 'demo'}")
        else:
            exports, inbox, stored, held = generate(root, args.n, args.seed)
        wsa = ["-w", str(ws)]
        sample = ["--sample", str(args.sample)] if args.sample else []
        commands = {
            "ingest": (
                ["ingest", str(exports), "-m", str(exports / "manifest.csv"), "--create", *wsa],
                stored,
            ),
            "prepare": (["prepare", *wsa], stored),
            "sweep": (
                ["sweep", "--k", str(args.k), "--family", "lda,nmf", "--seeds", "1", *sample, *wsa],
                args.sample or stored,
            ),
            "publish": (["publish", "--k", str(args.k), "--family", "nmf", *wsa], stored),
            "assign": (["assign", str(inbox), "--out", str(root / "assigned.parquet"), *wsa], held),
            "refresh": (["refresh", "--ingest", str(inbox), *wsa], held),
        }
        rows = []
        for name in args.stages.split(","):
            command, calls = commands[name]
            rows.append(run_stage(name, command, calls, logs))
            r = rows[-1]
            log(
                f"[{name}] {r['seconds']:.0f} s, {r['calls_per_s']:,.0f} calls/s, peak "
                f"{r['peak_main_gib']:.2f} GiB (children {r['peak_child_gib']:.2f}, "
                f"together {r['peak_total_gib']:.2f})"
            )
        total = sum(r["seconds"] for r in rows if r["stage"] in ("ingest", "prepare", "sweep",
                                                                "publish"))  # fmt: skip
        print(f"\n{args.n:,} calls ({stored:,} stored first, {held:,} held back), K = {args.k}, "
              f"sweep sample {args.sample or 'all'}; cpu cores {os.cpu_count()}")  # fmt: skip
        print("| stage | seconds | calls/s | peak RSS, command | largest child | together |")
        print("|---|---:|---:|---:|---:|---:|")
        for r in rows:
            print(
                f"| {r['stage']} | {r['seconds']:,.0f} | {r['calls_per_s']:,.0f} | "
                f"{r['peak_main_gib']:.2f} GiB | {r['peak_child_gib']:.2f} GiB | "
                f"{r['peak_total_gib']:.2f} GiB |"
            )
        print(f"raw files → published version (ingest to publish): {total / 60:.1f} min")
        if args.json:
            args.json.write_text(json.dumps({"n": args.n, "k": args.k, "rows": rows}, indent=1))
    finally:
        if not keep:
            shutil.rmtree(root, ignore_errors=True)


if __name__ == "__main__":
    main()
