"""What the training shares cost a sweep cell: LDA fits with and without ``shares``.

Usage::

    .venv/bin/python bench/cell_shares.py [--reasons 10] [--calls 1200] [--k 10,20] [--seeds 3]

A sweep cell infers the shares of its training transcripts (one more E-step pass for LDA) to
store the largest share one theme leads, which the recommendation's catch-all check reads
(docs/methods.md, "The recommendation"). This builds a planted corpus
(:mod:`talkthemes.demo.planted`), and for each K and seed fits LDA on the seed's training
subsample exactly as a cell does (the held-out split, ``[sweep] subsample``, one thread),
once with ``shares=False`` and once with ``shares=True``, and prints the median seconds of
each. Not a test: the machine may be shared, so the seconds are indicative; the figures go to
docs/performance.md.
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import tempfile
import time
from pathlib import Path


def main() -> None:
    from threadpoolctl import threadpool_limits

    from talkthemes.demo.harness import build_workspace
    from talkthemes.demo.planted import PlantedSpec
    from talkthemes.models.factory import make_model
    from talkthemes.sweep.split import split_rows, subsample_rows

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--reasons", type=int, default=10)
    ap.add_argument("--calls", type=int, default=1200)
    ap.add_argument("--k", default="10,20", help="topic counts, e.g. 10,20")
    ap.add_argument("--seeds", type=int, default=3)
    args = ap.parse_args()
    root = Path(tempfile.mkdtemp(prefix="tt-cell-shares-"))
    try:
        spec = PlantedSpec(reasons=args.reasons, calls=args.calls, seed=0)
        pw = build_workspace(root, spec, settings={"prepare": {"n_process": 1}})
        settings = pw.workspace.settings().sweep
        train, _ = split_rows(pw.corpus.doc_ids, settings.heldout_share)
        counts = pw.corpus.counts.tocsr()
        print(f"{args.calls} planted calls, {args.reasons} reasons, {pw.corpus.n_docs} prepared")
        for k in (int(x) for x in args.k.split(",")):
            seconds: dict[bool, list[float]] = {False: [], True: []}
            for seed in range(args.seeds):
                rows = subsample_rows(train, settings.subsample, seed)
                for shares in (False, True):
                    with threadpool_limits(1):
                        t0 = time.perf_counter()
                        make_model("lda", k, seed, settings).fit(counts[rows], shares=shares)
                        seconds[shares].append(time.perf_counter() - t0)
            without, with_ = (statistics.median(seconds[s]) for s in (False, True))
            print(
                f"LDA K={k}: {len(rows)} training calls; without shares {without:.2f} s, "
                f"with {with_:.2f} s (+{100 * (with_ / without - 1):.1f}%), "
                f"median of {args.seeds} seeds"
            )
    finally:
        shutil.rmtree(root, ignore_errors=True)


if __name__ == "__main__":
    main()
