"""Benchmark of the viewer's sections (not a test): first render and re-render.

    python bench/viewer.py --size 20000                       # build a demo workspace, time
    python bench/viewer.py --workspace ./work                 # time a published workspace
    python bench/viewer.py --synthetic --size 1000000         # a version written directly

Building (when the workspace has no version): the invented demo corpus of ``--size`` calls
is written, ingested, prepared, swept (NMF, K = ``--k``, one seed) and published. With
``--synthetic`` the store rows and the version's files are written directly
(``bench/viewer_synthetic.py``: random shares, invented metadata), so the sections can be
timed at a million calls; Choose K is then skipped (no sweep; its cost does not grow with
the number of calls).

Per section:

* **first render** — what the section costs as the first page a fresh viewer process
  opens: loading the version and its viewer tables (what ``st.cache_resource`` then
  keeps), the map layout, the lemma table where the section highlights words, the
  section's data functions and building its charts' Vega-Lite specs;
* **re-render** — the same section again with the version and tables cached, data and
  charts recomputed (the viewer also caches frames and chart specs by input, so a real
  rerun with unchanged input costs less): median of ``--runs``.

"Calls, filtered" is the Calls list with a filter set (a queue), which reads every call's
share and metadata: its first render includes reading the whole metadata once.
Targets at 1,000,000 calls: re-render < 1.5 s, first render < 4 s per section.
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
import time
from pathlib import Path

TARGET_SECONDS = 1.5
TARGET_FIRST_SECONDS = 4.0


def log(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


def build(root: Path, size: int, k: int) -> None:
    """Create a published demo workspace of ``size`` calls at ``root``."""
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep.run import run_sweep
    from talkthemes.versions.publish import publish
    from talkthemes.workspace import Workspace

    ws = Workspace(root)
    ws.init()
    t0 = time.perf_counter()
    log(f"writing {size:,} demo calls …")
    files = write_demo(root / "demo-source", size=size, seed=7)
    with ws.lock("bench"):
        log("ingesting …")
        ingest(ws, [files.exports], manifests=[files.manifest])
        log("preparing …")
        run_prepare(ws)
        log(f"sweeping NMF K = {k} …")
        run_sweep(ws, k=str(k), families=["nmf"], seeds=1)
        log("publishing …")
        publish(ws, k=k, family="nmf")
    log(f"built in {time.perf_counter() - t0:,.0f} s")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--size", type=int, default=20_000, help="calls to build")
    parser.add_argument("--workspace", type=Path, help="use (or build into) this folder")
    parser.add_argument("--k", type=int, default=20, help="themes of the built version")
    parser.add_argument("--runs", type=int, default=5, help="re-renders per section")
    parser.add_argument("--keep", action="store_true", help="keep a built temporary workspace")
    parser.add_argument(
        "--synthetic", action="store_true", help="write the version directly (random shares)"
    )
    args = parser.parse_args()

    sys.path.insert(0, str(Path(__file__).parent))
    from talkthemes import view
    from talkthemes.workspace import Workspace
    from viewer_sections import run_sections

    tmp = None
    root = args.workspace
    if root is None:
        tmp = Path(tempfile.mkdtemp(prefix="tt-bench-viewer-"))
        root = tmp / "ws"
    ws = Workspace(root)
    if view.readiness(ws).version is None:
        if args.synthetic:
            from viewer_synthetic import write_synthetic

            built = write_synthetic(root, args.size, args.k, log=log)
            print("synthetic workspace written: " + ", ".join(
                f"{k} {v:,.1f} s" for k, v in built.items()))  # fmt: skip
        else:
            build(root, args.size, args.k)
    worst_first, worst_again = run_sections(ws, args.runs)
    if tmp is not None:
        if args.keep:
            log(f"kept {root}")
        else:
            shutil.rmtree(tmp, ignore_errors=True)
    ok = worst_again < TARGET_SECONDS and worst_first < TARGET_FIRST_SECONDS
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
