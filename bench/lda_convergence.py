"""LDA convergence benchmark: theme quality and cost of LDA settings on a planted corpus.

Usage::

    .venv/bin/python bench/lda_convergence.py [--n 1200] [--corpus-seed 21] [--seeds 3]
        [--k K] [--workspace DIR] [--variant NAME:key=value,key=value ...] [--no-nmf]
        [--no-kmeans]

Builds (or reuses, with ``--workspace``) a prepared workspace of N invented demo calls whose
primary call reason is known (``truth.csv``), then fits, at the true number of reasons K (or
``--k``), each LDA variant, NMF with the sweep defaults and a k-means-on-counts baseline, with
one model per seed exactly as a sweep cell does (the same held-out split, and each seed on the
80 % subsample the sweep draws for it). For each it prints:

* NMI and ARI (scikit-learn ``normalized_mutual_info_score``, ``adjusted_rand_score``) of each
  training call's lead theme (arg max of its shares) against its true primary reason, over the
  calls that have one; median over seeds;
* seed-to-seed stability (``metrics.stability.seed_stability`` on the top 20 terms, as the
  sweep measures it);
* the median fit seconds per cell (training only, ``fit(..., shares=False)``, as in a sweep),
  and for LDA the passes used and how many fits converged.

A variant is a name and LdaTopics keyword arguments, e.g.
``--variant before:passes=2,bound_tol=0,starts=1`` (the defaults before convergence); values
are read as JSON, bare words as text, and ``--variant after:`` (no arguments) fits LdaTopics
with its defaults, as does giving no variant. The k-means baseline is scikit-learn ``KMeans``
(``n_init=10``) on L2-normalised counts. Not a test: it prints figures for
docs/methods_models.md; the machine may be shared, so fit times are indicative.
"""

from __future__ import annotations

import argparse
import csv
import json
import shutil
import tempfile
import time
from pathlib import Path
from typing import Any

import numpy as np


def _prepared_workspace(n: int, seed: int, root: Path) -> tuple[Path, Path]:
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.run import run_prepare
    from talkthemes.workspace import Workspace

    files = write_demo(root / "src", size=n, seed=seed)
    ws = Workspace(root / "ws")
    ws.init()
    with ws.lock("bench"):
        ingest(ws, [files.exports], manifests=[files.manifest])
        run_prepare(ws)
    return root / "ws", files.truth


def _parse_variant(text: str) -> tuple[str, dict[str, Any]]:
    name, _, body = text.partition(":")
    kwargs: dict[str, Any] = {}
    for part in filter(None, body.split(",")):
        key, _, raw = part.partition("=")
        try:
            kwargs[key.strip()] = json.loads(raw)
        except json.JSONDecodeError:
            kwargs[key.strip()] = raw.strip()
    return name, kwargs


def _scores(lead: np.ndarray, truth: np.ndarray) -> tuple[float, float]:
    from sklearn.metrics import adjusted_rand_score, normalized_mutual_info_score

    return float(normalized_mutual_info_score(truth, lead)), float(adjusted_rand_score(truth, lead))


def main() -> None:
    import scipy.sparse as sp
    from sklearn.cluster import KMeans
    from sklearn.preprocessing import normalize
    from threadpoolctl import threadpool_limits

    from talkthemes.config import SweepSettings
    from talkthemes.metrics.stability import seed_stability
    from talkthemes.models.base import top_terms
    from talkthemes.models.lda import LdaTopics
    from talkthemes.models.nmf import NmfTopics
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.sweep.run import load_current_prep
    from talkthemes.sweep.split import split_rows, subsample_rows
    from talkthemes.workspace import Workspace

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=1200)
    ap.add_argument("--corpus-seed", type=int, default=21)
    ap.add_argument("--seeds", type=int, default=3)
    ap.add_argument("--k", type=int, default=0, help="topics (default: the true count)")
    ap.add_argument("--workspace", type=Path, default=None, help="reuse/keep the corpus here")
    ap.add_argument("--variant", action="append", default=[])
    ap.add_argument("--no-nmf", action="store_true")
    ap.add_argument("--no-kmeans", action="store_true")
    args = ap.parse_args()

    tmp = Path(tempfile.mkdtemp(prefix="tt-bench-ldaconv-"))
    try:
        keep = args.workspace
        if keep is not None and (keep / "ws").is_dir():
            root, truth_file = keep / "ws", keep / "src" / "truth.csv"
        else:
            root, truth_file = _prepared_workspace(args.n, args.corpus_seed, keep or tmp)
        _, folder = load_current_prep(Workspace(root))
        corpus = PreparedCorpus.load(folder)
        with truth_file.open(newline="", encoding="utf-8") as fh:
            reason = {row["call_id"]: row["primary_reason"] for row in csv.DictReader(fh)}
        settings = SweepSettings()
        train, _ = split_rows(corpus.doc_ids, settings.heldout_share)
        counts = sp.csr_matrix(corpus.counts.tocsr()[train], dtype=np.float64)
        labels = np.array([reason.get(corpus.doc_ids[i], "") for i in train])
        judged = labels != ""
        truth = np.unique(labels[judged], return_inverse=True)[1]
        k = args.k or int(truth.max() + 1)
        print(
            f"corpus: {counts.shape[0]:,} training calls ({int(judged.sum()):,} with a true "
            f"reason, {int(truth.max() + 1)} reasons), V={counts.shape[1]:,}, "
            f"{counts.sum() / counts.shape[0]:.1f} tokens per call; K={k}; "
            f"seeds {args.seeds}, subsample {settings.subsample}"
        )
        print(
            f"{'model':<28} {'NMI':>5} {'ARI':>5} {'NMI min':>7} {'stab':>5} "
            f"{'fit s':>6} {'passes':>7} {'conv':>5}"
        )
        variants = [_parse_variant(v) for v in (args.variant or ["default"])]
        fits: list[tuple[str, Any]] = [(f"lda {n}", kw) for n, kw in variants]
        if not args.no_nmf:
            fits.append(("nmf", None))
        with threadpool_limits(1):
            for name, kwargs in fits:
                nmi, ari, secs, tops, passes, conv = [], [], [], [], [], 0
                for seed in range(args.seeds):
                    rows = subsample_rows(np.arange(counts.shape[0]), settings.subsample, seed)
                    if kwargs is None:
                        model: Any = NmfTopics(
                            k=k,
                            seed=seed,
                            loss=settings.nmf_loss,
                            max_iter=settings.nmf_max_iter,
                            tol=settings.nmf_tol,
                            dtype=settings.nmf_dtype,
                        )
                    else:
                        model = LdaTopics(k=k, seed=seed, **kwargs)
                    t = time.perf_counter()
                    model.fit(counts[rows], shares=False)
                    secs.append(time.perf_counter() - t)
                    result = model.result_
                    trace = result.params.get("convergence")
                    if trace is not None:
                        passes.append(trace["passes"])
                        conv += bool(trace["converged"])
                    lead = model.transform(counts).argmax(axis=1)
                    a, b = _scores(lead[judged], truth)
                    nmi.append(a)
                    ari.append(b)
                    tops.append(top_terms(result.topic_terms, 20))
                stab = seed_stability(tops, 20) if len(tops) > 1 else float("nan")
                used = f"{np.median(passes):7.0f}" if passes else f"{'':7}"
                print(
                    f"{name:<28} {np.median(nmi):5.3f} {np.median(ari):5.3f} {min(nmi):7.3f} "
                    f"{stab:5.3f} {np.median(secs):6.2f} {used} "
                    f"{f'{conv}/{len(passes)}' if passes else '':>5}",
                    flush=True,
                )
        if not args.no_kmeans:
            x = normalize(counts)
            nmi, ari = [], []
            for seed in range(args.seeds):
                lead = KMeans(n_clusters=k, n_init=10, random_state=seed).fit_predict(x)
                a, b = _scores(lead[judged], truth)
                nmi.append(a)
                ari.append(b)
            print(
                f"{'k-means (L2 counts)':<28} {np.median(nmi):5.3f} {np.median(ari):5.3f} "
                f"{min(nmi):7.3f}"
            )
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
