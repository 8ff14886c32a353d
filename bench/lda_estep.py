"""LDA E-step benchmark: gensim's ``LdaModel.inference`` vs our compiled one, same inputs.

Usage::

    .venv/bin/python bench/lda_estep.py [--n 6000] [--k 10,30,50] [--repeat 3]
                                        [--workspace DIR]

Builds (or reuses, with ``--workspace``) a prepared workspace of N invented demo calls, trains
LDA on the first 4,000 training transcripts, then times one E-step with sufficient statistics
over the next 2,000 with gensim's uncompiled ``inference`` (bag-of-words chunk) and with
``CsrLdaModel.inference`` (CSR row references, as in training; and bag-of-words lists, which it
converts), from the same state and random state. Prints the median seconds of each, the ratio
gensim / compiled, and the largest relative difference between the two γ. Not a test: it
prints figures for docs/performance.md.
"""

from __future__ import annotations

import argparse
import copy
import shutil
import tempfile
import time
from pathlib import Path

import numpy as np


def _prepared_workspace(n: int, root: Path) -> Path:
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.run import run_prepare
    from talkthemes.workspace import Workspace

    files = write_demo(root / "src", size=n, seed=21)
    ws = Workspace(root / "ws")
    ws.init()
    with ws.lock("bench"):
        ingest(ws, [files.exports], manifests=[files.manifest])
        run_prepare(ws)
    return root / "ws"


def main() -> None:
    from gensim.matutils import Sparse2Corpus
    from gensim.models import LdaModel
    from threadpoolctl import threadpool_limits

    from talkthemes.models.csr_lda import RowCorpus
    from talkthemes.models.lda import LdaTopics
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.sweep.run import load_current_prep
    from talkthemes.sweep.split import split_rows
    from talkthemes.workspace import Workspace

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=6000)
    ap.add_argument("--k", default="10,30,50")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--workspace", type=Path, default=None)
    args = ap.parse_args()

    tmp = Path(tempfile.mkdtemp(prefix="tt-bench-estep-"))
    try:
        root = args.workspace or _prepared_workspace(args.n, tmp)
        _, folder = load_current_prep(Workspace(root))
        corpus = PreparedCorpus.load(folder)
        train, _ = split_rows(corpus.doc_ids, 0.1)
        counts = corpus.counts.tocsr()[train]
        if counts.shape[0] < 6000:
            raise SystemExit(f"need 6,000 training transcripts, the prep has {counts.shape[0]:,}")
        block = counts[4000:6000]
        chunk = list(Sparse2Corpus(block, documents_columns=False))
        n, v = block.shape
        print(f"E-step over {n:,} calls, {block.nnz:,} non-zeros, V={v:,}")
        rows = list(RowCorpus(block))
        print(
            f"{'K':>4} {'gensim s':>9} {'compiled s':>10} {'ratio':>6} {'compiled, bow':>14} "
            f"{'max |Δγ|/γ':>12}"
        )
        with threadpool_limits(1):
            for k in [int(v) for v in args.k.split(",")]:
                model = LdaTopics(k=k, passes=1, chunksize=2000).fit(counts[:4000]).model_
                reference = LdaModel.__new__(LdaModel)
                reference.__dict__.update(model.__dict__)
                ours = copy.copy(model)
                ours.random_state = np.random.RandomState(5)
                ours.inference(chunk[:10], collect_sstats=True)  # load the compiled code
                times: dict[str, list[float]] = {"gensim": [], "ours": [], "ours-bow": []}
                gammas: dict[str, np.ndarray] = {}
                runs = (
                    ("gensim", reference, chunk),
                    ("ours", ours, rows),
                    ("ours-bow", ours, chunk),
                )
                for _ in range(args.repeat):
                    for name, m, docs in runs:
                        m.random_state = np.random.RandomState(5)
                        t = time.perf_counter()
                        gammas[name], _ = m.inference(docs, collect_sstats=True)
                        times[name].append(time.perf_counter() - t)
                diff = float(np.max(np.abs(gammas["ours"] - gammas["gensim"]) / gammas["gensim"]))
                med = {name: float(np.median(v)) for name, v in times.items()}
                print(
                    f"{k:4d} {med['gensim']:9.3f} {med['ours']:10.3f} "
                    f"{med['gensim'] / med['ours']:6.1f} {med['ours-bow']:14.3f} {diff:12.2e}"
                )
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
