"""Sweep topic counts: the grid of (family, K, seed) cells, run on Dask, scored once.

Every cell fits one model on the same training transcripts of the current prep and is an
independent Dask task; by default the tasks run on a :class:`distributed.LocalCluster`
sized to the machine, or on an existing cluster with ``scheduler``. Workers read the prep
from the workspace path and write each cell's topic–term matrix to
``sweeps/<id>/topics/<cell>.npy``; the client records a cell in the store as soon as it
finishes, so an interrupted sweep resumes where it stopped.

When every cell is in, coherence is counted once for the union of all cells' top words
(see :mod:`talkthemes.metrics.coherence`), stability is measured across seeds at each K,
diversity per cell, and :func:`talkthemes.recommend.recommend` picks K per family.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import logging
import os
import resource
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.config import SweepSettings
from talkthemes.errors import ConfigError, NotReadyError
from talkthemes.recommend import Recommendation, recommend
from talkthemes.workspace import Workspace, atomic_write_bytes

__all__ = [
    "CellSpec",
    "SweepResult",
    "build_cells",
    "fit_cell",
    "load_current_prep",
    "parse_k",
    "run_sweep",
    "score_cells",
    "split_rows",
]

log = logging.getLogger(__name__)

MEASURES = ("c_v", "c_npmi", "c_uci", "u_mass")
_SWEEP_COLUMNS = ("id", "prep_hash", "created_at", "finished_at", "status")

#: ``progress(done_cells, total_cells, current)``
ProgressFn = Callable[[int, int, str], None]


@dataclass(frozen=True)
class CellSpec:
    """One cell of the grid."""

    family: str
    k: int
    seed: int

    @property
    def cell(self) -> str:
        """The cell id, e.g. ``lda-k012-s1``."""
        return f"{self.family}-k{self.k:03d}-s{self.seed}"


def parse_k(spec: str) -> list[int]:
    """Parse a topic-count grid: ``"start:stop:step"`` (stop included) or ``"5,10,15"``.

    Raises
    ------
    ConfigError
        When the text is not a grid of integers ≥ 2.
    """
    text = spec.replace(" ", "")
    try:
        if ":" in text:
            parts = [int(p) for p in text.split(":")]
            if len(parts) == 2:
                parts.append(1)
            if len(parts) != 3 or parts[2] <= 0:
                raise ValueError
            ks = list(range(parts[0], parts[1] + 1, parts[2]))
        else:
            ks = sorted({int(p) for p in text.split(",") if p})
    except ValueError:
        raise ConfigError(
            f"--k {spec!r}: expected 'start:stop:step' (e.g. 4:30:2) or a list (e.g. 5,10,15)"
        ) from None
    if not ks or min(ks) < 2:
        raise ConfigError(f"--k {spec!r}: topic counts must be integers of at least 2")
    return ks


def build_cells(ks: Sequence[int], families: Sequence[str], seeds: int) -> list[CellSpec]:
    """Every (family, K, seed) cell, families first, then K, then seed."""
    for f in families:
        if f not in ("lda", "nmf"):
            raise ConfigError(f"--family {f!r}: expected lda, nmf or both (lda,nmf)")
    return [CellSpec(f, k, s) for f in families for k in ks for s in range(seeds)]


def split_rows(doc_ids: Sequence[str], heldout_share: float) -> tuple[np.ndarray, np.ndarray]:
    """Split transcripts into training and held-out rows by a hash of their id.

    The split depends only on each id, not on order or corpus size, so a transcript stays
    on the same side across sweeps and refreshes.

    Returns
    -------
    train_rows, heldout_rows : ndarray of int64
    """
    if heldout_share <= 0:
        return np.arange(len(doc_ids), dtype=np.int64), np.zeros(0, dtype=np.int64)
    cut = int(heldout_share * 2**32)
    held = np.fromiter(
        (
            int.from_bytes(hashlib.blake2b(t.encode("utf-8"), digest_size=4).digest(), "big") < cut
            for t in doc_ids
        ),
        dtype=bool,
        count=len(doc_ids),
    )
    return np.flatnonzero(~held).astype(np.int64), np.flatnonzero(held).astype(np.int64)


def subsample_rows(rows: np.ndarray, share: float, seed: int) -> np.ndarray:
    """A seeded random ``share`` of ``rows`` (sorted); all rows when ``share`` is 1.

    Greene, O'Callaghan & Cunningham (2014) measure stability over models fitted on random
    subsamples of the documents; each seed here draws its own.
    """
    if share >= 1 or len(rows) == 0:
        return rows
    rng = np.random.default_rng([int(seed), 20140915])
    n = max(1, round(share * len(rows)))
    return np.sort(rng.choice(rows, size=n, replace=False))


def load_current_prep(ws: Workspace) -> tuple[dict[str, Any], Path]:
    """The current prep's record and folder, or :class:`NotReadyError` naming the command."""
    with ws.store() as store:
        prep = store.current_prep()
    if prep is None:
        raise NotReadyError("nothing prepared yet: run 'talkthemes prepare' first")
    folder = ws.prepared_dir / prep["hash"]
    if not folder.exists():
        raise NotReadyError(
            f"the current prep's folder {folder} is missing: run 'talkthemes prepare' again"
        )
    return prep, folder


# -- one cell (runs on a Dask worker) ------------------------------------------------
_PREP_CACHE: dict[str, Any] = {}


def _load_prep(folder: str) -> Any:
    from talkthemes.prepare.corpus import PreparedCorpus

    if folder not in _PREP_CACHE:
        _PREP_CACHE.clear()  # one prep per worker process at a time
        _PREP_CACHE[folder] = PreparedCorpus.load(Path(folder))
    return _PREP_CACHE[folder]


def make_model(family: str, k: int, seed: int, settings: SweepSettings) -> Any:
    """An unfitted model of ``family`` configured from ``[sweep]`` settings."""
    if family == "lda":
        from talkthemes.models.lda import LdaTopics

        return LdaTopics(
            k=k,
            seed=seed,
            passes=settings.lda_passes,
            iterations=settings.lda_iterations,
            chunksize=settings.lda_chunksize,
            alpha=settings.lda_alpha,
            eta=settings.lda_eta,
        )
    from talkthemes.models.nmf import NmfTopics

    return NmfTopics(
        k=k,
        seed=seed,
        loss=settings.nmf_loss,
        max_iter=settings.nmf_max_iter,
        tol=settings.nmf_tol,
        dtype=settings.nmf_dtype,
    )


def fit_cell(
    prep_folder: str,
    sweep_folder: str,
    family: str,
    k: int,
    seed: int,
    settings: dict[str, Any],
    heldout_share: float,
) -> dict[str, Any]:
    """Fit one cell and return its metrics; writes ``topics/<cell>.npy`` under the sweep.

    Runs on a Dask worker (or in-process). Returns plain JSON values: the cell's top
    term ids, fit seconds, held-out perplexity (LDA) or reconstruction error (NMF), and
    the worker's peak memory.
    """
    from threadpoolctl import threadpool_limits

    from talkthemes.models.base import top_terms

    spec = CellSpec(family, k, seed)
    sweep_settings = SweepSettings.model_validate(settings)
    corpus = _load_prep(prep_folder)
    train, held = split_rows(corpus.doc_ids, heldout_share)
    train = subsample_rows(train, sweep_settings.subsample, seed)
    counts = corpus.counts.tocsr()
    with threadpool_limits(1):  # parallelism is across cells, not inside one
        # the sweep scores topics only: no training shares (one E-step pass saved for LDA)
        model = make_model(family, k, seed, sweep_settings).fit(counts[train], shares=False)
        result = model.result_
        metrics: dict[str, Any] = {"fit_seconds": float(result.fit_seconds)}
        if family == "lda":
            metrics["perplexity"] = (
                float(model.heldout_perplexity(counts[held], total_docs=len(train)))
                if len(held)
                else float("nan")
            )
        else:
            metrics["reconstruction_error"] = float(model.reconstruction_err_)
    keep = max(sweep_settings.topn, sweep_settings.stability_topn, sweep_settings.diversity_topn)
    tops = top_terms(result.topic_terms, min(keep, result.topic_terms.shape[1]))
    metrics["top_terms"] = tops.tolist()
    metrics["peak_memory_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    path = Path(sweep_folder) / "topics" / f"{spec.cell}.npy"
    _save_npy(path, result.topic_terms.astype(np.float32))
    return metrics


def _save_npy(path: Path, array: np.ndarray) -> None:
    import io

    buf = io.BytesIO()
    np.save(buf, array, allow_pickle=False)
    atomic_write_bytes(path, buf.getvalue())


# -- scoring a finished grid --------------------------------------------------------
def score_cells(
    cells: list[dict[str, Any]],
    tokens: np.ndarray,
    offsets: np.ndarray,
    counts: Any,
    rows: np.ndarray,
    *,
    topn: int = 10,
    stability_topn: int = 20,
    diversity_topn: int = 25,
) -> pd.DataFrame:
    """Coherence (counted once for all cells), diversity and seed stability per cell.

    Parameters
    ----------
    cells : list of dict
        Finished cells with ``cell, family, k, seed, top_terms`` and fit metrics.
    tokens, offsets, counts : arrays
        The prep's token stream and counts.
    rows : ndarray
        The transcripts the models were trained on: the coherence reference corpus.
    topn : int
        Top terms per topic used by coherence.
    stability_topn, diversity_topn : int
        Top terms compared by stability (Greene et al. 2014 use 20) and counted by
        diversity (Dieng et al. 2020 use 25).

    Returns
    -------
    DataFrame
        One row per cell: its fit metrics plus ``c_v, c_npmi, c_uci, u_mass`` (means),
        ``*_per_topic`` lists, ``diversity`` and ``stability`` (the same for all seeds of a K).
    """
    from talkthemes.metrics.coherence import build_reference, score, union_of_topics
    from talkthemes.metrics.diversity import topic_diversity
    from talkthemes.metrics.stability import seed_stability

    tops = {c["cell"]: np.asarray(c["top_terms"], dtype=np.int64) for c in cells}
    union = union_of_topics(t[:, :topn] for t in tops.values())
    reference = build_reference(tokens, offsets, counts, union, windows=(110, 10), rows=rows)
    rows_out = []
    for c in cells:
        top = tops[c["cell"]]
        row = {k: v for k, v in c.items() if k != "top_terms"}
        for m in MEASURES:
            res = score(reference, top[:, :topn], m)
            row[m] = res.mean
            row[f"{m}_per_topic"] = [float(x) for x in res.per_topic]
        row["diversity"] = float(topic_diversity(top[:, :diversity_topn], diversity_topn))
        rows_out.append(row)
    frame = pd.DataFrame(rows_out)
    stab: dict[tuple[str, int], float] = {}
    for (family, k), g in frame.groupby(["family", "k"]):
        sets = [tops[c][:, :stability_topn] for c in g["cell"]]
        stab[(family, k)] = float(seed_stability(sets, stability_topn)) if len(sets) > 1 else np.nan
    frame["stability"] = [stab[(f, k)] for f, k in zip(frame["family"], frame["k"], strict=True)]
    return frame.sort_values(["family", "k", "seed"]).reset_index(drop=True)


def seed_agreement(cells: pd.DataFrame, topn: int = 20) -> pd.DataFrame:
    """Add ``agreement``: each cell's mean agreement with the other seeds at its (family, K).

    Agreement is the Hungarian-matched average Jaccard of ranked top terms (Greene et
    al. 2014), the same quantity stability averages; the seed with the highest agreement is
    the medoid, the most typical run of that K.
    """
    from talkthemes.metrics.stability import agreement

    out = cells.copy()
    values = np.full(len(out), np.nan)
    for _, g in out.groupby(["family", "k"]):
        idx = list(g.index)
        tops = [np.asarray(out.at[i, "top_terms"])[:, :topn] for i in idx]
        for a, i in enumerate(idx):
            others = [agreement(tops[a], tops[b], topn) for b in range(len(idx)) if b != a]
            values[out.index.get_loc(i)] = float(np.mean(others)) if others else np.nan
    out["agreement"] = values
    return out


# -- the whole sweep -----------------------------------------------------------------
@dataclass
class SweepResult:
    """A finished sweep: its cells' metrics and the recommendation per family."""

    sweep_id: int
    folder: Path
    cells: pd.DataFrame
    recommendations: dict[str, Recommendation]
    reused_cells: int = 0
    cached: bool = False
    failed: list[dict[str, str]] = field(default_factory=list)
    rank_by: str = "c_npmi"

    def to_json(self) -> dict[str, Any]:
        cols = [c for c in self.cells.columns if not c.endswith("_per_topic")]
        return {
            "sweep_id": self.sweep_id,
            "cached": self.cached,
            "reused_cells": self.reused_cells,
            "rank_by": self.rank_by,
            "cells": json.loads(self.cells[cols].to_json(orient="records")),
            "recommendations": {f: r.to_dict() for f, r in self.recommendations.items()},
            "failed": self.failed,
        }


def _grid_key(prep_hash: str, cells: Sequence[CellSpec], settings: SweepSettings) -> str:
    relevant = settings.model_dump(exclude={"k", "families", "seeds", "scheduler", "workers"})
    doc = json.dumps(
        {"prep": prep_hash, "cells": [c.cell for c in cells], "settings": relevant}, sort_keys=True
    )
    return hashlib.sha256(doc.encode()).hexdigest()[:16]


@contextlib.contextmanager
def _client(scheduler: str, workers: int) -> Iterator[Any]:
    from distributed import Client, LocalCluster

    if scheduler:
        client = Client(scheduler, timeout="30s")
        try:
            yield client
        finally:
            client.close()
        return
    n = workers or os.cpu_count() or 1
    with (
        LocalCluster(
            n_workers=n,
            threads_per_worker=1,
            processes=True,
            dashboard_address=None,
            # no dashboard; the scheduler's small HTTP server takes any free port, not 8787
            scheduler_kwargs={"dashboard": False, "dashboard_address": "127.0.0.1:0"},
            # A failing cell reaches us through its future (reported per cell); what the
            # local cluster logs itself is shutdown noise (a worker's last heartbeat racing
            # the scheduler's close), so only critical lines are let through.
            silence_logs=logging.CRITICAL,
            host="127.0.0.1",
        ) as cluster,
        Client(cluster) as client,
    ):
        yield client


def run_sweep(
    ws: Workspace,
    *,
    k: str | None = None,
    families: Sequence[str] | None = None,
    seeds: int | None = None,
    scheduler: str | None = None,
    workers: int | None = None,
    force: bool = False,
    progress: ProgressFn | None = None,
) -> SweepResult:
    """Run (or resume, or reuse) a sweep over the current prep.

    Arguments left ``None`` come from ``[sweep]`` in ``talkthemes.toml``. The caller
    holds the workspace lock.

    Parameters
    ----------
    ws : Workspace
    k : str, optional
        Topic-count grid, see :func:`parse_k`.
    families : sequence of str, optional
        ``lda``, ``nmf`` or both.
    seeds : int, optional
        Seeds per (family, K).
    scheduler : str, optional
        Dask scheduler address; empty for a local cluster.
    workers : int, optional
        Local cluster size; 0 for one per core.
    force : bool
        Start a new sweep even when the same grid already finished on this prep.
    progress : callable, optional
        ``progress(done, total, cell)``.

    Returns
    -------
    SweepResult
    """
    settings = ws.settings().sweep
    updates: dict[str, Any] = {}
    if k is not None:
        updates["k"] = k
    if families is not None:
        updates["families"] = list(families)
    if seeds is not None:
        updates["seeds"] = seeds
    if scheduler is not None:
        updates["scheduler"] = scheduler
    if workers is not None:
        updates["workers"] = workers
    from talkthemes.config import settings_from_dict

    settings = settings_from_dict(
        {"sweep": {**settings.model_dump(), **updates}}, source="sweep options"
    ).sweep
    prep, prep_folder = load_current_prep(ws)
    specs = build_cells(parse_k(settings.k), settings.families, settings.seeds)
    grid_key = _grid_key(prep["hash"], specs, settings)

    with ws.store() as store:
        found = None if force else store.find_sweep(prep["hash"], grid_key)
        if found is not None and found["status"] == "done":
            sweep_id = found["id"]
            folder = ws.sweeps_dir / str(sweep_id)
            cached = _load_finished(folder, found)
            if cached is not None:
                return cached
        if found is None:
            info = {
                "grid_key": grid_key,
                "k": parse_k(settings.k),
                "families": list(settings.families),
                "seeds": settings.seeds,
                "settings": settings.model_dump(),
            }
            sweep_id = store.start_sweep(prep["hash"], info)
        else:
            sweep_id = found["id"]
        done = {c["cell"] for c in store.cells(sweep_id)}
    folder = ws.sweeps_dir / str(sweep_id)
    folder.mkdir(parents=True, exist_ok=True)
    todo = [s for s in specs if s.cell not in done]
    reused = len(specs) - len(todo)
    failed: list[dict[str, str]] = []
    if progress:
        progress(reused, len(specs), "resuming" if reused else "starting")
    if todo:
        failed = _run_cells(
            ws, sweep_id, folder, prep_folder, todo, settings, reused, len(specs), progress
        )

    from talkthemes.prepare.corpus import PreparedCorpus

    corpus = PreparedCorpus.load(prep_folder)
    train, _ = split_rows(corpus.doc_ids, settings.heldout_share)
    with ws.store() as store:
        cells = store.cells(sweep_id)
    if not cells:
        raise NotReadyError("no cell of the sweep finished; see the errors above")
    frame = score_cells(
        cells,
        corpus.tokens,
        corpus.offsets,
        corpus.counts,
        train,
        topn=settings.topn,
        stability_topn=settings.stability_topn,
        diversity_topn=settings.diversity_topn,
    )
    recs = recommend(frame, rank_by=settings.rank_by, stability_min=settings.stability_min)
    frame.to_parquet(folder / "cells.parquet.tmp", index=False)
    os.replace(folder / "cells.parquet.tmp", folder / "cells.parquet")
    with ws.store() as store:
        if not failed and len(cells) == len(specs):
            record = store.get_sweep(sweep_id) or {}
            info = {k: v for k, v in record.items() if k not in _SWEEP_COLUMNS}
            info["recommendations"] = {f: r.to_dict() for f, r in recs.items()}
            store.finish_sweep(sweep_id, info)
    return SweepResult(sweep_id, folder, frame, recs, reused, False, failed, settings.rank_by)


def _load_finished(folder: Path, record: dict[str, Any]) -> SweepResult | None:
    path = folder / "cells.parquet"
    if not path.exists() or "recommendations" not in record:
        return None
    frame = pd.read_parquet(path)
    recs = {f: Recommendation(**r) for f, r in record["recommendations"].items()}
    rank_by = next(iter(recs.values())).rank_by if recs else "c_npmi"
    return SweepResult(record["id"], folder, frame, recs, len(frame), True, [], rank_by)


def _run_cells(
    ws: Workspace,
    sweep_id: int,
    folder: Path,
    prep_folder: Path,
    todo: list[CellSpec],
    settings: SweepSettings,
    done_before: int,
    total: int,
    progress: ProgressFn | None,
) -> list[dict[str, str]]:
    from distributed import as_completed

    failed: list[dict[str, str]] = []
    payload = settings.model_dump()
    with _client(settings.scheduler, settings.workers) as client:
        futures = {}
        # Largest K first: they take longest, so the grid finishes sooner on few workers.
        for spec in sorted(todo, key=lambda s: (-s.k, s.family, s.seed)):
            fut = client.submit(
                fit_cell,
                str(prep_folder.resolve()),
                str(folder.resolve()),
                spec.family,
                spec.k,
                spec.seed,
                payload,
                settings.heldout_share,
                key=f"talkthemes-sweep{sweep_id}-{spec.cell}",
                pure=False,
            )
            futures[fut] = spec
        done = done_before
        try:
            with ws.store() as store:
                for fut in as_completed(list(futures)):
                    spec = futures[fut]
                    try:
                        metrics = fut.result()
                    except Exception as exc:  # one failing cell must not lose the others
                        log.error("cell %s failed: %s", spec.cell, exc)
                        failed.append({"cell": spec.cell, "error": f"{type(exc).__name__}: {exc}"})
                        continue
                    store.add_cell(sweep_id, spec.cell, spec.family, spec.k, spec.seed, metrics)
                    done += 1
                    if progress:
                        progress(done, total, spec.cell)
        except BaseException:
            client.cancel(list(futures))
            raise
    return failed
