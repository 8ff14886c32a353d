"""How stable a sweep's recommendation is across two disjoint samples.

A sweep on a sample (:mod:`talkthemes.sweep.sample`) recommends K from sample A. To show
whether another sample of the same calls would have recommended the same K, the cells at the
recommended K and one grid step either side are fitted again — every seed, same settings —
on sample B, a disjoint stratified sample allocated like A; those cells are scored on B's
training calls and the same rule (:func:`talkthemes.sweep.recommend.recommend`) picks K
among them. The result says, per family, "K on sample A / K on sample B" and whether they
agree (docs/methods.md, "Sweeping a sample").

The cost is bounded: at most 3 × seeds cells per family, whatever the size of the grid (a
grid of 14 K values costs about a fifth more than the sweep itself). The check runs once
per sweep; its result is kept in the sweep record (``info["sample_check"]``).
"""

from __future__ import annotations

import logging
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import numpy as np

from talkthemes.config import SweepSettings
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.sweep.cell import cell_inputs, fit_cell, save_topics
from talkthemes.sweep.grid import CellSpec
from talkthemes.sweep.sample import SweepSample, restrict
from talkthemes.sweep.scoring import score_and_recommend
from talkthemes.sweep.split import split_rows
from talkthemes.workspace import Workspace

__all__ = [
    "CHECK_FOLDER",
    "attach_check",
    "check_cells",
    "check_summary",
    "describe_sample",
    "run_check",
]

log = logging.getLogger(__name__)

#: Where the check's cells write their topic–term matrices, under the sweep's folder.
CHECK_FOLDER = "sample_b"


def check_cells(
    specs: list[CellSpec], recommended: dict[str, int]
) -> tuple[list[CellSpec], dict[str, list[int]]]:
    """The cells to refit on sample B: per family, the recommended K and its grid neighbours.

    Returns
    -------
    cells : list of CellSpec
    ks : dict of str to list of int
        The K values refitted per family.
    """
    out: list[CellSpec] = []
    ks_by: dict[str, list[int]] = {}
    for family, k in recommended.items():
        ks = sorted({s.k for s in specs if s.family == family})
        if k not in ks:
            continue
        i = ks.index(k)
        near = ks[max(0, i - 1) : i + 2]
        ks_by[family] = near
        out.extend(s for s in specs if s.family == family and s.k in near)
    return out, ks_by


def check_summary(
    recommended_a: dict[str, int],
    recommended_b: dict[str, int],
    ks: dict[str, list[int]],
    *,
    sample_b: int,
    cells: int,
    seconds: float,
    failed: list[str],
) -> dict[str, Any]:
    """The check as the sweep record, the CLI and Choose K show it (JSON values)."""
    families = {
        f: {
            "k_a": int(recommended_a[f]),
            "k_b": None if f not in recommended_b else int(recommended_b[f]),
            "agree": recommended_b.get(f) == recommended_a[f],
            "ks_refit": [int(k) for k in ks[f]],
        }
        for f in ks
    }
    return {
        "sample_b": int(sample_b),
        "cells": int(cells),
        "seconds": round(float(seconds), 1),
        "failed": failed,
        "families": families,
    }


def run_check(
    client_factory: Callable[[SweepSettings], Any],
    sample: SweepSample,
    corpus: PreparedCorpus,
    sweep_folder: Path,
    specs: list[CellSpec],
    recommended: dict[str, int],
    settings: SweepSettings,
) -> dict[str, Any]:
    """Refit the cells near each recommended K on sample B, and recommend K again.

    ``client_factory(settings)`` is a context manager giving a Dask client (the sweep's own).
    """
    t0 = time.perf_counter()
    todo, ks = check_cells(specs, recommended)
    if not todo or len(sample.rows_b) == 0:
        return check_summary(
            recommended, {}, ks, sample_b=len(sample.rows_b), cells=0, seconds=0.0, failed=[]
        )
    folder = sweep_folder / CHECK_FOLDER
    folder.mkdir(parents=True, exist_ok=True)
    rows: list[dict[str, Any]] = []
    failed: list[str] = []
    with client_factory(settings) as client:
        for spec, metrics in _fit_all(client, todo, corpus, folder, sample, settings):
            if isinstance(metrics, Exception):
                failed.append(f"{spec.cell}: {type(metrics).__name__}: {metrics}")
                continue
            rows.append({"cell": spec.cell, "family": spec.family, "k": spec.k, "seed": spec.seed,
                         **metrics})  # fmt: skip
    recommended_b: dict[str, int] = {}
    if rows:
        train, _ = split_rows(corpus.doc_ids, settings.heldout_share)
        _, recs = score_and_recommend(rows, corpus, restrict(train, sample.rows_b), settings)
        recommended_b = {f: int(r.k) for f, r in recs.items()}
    return check_summary(
        recommended,
        recommended_b,
        ks,
        sample_b=len(sample.rows_b),
        cells=len(rows),
        seconds=time.perf_counter() - t0,
        failed=failed,
    )


def _fit_all(
    client: Any,
    todo: list[CellSpec],
    corpus: PreparedCorpus,
    folder: Path,
    sample: SweepSample,
    settings: SweepSettings,
) -> Iterator[tuple[CellSpec, dict[str, Any] | Exception]]:
    # Deferred on purpose: distributed is heavy to import (as in talkthemes.sweep.run).
    from distributed import as_completed

    rows_b = np.asarray(sample.rows_b, dtype=np.int64)
    payload = settings.model_dump()
    # as the sweep's own cells: inputs scattered once, topics written here (no shared disk)
    [scattered] = client.scatter(
        [cell_inputs(corpus, settings.heldout_share, rows_b)], broadcast=True, hash=False
    )
    futures = {
        client.submit(
            fit_cell,
            scattered,
            spec.family,
            spec.k,
            spec.seed,
            payload,
            key=f"talkthemes-sample-b-{spec.cell}-{time.time_ns()}",
            pure=False,
        ): spec
        for spec in sorted(todo, key=lambda s: (-s.k, s.family, s.seed))
    }
    try:
        for fut in as_completed(list(futures)):
            spec = futures[fut]
            try:
                out = fut.result()
            except Exception as exc:  # one failing cell must not lose the others
                log.error("sample B cell %s failed: %s", spec.cell, exc)
                yield spec, exc
                continue
            save_topics(folder / "topics" / f"{spec.cell}.npy", out["topic_terms"])
            yield spec, out["metrics"]
    except BaseException:
        client.cancel(list(futures))
        raise
    finally:
        client.cancel([scattered])


def describe_sample(sample: dict[str, Any] | None) -> list[str]:
    """The sample and its check in plain sentences (the CLI prints them, Choose K shows them).

    Empty for a sweep of every call.
    """
    if not sample:
        return []
    by = ", ".join(sample.get("by") or []) or "nothing (no date or segment field)"
    how = "an automatic sample" if sample.get("automatic") else "a sample"
    lines = [
        f"Swept on {how} of {int(sample['n']):,} of {int(sample['calls']):,} calls, "
        f"stratified by {by} ({int(sample['strata']):,} strata, seed {sample['seed']})."
    ]
    check = sample.get("check")
    if not check:
        lines.append("The second-sample check has not run yet (it runs when every cell is in).")
        return lines
    if not check.get("families"):
        lines.append("No second-sample check: no family had a recommendation to check.")
        return lines
    lines.append(
        f"Stability of the recommendation: the cells at each recommended K and one step either "
        f"side refitted on a second, disjoint sample of {int(check['sample_b']):,} calls "
        f"({int(check['cells'])} cells, {float(check['seconds']):.1f} s):"
    )
    for family, f in check["families"].items():
        k_b = "no recommendation" if f["k_b"] is None else f"K = {f['k_b']}"
        verdict = "they agree" if f["agree"] else "they differ"
        lines.append(
            f"  {family.upper()}: K = {f['k_a']} on sample A, {k_b} on sample B "
            f"(K refitted: {', '.join(map(str, f['ks_refit']))}): {verdict}."
        )
    for failed in check.get("failed") or []:
        lines.append(f"  sample B cell failed: {failed}")
    return lines


def attach_check(
    ws: Workspace,
    result: Any,
    drawn: SweepSample | None,
    corpus: PreparedCorpus,
    specs: list[CellSpec],
    settings: SweepSettings,
    client_factory: Callable[[SweepSettings], Any],
) -> Any:
    """Put a sweep's sample, with its second-sample check, on its result (a
    :class:`~talkthemes.sweep.run.SweepResult`).

    The check runs once, when the sweep is ``done`` and its record has none yet, and is kept
    in the record (``info["sample"]["check"]``); an interrupted check runs again on the next
    ``sweep`` of the same grid. A sweep of every call is returned unchanged.
    """
    if drawn is None:
        return result
    with ws.store() as store:
        record = store.get_sweep(result.sweep_id)
    info = {} if record is None else dict(record.info)
    sample = dict(info.get("sample") or drawn.info())
    if "check" not in sample and record is not None and record.status == "done":
        recommended = {f: int(r.k) for f, r in result.recommendations.items()}
        sample["check"] = run_check(
            client_factory, drawn, corpus, result.folder, specs, recommended, settings,
        )  # fmt: skip
        with ws.store() as store:
            store.set_sweep_status(result.sweep_id, "done", {**info, "sample": sample})
    result.sample = sample
    return result
