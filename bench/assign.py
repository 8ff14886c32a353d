"""Benchmark of ``talkthemes assign`` on the invented demo corpus (not a test).

    python bench/assign.py                    # 4,000 calls, LDA K=12
    python bench/assign.py 10000 --family nmf

Steps:

1. Setup (timed, not part of the figure): a temporary workspace holding ``--train`` demo
   calls is ingested, prepared, and a version of ``--family`` at ``--k`` is published.
2. N other demo calls (another generator seed) are written as files in the demo's mixed
   formats (``.txt``, WebVTT, a per-turn CSV, with a manifest).
3. In a fresh child process, :func:`talkthemes.assign.assign` reads those files, prepares
   them the version's way, infers their shares and writes a Parquet file. The figure is
   transcripts per second of that whole call; library imports are timed apart (they are
   paid once per process).

The target is at least 500 transcripts/s for calls of about 400 words on the 2-core
machine; the mean words per call is printed next to the figure.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def setup(root: Path, train: int, family: str, k: int) -> float:
    """Create a workspace at ``root/ws`` with one published version; returns seconds."""
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep.run import load_current_prep
    from talkthemes.versions.fit import fit_version
    from talkthemes.versions.write import write_version
    from talkthemes.workspace import Workspace

    t0 = time.perf_counter()
    files = write_demo(root / "train", size=train, seed=7)
    ws = Workspace(root / "ws")
    ws.init()
    with ws.lock("bench"):
        ingest(ws, [files.exports], manifests=[files.manifest])
        run_prepare(ws)
        prep, folder = load_current_prep(ws)
        corpus = PreparedCorpus.load(folder)
        fitted = fit_version(ws, corpus, family=family, k=k, seed=0, prep_hash=prep.hash)
        write_version(ws, fitted)
    return time.perf_counter() - t0


def child(root: Path) -> dict[str, float]:
    """Run assign in this (fresh) process and return the figures."""
    t0 = time.perf_counter()
    import gensim  # noqa: F401  (imports timed apart: paid once per process)
    import spacy  # noqa: F401

    from talkthemes.assign import assign
    from talkthemes.workspace import Workspace

    imports = time.perf_counter() - t0
    result = assign(
        Workspace(root / "ws"),
        [root / "new" / "exports"],
        out=root / "shares.parquet",
    )
    return {
        "imports_s": imports,
        "rows": result.rows,
        "assigned": result.assigned,
        "seconds": result.seconds,
        "per_second": result.per_second,
        "rejected": len(result.rejects),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("n", nargs="?", type=int, default=4000, help="calls to assign")
    parser.add_argument("--train", type=int, default=1500, help="calls in the published version")
    parser.add_argument("--family", choices=("lda", "nmf"), default="lda")
    parser.add_argument("--k", type=int, default=12)
    parser.add_argument("--child", type=Path, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child is not None:
        print(json.dumps(child(args.child)))
        return

    from talkthemes.demo.calls import iter_demo_calls
    from talkthemes.demo.writer import write_demo

    with tempfile.TemporaryDirectory(prefix="talkthemes-bench-assign-") as tmp:
        root = Path(tmp)
        print(f"setup: {args.train:,} calls, {args.family} K={args.k} …", flush=True)
        seconds = setup(root, args.train, args.family, args.k)
        print(f"setup done in {seconds:.1f} s", flush=True)
        write_demo(root / "new", size=args.n, seed=11)
        words = [sum(len(t.text.split()) for t in c.turns) for c in iter_demo_calls(args.n, 11)]
        cmd = [sys.executable, __file__, "--child", str(root)]
        res = json.loads(subprocess.run(cmd, check=True, capture_output=True, text=True).stdout)
        mean_words = sum(words) / max(1, len(words))
        print(
            f"assign: {res['rows']:,} calls (mean {mean_words:.0f} words) in "
            f"{res['seconds']:.2f} s = {res['per_second']:,.0f} transcripts/s "
            f"({res['assigned']:,} with a lead theme, {res['rejected']} inputs rejected; "
            f"library imports {res['imports_s']:.1f} s before that, once per process)"
        )


if __name__ == "__main__":
    main()
