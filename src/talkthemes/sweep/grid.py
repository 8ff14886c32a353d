"""The grid of a sweep: topic counts, families and seeds, as named cells.

A grid is written ``start:stop:step`` (stop included) or as a list ``5,10,15``; every
(family, K, seed) combination is one cell with an id such as ``lda-k012-s1``. The grid key
identifies a grid on one prep with the settings that change its results, so a finished
sweep of the same grid is reused and an interrupted one resumed.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from talkthemes.config import SweepSettings
from talkthemes.errors import ConfigError

__all__ = ["FAMILIES", "RUN_ONLY_SETTINGS", "CellSpec", "build_cells", "grid_key", "parse_k"]

#: Model families a sweep can fit.
FAMILIES = ("lda", "nmf")

#: ``[sweep]`` settings that say how or where a sweep runs, not what it computes: they are
#: left out of the grid key, so changing them never discards a finished sweep.
RUN_ONLY_SETTINGS = frozenset(
    {
        "k",
        "families",
        "seeds",
        "scheduler",
        "workers",
        "scheduler_timeout",
        "worker_memory_gb",
        "min_calls_per_theme",
        "publish_seed",
        # the sample is in the grid key as the rows it drew (grid_key's ``sample``)
        "sample",
        "auto_sample_above",
        "auto_sample",
        "sample_seed",
        "sample_publish_passes",
    }
)


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
        if f not in FAMILIES:
            raise ConfigError(f"--family {f!r}: expected lda, nmf or both (lda,nmf)")
    return [CellSpec(f, k, s) for f in families for k in ks for s in range(seeds)]


def grid_key(
    prep_hash: str,
    cells: Sequence[CellSpec],
    settings: SweepSettings,
    sample: Mapping[str, Any] | None = None,
) -> str:
    """A short hash of the prep, the cells and every setting that changes a cell's result.

    ``sample`` (:meth:`talkthemes.sweep.sample.SweepSample.key_part`) makes a sweep on a
    sample a different grid from one on every call; without it the key is what it always
    was, so earlier sweeps are still found.
    """
    relevant = settings.model_dump(exclude=set(RUN_ONLY_SETTINGS))
    body: dict[str, Any] = {
        "prep": prep_hash,
        "cells": [c.cell for c in cells],
        "settings": relevant,
    }
    if sample:
        body["sample"] = dict(sample)
    doc = json.dumps(body, sort_keys=True)
    return hashlib.sha256(doc.encode()).hexdigest()[:16]
