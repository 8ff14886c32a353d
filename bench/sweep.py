"""Sweep benchmark: raw files → recommended K → published version, with per-stage figures.

Usage::

    .venv/bin/python bench/sweep.py [--n 20000] [--k 5:50:5] [--seeds 3] [--gensim-cells 3]
                                    [--compare-workers] [--compare-k GRID] [--compare-seeds N]

Prints, for N invented demo calls: ingest, prepare, sweep (cells on Dask) and publish times;
per-cell fit seconds by family; the time spent on coherence for the whole sweep (counted once);
the C_V of a few cells recomputed with gensim's ``CoherenceModel`` (one call per cell, as users
do) and the per-cell time ratio; optionally the speed-up of 2 Dask workers over 1 (on the same
grid unless told otherwise); peak memory. Not a test: it prints figures for docs/performance.md.
"""

from __future__ import annotations

import argparse
import resource
import shutil
import tempfile
import time
from pathlib import Path

import numpy as np


def _peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def main() -> None:
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.metrics.coherence import score
    from talkthemes.metrics.cooccurrence import build_reference, union_of_topics
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep.run import run_sweep
    from talkthemes.sweep.split import split_rows
    from talkthemes.versions.publish import publish
    from talkthemes.workspace import Workspace

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=20000)
    ap.add_argument("--k", default="5:50:5")
    ap.add_argument("--seeds", type=int, default=3)
    ap.add_argument("--families", default="lda,nmf")
    ap.add_argument("--gensim-cells", type=int, default=3)
    ap.add_argument("--compare-workers", action="store_true")
    ap.add_argument(
        "--compare-k", default="", help="grid of the 1- vs 2-worker comparison (default: --k)"
    )
    ap.add_argument(
        "--compare-seeds", type=int, default=0, help="seeds of that comparison (default: --seeds)"
    )
    ap.add_argument("--keep", type=Path, default=None, help="keep the workspace here")
    args = ap.parse_args()

    tmp = Path(tempfile.mkdtemp(prefix="tt-bench-sweep-"))
    root = args.keep or tmp / "ws"
    try:
        t = time.perf_counter()
        files = write_demo(tmp / "src", size=args.n, seed=21)
        print(f"generate {args.n:,} calls: {time.perf_counter() - t:.1f} s (not counted)")
        ws = Workspace(root)
        ws.init()
        stages: dict[str, float] = {}
        with ws.lock("bench"):
            t = time.perf_counter()
            ingest(ws, [files.exports], manifests=[files.manifest])
            stages["ingest"] = time.perf_counter() - t
            t = time.perf_counter()
            prep = run_prepare(ws)
            stages["prepare"] = time.perf_counter() - t
            t = time.perf_counter()
            res = run_sweep(ws, k=args.k, families=args.families.split(","), seeds=args.seeds)
            stages["sweep"] = time.perf_counter() - t
            rec = res.recommendations
            fam = "lda" if "lda" in rec else next(iter(rec))
            t = time.perf_counter()
            publish(ws, k=rec[fam].k, family=fam)
            stages["publish"] = time.perf_counter() - t
        total = sum(stages.values())
        print(f"prep: {prep.summary['transcripts']:,} transcripts, {prep.summary['terms']:,} terms")
        for name, sec in stages.items():
            print(f"  {name:8s} {sec:8.1f} s")
        print(f"  {'total':8s} {total:8.1f} s  (raw files → recommended K → published version)")
        cells = res.cells
        print(
            f"cells: {len(cells)}; recommended: "
            + ", ".join(f"{f} K={r.k}" for f, r in rec.items())
        )
        for f, g in cells.groupby("family"):
            fs = g["fit_seconds"]
            print(
                f"  {f}: fit s per cell median {fs.median():.1f}, max {fs.max():.1f}, "
                f"sum {fs.sum():.0f}"
            )
        print(f"  worker peak memory (max over cells): {cells['peak_memory_mb'].max():,.0f} MB")

        # coherence for the whole sweep, counted once (as run_sweep does), timed on its own
        corpus = PreparedCorpus.load(ws.prepared_dir / prep.prep_hash)
        train, _ = split_rows(corpus.doc_ids, ws.settings().sweep.heldout_share)
        with ws.store() as store:
            raw = store.cells(res.sweep_id)
        tops = [np.asarray(c.top_terms)[:, :10] for c in raw]
        t = time.perf_counter()
        ref = build_reference(
            corpus.tokens,
            corpus.offsets,
            corpus.counts,
            union_of_topics(tops),
            windows=(110, 10),
            rows=train,
        )
        for top in tops:
            for m in ("c_v", "c_npmi", "c_uci", "u_mass"):
                score(ref, top, m)
        coh = time.perf_counter() - t
        print(
            f"coherence, all {len(tops)} cells × 4 measures: {coh:.1f} s "
            f"({100 * coh / stages['sweep']:.1f}% of the sweep)"
        )

        if args.gensim_cells:
            from gensim.corpora import Dictionary
            from gensim.models.coherencemodel import CoherenceModel

            texts = [
                [
                    corpus.vocabulary[i] if i >= 0 else "\x00oov"
                    for i in corpus.tokens[corpus.offsets[d] : corpus.offsets[d + 1]]
                ]
                for d in train
            ]
            dictionary = Dictionary([corpus.vocabulary])
            per = []
            for top in tops[: args.gensim_cells]:
                words = [[corpus.vocabulary[i] for i in row] for row in top]
                t = time.perf_counter()
                CoherenceModel(
                    topics=words,
                    texts=texts,
                    dictionary=dictionary,
                    coherence="c_v",
                    topn=10,
                    processes=1,
                ).get_coherence()
                per.append(time.perf_counter() - t)
            g_cell = float(np.median(per))
            ours_cell = coh / len(tops)
            print(
                f"gensim CoherenceModel C_V, per cell (median of {len(per)}): {g_cell:.1f} s; "
                f"whole sweep ≈ {g_cell * len(tops):.0f} s vs ours {coh:.1f} s for all four "
                f"measures → {g_cell * len(tops) / coh:.0f}×"
            )
            del ours_cell

        if args.compare_workers:
            times = {}
            compare_k = args.compare_k or args.k
            compare_seeds = args.compare_seeds or args.seeds
            grid = f"{args.families}, K={compare_k} × {compare_seeds} seeds"
            for w in (1, 2):
                t = time.perf_counter()
                with ws.lock("bench"):
                    run_sweep(
                        ws,
                        k=compare_k,
                        families=args.families.split(","),
                        seeds=compare_seeds,
                        workers=w,
                        force=True,
                    )
                times[w] = time.perf_counter() - t
                print(f"  {w} worker(s): {times[w]:.1f} s ({grid}, cluster start-up included)")
            print(f"  speed-up of 2 workers over 1: {times[1] / times[2]:.2f}×")
        print(f"peak memory of this process: {_peak_mb():,.0f} MB")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
