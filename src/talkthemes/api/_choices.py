"""Look-ups in the store that the API's methods check their arguments against: the
sweep's recommendation, the cell a publish names, the versions kept, the current themes."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

from talkthemes.errors import ConfigError, InputError, NotReadyError
from talkthemes.workspace import WorkspaceDir

from ._deferred import deferred

if TYPE_CHECKING:  # heavy (pandas, scikit-learn): imported on first use, see _deferred.py
    import pandas as pd

    from talkthemes.sweep import recommend
else:
    pd = deferred("pandas")
    recommend = deferred("talkthemes.sweep.recommend")

__all__ = ["check_cell", "check_theme", "current_number", "id_ranges", "kept_version", "latest"]


def current_number(folder: WorkspaceDir) -> int | None:
    """The current version's number; None before the first publish."""
    with folder.store() as store:
        current = store.current_version()
    return None if current is None else current.n


def latest(folder: WorkspaceDir, family: str | None) -> recommend.Recommendation:
    """The latest finished sweep's recommendation for ``family`` (the best family if None).

    Raises
    ------
    ConfigError
        When no sweep has a recommendation, or none for ``family``.
    """
    with folder.store() as store:
        sweep = next(
            (s for s in map(store.get_sweep, store.sweep_ids()) if s and s.recommendations),
            None,
        )
        cells = pd.DataFrame([c.row() for c in store.cells(sweep.id)]) if sweep else pd.DataFrame()
    if sweep is None:
        raise ConfigError("no finished sweep with a recommendation: run 'talkthemes sweep'")
    recs = {f: recommend.Recommendation(**r) for f, r in sweep.recommendations.items()}
    if family is None:
        scored = folder.sweeps_dir / str(sweep.id) / "cells.parquet"
        family = recommend.best_family(recs, pd.read_parquet(scored) if scored.exists() else cells)
    if family not in recs:
        raise ConfigError(f"the sweep has no recommendation for --family {family}")
    return recs[family]


def check_cell(folder: WorkspaceDir, cell: str, *, k: int | None, family: str | None) -> None:
    """Refuse a K or family that disagrees with the sweep cell ``cell`` names.

    An unknown cell passes: publishing names it.
    """
    with folder.store() as store:
        found = next(
            (c for sid in store.sweep_ids() for c in store.cells(sid) if c.cell == cell),
            None,
        )
    if found is None:
        return
    if k is not None and found.k != k:
        raise ConfigError(
            f"--cell {cell} has K={found.k}, not --k {k}: give --cell alone, or --k with --family"
        )
    if family is not None and found.family != family:
        raise ConfigError(
            f"--cell {cell} is {found.family}, not --family {family}: give --cell alone, "
            "or --k with --family"
        )


def kept_version(folder: WorkspaceDir, version: int) -> None:
    """Refuse a version number that is not kept."""
    with folder.store() as store:
        known = [v.n for v in store.versions()]
    if version not in known:
        raise ConfigError(
            f"--version {version}: no such version (kept: {', '.join(map(str, known)) or 'none'})"
        )


def check_theme(folder: WorkspaceDir, theme_id: int) -> None:
    """Refuse a theme id that the current version does not have (naming the ids it has)."""
    with folder.store() as store:
        current = store.current_version()
        if current is None:
            raise NotReadyError("no version published yet: run 'talkthemes publish' first")
        n = current.n
        ids = [t.theme_id for t in store.themes(n)]
    if theme_id not in ids:
        raise InputError(
            f"there is no theme {theme_id} in version {n} (its theme ids: {id_ranges(ids)}; "
            "see 'talkthemes themes')"
        )


def id_ranges(ids: Sequence[int]) -> str:
    """``[1, 2, 3, 7, 9, 10]`` → ``"1–3, 7, 9–10"``."""
    runs: list[list[int]] = []
    for i in sorted(set(ids)):
        if runs and i == runs[-1][1] + 1:
            runs[-1][1] = i
        else:
            runs.append([i, i])
    return ", ".join(str(a) if a == b else f"{a}–{b}" for a, b in runs) or "none"
