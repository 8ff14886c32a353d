"""Benchmark of the labelling aids a version is written with (not a test).

    python bench/labelling.py --size 20000 --k 20            # build a demo workspace, then time
    python bench/labelling.py --workspace ./work             # time an existing published one
    python bench/labelling.py --size 5000 --keep --workspace /tmp/bench-5k --runs 5

Building (when the workspace has no version): the invented demo corpus of ``--size`` calls is
written, ingested, prepared and published as NMF at K = ``--k`` (fitted without a sweep).

Timing, as the median of ``--runs`` repetitions on the current version: the suggested names
(:func:`talkthemes.versions.naming.suggest_names`), the evidence sentences
(:func:`talkthemes.versions.evidence_build.build_evidence`: reading the candidate calls,
preparing their sentences with the frozen prep, choosing by maximal marginal relevance), and
what a screen pays to show them (loading the version and reading ``evidence.json``). The
evidence work is bounded by 40 calls per theme, so it should grow with K, not with the
number of calls.
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any


def log(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


def build(root: Path, size: int, k: int) -> None:
    """Create a published demo workspace of ``size`` calls at ``root``."""
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.run import run_prepare
    from talkthemes.versions.publish import publish
    from talkthemes.workspace import Workspace

    ws = Workspace(root)
    ws.init()
    log(f"writing {size:,} demo calls …")
    files = write_demo(root / "demo-source", size=size, seed=7)
    with ws.lock("bench"):
        log("ingesting …")
        ingest(ws, [files.exports], manifests=[files.manifest])
        log("preparing …")
        run_prepare(ws)
        log(f"publishing NMF K = {k} …")
        publish(ws, k=k, family="nmf")


def timed(fn: Callable[[], Any], runs: int) -> tuple[float, Any]:
    """Median wall time of ``runs`` calls, and the last result."""
    seconds, result = [], None
    for _ in range(runs):
        t0 = time.perf_counter()
        result = fn()
        seconds.append(time.perf_counter() - t0)
    return statistics.median(seconds), result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--workspace", type=Path, help="a published workspace (or where to build)")
    parser.add_argument("--size", type=int, default=5000, help="demo calls to build")
    parser.add_argument("--k", type=int, default=20, help="themes of the built version")
    parser.add_argument("--runs", type=int, default=3, help="repetitions (the median is shown)")
    parser.add_argument("--keep", action="store_true", help="keep a built workspace")
    args = parser.parse_args()

    from talkthemes.prepare.frozen import load_prep_spec
    from talkthemes.versions.evidence_build import build_evidence
    from talkthemes.versions.load import load_version
    from talkthemes.versions.naming import suggest_names
    from talkthemes.workspace import Workspace

    root = args.workspace or Path(tempfile.mkdtemp(prefix="bench-labelling-")) / "ws"
    built = not (root / "versions").is_dir()
    if built:
        build(root, args.size, args.k)
    ws = Workspace(root)
    try:
        version = load_version(ws)
        spec = load_prep_spec(ws, version)
        weights = version.topic_weights()
        marginal = version.term_marginal()

        def names() -> list[str]:
            order = sorted(range(version.k), key=lambda i: -weights[i])
            return suggest_names(version.topic_terms, marginal, version.vocabulary, order=order)

        def evidence() -> list:
            with ws.store() as store:
                return build_evidence(
                    store.turns_for,
                    spec,
                    version.topic_terms,
                    version.doc_topics,
                    version.doc_ids,
                    marginal,
                )

        def show() -> int:
            v = load_version(ws)
            return sum(len(v.evidence(i)) for i in range(v.k))

        t_names, _ = timed(names, args.runs)
        t_evidence, chosen = timed(evidence, args.runs)
        t_show, shown = timed(show, args.runs)
        print(
            f"labelling aids of version {version.n}: {len(version.doc_ids):,} calls, "
            f"K = {version.k} (median of {args.runs} runs)"
        )
        print(f"  suggested names            {t_names:8.3f} s")
        print(
            f"  evidence sentences         {t_evidence:8.3f} s "
            f"({sum(map(len, chosen))} sentences chosen)"
        )
        print(f"  load version + evidence    {t_show:8.3f} s ({shown} sentences read)")
    finally:
        if built and not args.keep:
            shutil.rmtree(root.parent, ignore_errors=True)


if __name__ == "__main__":
    main()
