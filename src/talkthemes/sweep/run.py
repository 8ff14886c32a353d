"""Running a sweep on Dask: submit the cells, record each as it finishes, score the grid.

Every cell fits one model on the same training transcripts of the current prep and is an
independent Dask task; by default the tasks run on a :class:`distributed.LocalCluster`
sized to the machine, or on an existing cluster with ``scheduler``. The workers share no
disk with the client: the prep's term counts and the training and held-out rows are
scattered to every worker once per sweep (:func:`talkthemes.sweep.cell.cell_inputs`),
each cell returns its metrics and topic–term matrix, and only this process writes the
workspace — ``sweeps/<id>/topics/<cell>.npy`` and the cell's record, as soon as the cell
finishes, so an interrupted sweep resumes where it stopped. A cell whose worker dies is
run again on another worker by the scheduler; when it keeps failing the sweep stops as
``incomplete`` and resumes on rerun (docs/operations.md, "Sweeping on a cluster").

When every cell is in, the grid is scored once (:mod:`talkthemes.sweep.scoring`) and
:func:`talkthemes.sweep.recommend.recommend` picks K per family (docs/methods.md, "The
sweep" and "The recommendation").
"""

from __future__ import annotations

import contextlib
import json
import logging
import os
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from talkthemes.config import SweepSettings, settings_from_dict
from talkthemes.errors import ConfigError, NotReadyError
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.progress import Progress, report
from talkthemes.store.records import PrepRecord, SweepRecord
from talkthemes.sweep.cell import cell_inputs, fit_cell, save_topics
from talkthemes.sweep.grid import CellSpec, build_cells, grid_key, parse_k
from talkthemes.sweep.limits import PrepSize, check_k, check_memory
from talkthemes.sweep.recommend import Recommendation
from talkthemes.sweep.sample import SweepSample, draw_for_sweep, restrict, save_sample, sized_for
from talkthemes.sweep.sample_check import attach_check, describe_sample
from talkthemes.sweep.scoring import score_and_recommend
from talkthemes.sweep.split import split_rows
from talkthemes.sweep.state import run_info
from talkthemes.testhook import pause_at
from talkthemes.workspace import Workspace

__all__ = ["SweepResult", "load_current_prep", "run_sweep", "sweep_settings"]

log = logging.getLogger(__name__)


def _checkpoint(stage: str) -> None:
    """Test hook (:mod:`talkthemes.testhook`): ``sweep-cell``, after the first cell is
    recorded, so a test can kill the sweep exactly there."""
    pause_at(stage, "sweep")


def load_current_prep(ws: Workspace) -> tuple[PrepRecord, Path]:
    """The current prep's record and folder, or :class:`NotReadyError` naming the command."""
    with ws.store() as store:
        prep = store.current_prep()
    if prep is None:
        raise NotReadyError("nothing prepared yet: run 'talkthemes prepare' first")
    folder = ws.prepared_dir / prep.hash
    if not folder.exists():
        raise NotReadyError(
            f"the current prep's folder {folder} is missing: run 'talkthemes prepare' again"
        )
    return prep, folder


@dataclass
class SweepResult:
    """A finished sweep: its cells' metrics and the recommendation per family.

    Attributes
    ----------
    sweep_id : int
    folder : Path
        ``sweeps/<id>/``.
    cells : DataFrame
        One row per fitted cell: ``cell``, ``family``, ``k``, ``seed`` and its metrics
        (coherence measures, stability, diversity, held-out fit, fit seconds).
    recommendations : dict of str to Recommendation
        Per family; also read as :attr:`recommendation`.
    reused_cells : int
        Cells taken from an earlier run of the same grid.
    cached : bool
        True when the whole sweep was already done and is returned as it was.
    failed : list of dict
        Cells that failed: ``cell`` and ``error``.
    rank_by : str
        The coherence measure the recommendation ranked by.
    sample : dict or None
        A sweep on a sample (docs/methods.md, "Sweeping a sample"): its size, seed, strata,
        and under ``check`` the recommended K on sample A and on a disjoint sample B per
        family (:mod:`talkthemes.sweep.sample_check`); None when every call was swept.
    """

    sweep_id: int
    folder: Path
    cells: pd.DataFrame
    recommendations: dict[str, Recommendation]
    reused_cells: int = 0
    cached: bool = False
    failed: list[dict[str, str]] = field(default_factory=list)
    rank_by: str = "c_npmi"
    sample: dict[str, Any] | None = None

    @property
    def sample_lines(self) -> list[str]:
        """The sample and the second-sample check as sentences (empty without a sample)."""
        return describe_sample(self.sample)

    @property
    def recommendation(self) -> dict[str, Recommendation]:
        """The recommended K per family (the public API's name for ``recommendations``)."""
        return self.recommendations

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict (per-topic score lists left out); ``sample`` only for a sweep on
        a sample."""
        cols = [c for c in self.cells.columns if not c.endswith("_per_topic")]
        doc = {
            "sweep_id": self.sweep_id,
            "cached": self.cached,
            "reused_cells": self.reused_cells,
            "rank_by": self.rank_by,
            "cells": json.loads(self.cells[cols].to_json(orient="records")),
            "recommendations": {f: r.to_dict() for f, r in self.recommendations.items()},
            "failed": self.failed,
        }
        if self.sample is not None:
            doc["sample"] = self.sample
        return doc


def sweep_settings(ws: Workspace, **updates: Any) -> SweepSettings:
    """The workspace's ``[sweep]`` settings with the given values (``None`` = keep) applied."""
    settings = ws.settings().sweep
    given = {k: v for k, v in updates.items() if v is not None}
    if "families" in given:
        given["families"] = list(given["families"])
    return settings_from_dict(
        {"sweep": {**settings.model_dump(), **given}}, source="sweep options"
    ).sweep


@contextlib.contextmanager
def _client(settings: SweepSettings) -> Iterator[Any]:
    """A Dask client: of the scheduler at ``[sweep] scheduler``, or of a local cluster.

    Raises
    ------
    ConfigError
        When the scheduler does not answer within ``[sweep] scheduler_timeout`` seconds.
    """
    # Deferred on purpose: distributed is heavy to import and only a running sweep needs it.
    from distributed import Client, LocalCluster

    scheduler, workers = settings.scheduler, settings.workers
    if scheduler:
        wait = settings.scheduler_timeout
        try:
            client = Client(scheduler, timeout=f"{wait}s")
        except Exception as exc:  # refused, timed out, or not a Dask scheduler at all
            raise ConfigError(
                f"--scheduler {scheduler}: no Dask scheduler answered within {wait:g} s "
                f"([sweep] scheduler_timeout): {type(exc).__name__}: {exc}"
            ) from None
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
    progress: Progress | None = None,
    sample: int | None = None,
) -> SweepResult:
    """Run (or resume, or reuse) a sweep over the current prep.

    Arguments left ``None`` come from ``[sweep]`` in ``talkthemes.toml``. The caller
    holds the workspace lock.

    Parameters
    ----------
    ws : Workspace
    k : str, optional
        Topic-count grid, see :func:`~talkthemes.sweep.grid.parse_k`.
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
    progress : Progress, optional
        ``progress(done_cells, total_cells, cell)``.
    sample : int, optional
        Sweep a stratified random sample of this many calls (default ``[sweep] sample``,
        and the automatic sample above ``[sweep] auto_sample_above`` calls); see
        :mod:`talkthemes.sweep.sample`.

    Returns
    -------
    SweepResult
    """
    settings = sweep_settings(
        ws, k=k, families=families, seeds=seeds, scheduler=scheduler, workers=workers
    )
    prep, prep_folder = load_current_prep(ws)
    ks = parse_k(settings.k)
    specs = build_cells(ks, settings.families, settings.seeds)
    corpus = PreparedCorpus.load(prep_folder)
    drawn = draw_for_sweep(ws, corpus, settings, sample)
    size = sized_for(PrepSize.of(corpus, settings), corpus, drawn, settings)
    check_k(ks, size, settings)
    key = grid_key(prep.hash, specs, settings, None if drawn is None else drawn.key_part())
    rows = None if drawn is None else drawn.rows_a

    def checked(result: SweepResult) -> SweepResult:
        return attach_check(ws, result, drawn, corpus, specs, settings, _client)

    with ws.store() as store:
        store.mark_sweeps_interrupted()  # the caller holds the lock: none of them runs
        found = None if force else store.find_sweep(prep.hash, key)
        if found is not None and found.status == "done":
            cached = _load_finished(ws.sweeps_dir / str(found.id), found)
            if cached is not None:
                return checked(cached)
        done = {c.cell for c in store.cells(found.id)} if found is not None else set()
    todo = [s for s in specs if s.cell not in done]
    reused = len(specs) - len(todo)
    check_memory(todo, size, settings)
    failed: list[dict[str, str]] = []
    sweep_id: int | None = None
    try:
        if not todo:
            assert found is not None  # every cell is recorded: only the scoring is left
            sweep_id = _open_record(ws, found, prep.hash, key, ks, settings, drawn)
            report(progress, reused, len(specs), "resuming")
        else:
            # connect first: an unreachable scheduler leaves no sweep record behind
            with _client(settings) as client:
                sweep_id = _open_record(ws, found, prep.hash, key, ks, settings, drawn)
                folder = ws.sweeps_dir / str(sweep_id)
                folder.mkdir(parents=True, exist_ok=True)
                if drawn is not None:
                    save_sample(folder, drawn)
                report(progress, reused, len(specs), "resuming" if reused else "starting")
                inputs = cell_inputs(corpus, settings.heldout_share, rows)
                failed = _run_cells(
                    ws, client, sweep_id, folder, inputs, todo, settings, reused, len(specs),
                    progress,
                )  # fmt: skip
        folder = ws.sweeps_dir / str(sweep_id)
        return checked(_score(ws, sweep_id, folder, corpus, specs, settings, reused, failed, rows))
    except BaseException:
        # any stop (an error, Ctrl-C) leaves the sweep resumable: say so in its record
        if sweep_id is not None:
            with ws.store() as store:
                record = store.get_sweep(sweep_id)
                if record is not None and record.status == "running":
                    store.set_sweep_status(sweep_id, "interrupted")
        raise


def _open_record(
    ws: Workspace,
    found: SweepRecord | None,
    prep_hash: str,
    key: str,
    ks: list[int],
    settings: SweepSettings,
    drawn: SweepSample | None = None,
) -> int:
    """Record a new sweep, or mark the one being resumed running again, with this process."""
    with ws.store() as store:
        if found is None:
            info = {
                "grid_key": key,
                "k": ks,
                "families": list(settings.families),
                "seeds": settings.seeds,
                "settings": settings.model_dump(),
                "run": run_info(),
            }
            if drawn is not None:
                info["sample"] = drawn.info()
            return store.start_sweep(prep_hash, info)
        info = {**found.info, "run": run_info()}
        store.set_sweep_status(found.id, "running", info)
        return found.id


def _score(
    ws: Workspace,
    sweep_id: int,
    folder: Path,
    corpus: PreparedCorpus,
    specs: list[CellSpec],
    settings: SweepSettings,
    reused: int,
    failed: list[dict[str, str]],
    rows: Any = None,
) -> SweepResult:
    """Score the recorded cells, write ``cells.parquet``, and mark the sweep ``done`` when
    every cell is in (``incomplete`` when some failed). ``rows``: the sample's rows (the
    cells are scored on its training calls)."""
    folder.mkdir(parents=True, exist_ok=True)
    train, _ = split_rows(corpus.doc_ids, settings.heldout_share)
    train = restrict(train, rows)
    with ws.store() as store:
        cells = [c.row() for c in store.cells(sweep_id)]
    if not cells:
        with ws.store() as store:
            store.set_sweep_status(sweep_id, "incomplete")
        raise NotReadyError("no cell of the sweep finished; see the errors above")
    frame, recs = score_and_recommend(cells, corpus, train, settings)
    frame.to_parquet(folder / "cells.parquet.tmp", index=False)
    os.replace(folder / "cells.parquet.tmp", folder / "cells.parquet")
    with ws.store() as store:
        if not failed and len(cells) == len(specs):
            record = store.get_sweep(sweep_id)
            info = {} if record is None else dict(record.info)
            info["recommendations"] = {f: r.to_dict() for f, r in recs.items()}
            store.finish_sweep(sweep_id, info)
        else:
            store.set_sweep_status(sweep_id, "incomplete")
    return SweepResult(sweep_id, folder, frame, recs, reused, False, failed, settings.rank_by)


def _load_finished(folder: Path, record: SweepRecord) -> SweepResult | None:
    path = folder / "cells.parquet"
    if not path.exists() or record.recommendations is None:
        return None
    frame = pd.read_parquet(path)
    recs = {f: Recommendation(**r) for f, r in record.recommendations.items()}
    rank_by = next(iter(recs.values())).rank_by if recs else "c_npmi"
    return SweepResult(record.id, folder, frame, recs, len(frame), True, [], rank_by)


def _run_cells(
    ws: Workspace,
    client: Any,
    sweep_id: int,
    folder: Path,
    inputs: dict[str, Any],
    todo: list[CellSpec],
    settings: SweepSettings,
    done_before: int,
    total: int,
    progress: Progress | None,
) -> list[dict[str, str]]:
    # Deferred on purpose, as in _client.
    from distributed import as_completed

    failed: list[dict[str, str]] = []
    payload = settings.model_dump()
    # Once per sweep, to every worker: a worker that dies leaves a copy on the others.
    [scattered] = client.scatter([inputs], broadcast=True, hash=False)
    futures = {}
    # Largest K first: they take longest, so the grid finishes sooner on few workers.
    for spec in sorted(todo, key=lambda s: (-s.k, s.family, s.seed)):
        fut = client.submit(
            fit_cell,
            scattered,
            spec.family,
            spec.k,
            spec.seed,
            payload,
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
                    out = fut.result()
                except Exception as exc:  # one failing cell must not lose the others
                    error = _cell_error(exc)
                    log.error("cell %s failed: %s", spec.cell, error)
                    failed.append({"cell": spec.cell, "error": error})
                    continue
                finally:
                    fut.release()  # the topic matrix is written below; free the worker's copy
                # the file first: a recorded cell always has its topics
                save_topics(folder / "topics" / f"{spec.cell}.npy", out["topic_terms"])
                store.add_cell(sweep_id, spec.cell, spec.family, spec.k, spec.seed, out["metrics"])
                done += 1
                report(progress, done, total, spec.cell)
                _checkpoint("sweep-cell")
    except BaseException:
        client.cancel(list(futures))
        raise
    finally:
        client.cancel([scattered])
    return failed


def _cell_error(exc: BaseException) -> str:
    """A failed cell's message; a cell whose workers kept dying says how to go on."""
    name = type(exc).__name__
    if name == "KilledWorker":
        return (
            f"{name}: the Dask workers running this cell stopped or were killed "
            "(the scheduler's allowed-failures limit was reached); the finished cells are "
            "kept: run the same sweep again to fit the missing ones"
        )
    return f"{name}: {exc}"
