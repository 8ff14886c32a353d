"""Sweep topic counts: the grid of (family, K, seed) cells, run on Dask, scored once.

- :mod:`~talkthemes.sweep.grid` — topic-count grids, cells, the grid key;
- :mod:`~talkthemes.sweep.split` — the held-out split and each seed's subsample;
- :mod:`~talkthemes.sweep.cell` — fitting one cell (on a worker);
- :mod:`~talkthemes.sweep.scoring` — coherence, diversity, stability, seed agreement;
- :mod:`~talkthemes.sweep.run` — the sweep on Dask (client, submission, resume);
- :mod:`~talkthemes.sweep.recommend` — the K rule.
"""

from __future__ import annotations

from typing import Any

from talkthemes.sweep.cell import _PREP_CACHE as _PREP_CACHE  # compat: read by the cluster test
from talkthemes.sweep.cell import fit_cell
from talkthemes.sweep.grid import CellSpec, build_cells, grid_key, parse_k
from talkthemes.sweep.recommend import Recommendation, best_family, recommend
from talkthemes.sweep.run import SweepResult, load_current_prep, run_sweep, sweep_settings
from talkthemes.sweep.scoring import MEASURES, score_cells, seed_agreement
from talkthemes.sweep.split import split_rows, subsample_rows

__all__ = [
    "MEASURES",
    "CellSpec",
    "Recommendation",
    "SweepResult",
    "best_family",
    "build_cells",
    "fit_cell",
    "grid_key",
    "load_current_prep",
    "parse_k",
    "recommend",
    "run_sweep",
    "score_cells",
    "seed_agreement",
    "split_rows",
    "subsample_rows",
    "sweep_settings",
]


def __getattr__(name: str) -> Any:
    # compat: re-exports until the merge. ``make_model`` moved to talkthemes.models.factory;
    # resolved on first use because importing the models loads gensim and scikit-learn.
    if name == "make_model":
        from talkthemes.models.factory import make_model

        return make_model
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
