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


def __getattr__(name: str) -> Any:
    if name == "make_model":
        from talkthemes.models.factory import make_model

        return make_model
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
