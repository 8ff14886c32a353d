"""The data behind Choose K: a sweep's scored cells, its recommendations, a cell's themes."""

from __future__ import annotations

import json
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.errors import NotReadyError
from talkthemes.sweep.sample_check import describe_sample
from talkthemes.sweep.scoring import seed_agreement
from talkthemes.versions.publish import pick_cell
from talkthemes.workspace import Workspace

__all__ = [
    "MEASURE_NAMES",
    "CellThemes",
    "SweepView",
    "cell_themes",
    "load_prep_vocabulary",
    "load_sweep",
    "measure_name",
    "measure_text",
    "pick_for",
    "scalar_columns",
]


#: How each measure is written on screen (the names used in the literature).
MEASURE_NAMES: dict[str, str] = {
    "c_npmi": "C_NPMI",
    "c_v": "C_V",
    "c_uci": "C_UCI",
    "u_mass": "U_Mass",
    "diversity": "diversity",
    "stability": "stability",
    "perplexity": "held-out perplexity",
    "reconstruction_error": "reconstruction error",
}


def measure_name(key: str) -> str:
    """A measure's key (``c_npmi``) as users read it (``C_NPMI``)."""
    return MEASURE_NAMES.get(str(key).strip().lower(), str(key))


_MEASURE_KEYS = re.compile(r"\b(" + "|".join(k for k in MEASURE_NAMES if "_" in k) + r")\b")


def measure_text(text: str) -> str:
    """``text`` with measure keys (``c_npmi``) written as users read them (``C_NPMI``)."""
    return _MEASURE_KEYS.sub(lambda m: MEASURE_NAMES[m.group(1)], str(text))


def pick_for(sweep: SweepView, family: str | None, k: int | None) -> tuple[str, int]:
    """The (family, K) Choose K opens on: the given one when the sweep has it.

    Pass the current version's family and K: Choose K then opens on the model in use;
    a family the sweep lacks falls back to a recommended family, a K it lacks to that
    family's recommended K.
    """
    if family not in sweep.families:
        family = next((f for f in sweep.families if f in sweep.recommended), sweep.families[0])
    if k not in sweep.ks(family):
        k = sweep.recommended.get(family, sweep.ks(family)[0])
    return str(family), int(k)  # type: ignore[arg-type]


@dataclass
class SweepView:
    """A sweep as the Choose K section shows it.

    Attributes
    ----------
    sweep_id : int
    prep_hash : str
    folder : Path
        ``sweeps/<id>``.
    cells : DataFrame
        One row per finished cell: ``cell, family, k, seed``, its metrics and
        ``top_terms`` (term ids per theme).
    recommendations : dict of str to dict
        Per family, :class:`talkthemes.sweep.recommend.Recommendation` as a dict.
    scored : bool
        True when the scored cells (coherence, stability…) are on disk; False while a
        sweep is running or was interrupted (fit measures only).
    created_at : str
    sample : dict or None
        A sweep on a sample: its size, strata and, under ``check``, the recommended K on
        sample A and on a disjoint sample B per family
        (:mod:`talkthemes.sweep.sample_check`); None when every call was swept.
    """

    sweep_id: int
    prep_hash: str
    folder: Path
    cells: pd.DataFrame
    recommendations: dict[str, dict[str, Any]]
    scored: bool
    created_at: str
    sample: dict[str, Any] | None = None

    @property
    def sample_lines(self) -> list[str]:
        """The sample and how stable the recommendation is across two samples, as sentences
        (empty for a sweep of every call)."""
        return describe_sample(self.sample)

    @property
    def sample_agreement(self) -> pd.DataFrame:
        """Per family: ``family``, ``k_a``, ``k_b``, ``agree`` (no rows without a check)."""
        check = (self.sample or {}).get("check") or {}
        rows = [
            {"family": f, "k_a": v["k_a"], "k_b": v["k_b"], "agree": bool(v["agree"])}
            for f, v in (check.get("families") or {}).items()
        ]
        return pd.DataFrame(rows, columns=["family", "k_a", "k_b", "agree"])

    @property
    def recommended(self) -> dict[str, int]:
        """Recommended K per family."""
        return {f: int(r["k"]) for f, r in self.recommendations.items()}

    @property
    def families(self) -> list[str]:
        """Families in the sweep, LDA first."""
        present = set(self.cells["family"])
        return [f for f in ("lda", "nmf") if f in present]

    def ks(self, family: str) -> list[int]:
        """Topic counts swept for a family."""
        return sorted(int(k) for k in set(self.cells.loc[self.cells["family"] == family, "k"]))


def load_sweep(ws: Workspace, sweep_id: int | None = None) -> SweepView:
    """Read a sweep (default: the latest) with its scored cells and recommendations.

    Raises
    ------
    NotReadyError
        When there is no sweep, or it has no finished cell yet.
    """
    with ws.store() as store:
        record = store.get_sweep(sweep_id)
        if record is None:
            raise NotReadyError("no sweep yet: run 'talkthemes sweep' first")
        raw = pd.DataFrame([c.row() for c in store.cells(record.id)])
    if raw.empty:
        raise NotReadyError(f"sweep {record.id} has no finished cell yet")
    folder = ws.sweeps_dir / str(record.id)
    path = folder / "cells.parquet"
    if path.exists():
        scored = pd.read_parquet(path)
        cells = scored.merge(raw[["cell", "top_terms"]], on="cell", how="left")
    else:
        cells = raw
    cells = cells.sort_values(["family", "k", "seed"]).reset_index(drop=True)
    return SweepView(
        sweep_id=record.id,
        prep_hash=record.prep_hash,
        folder=folder,
        cells=cells,
        recommendations=dict(record.recommendations or {}),
        scored=path.exists(),
        created_at=record.created_at,
        sample=record.info.get("sample"),
    )


@dataclass
class CellThemes:
    """The themes of one sweep cell: ``frame`` has ``theme`` (1…K) and ``terms``."""

    cell: str
    family: str
    k: int
    seed: int
    frame: pd.DataFrame


def cell_themes(
    ws: Workspace,
    sweep: SweepView,
    family: str,
    k: int,
    *,
    n_terms: int = 8,
    vocabulary: Sequence[str] | None = None,
) -> CellThemes:
    """Top terms (by probability) of each theme of the (family, K) cell that would be
    published: the medoid seed, the one agreeing most with the other seeds.

    Parameters
    ----------
    ws : Workspace
    sweep : SweepView
    family : str
    k : int
    n_terms : int
        Terms per theme.
    vocabulary : sequence of str, optional
        The prep's vocabulary (read from ``prepared/<hash>/vocabulary.json`` if omitted).

    Raises
    ------
    InputError
        When the sweep has no such cell.
    NotReadyError
        When the prep's vocabulary is missing.
    """
    cells = sweep.cells
    if "top_terms" in cells.columns and cells["top_terms"].notna().all():
        cells = seed_agreement(cells)
    row = pick_cell(cells, k=int(k), family=family, cell=None)
    if vocabulary is None:
        vocabulary = load_prep_vocabulary(ws, sweep.prep_hash)
    path = sweep.folder / "topics" / f"{row['cell']}.npy"
    if path.exists():
        topics = np.load(path, allow_pickle=False)
        order = np.argsort(-topics, axis=1, kind="stable")[:, :n_terms]
    else:  # the cell's recorded top terms (already ranked by probability)
        order = np.asarray(row["top_terms"], dtype=np.int64)[:, :n_terms]
    terms = [", ".join(vocabulary[int(i)].replace("_", " ") for i in r) for r in order]
    frame = pd.DataFrame({"theme": np.arange(1, len(terms) + 1), "terms": terms})
    return CellThemes(str(row["cell"]), family, int(row["k"]), int(row["seed"]), frame)


def load_prep_vocabulary(ws: Workspace, prep_hash: str) -> list[str]:
    """The vocabulary of a prep (``prepared/<hash>/vocabulary.json``)."""
    path = ws.prepared_dir / prep_hash / "vocabulary.json"
    if not path.exists():
        raise NotReadyError(f"{path} is missing: run 'talkthemes prepare' again")
    return [str(t) for t in json.loads(path.read_text(encoding="utf-8"))]


def scalar_columns(frame: pd.DataFrame) -> pd.DataFrame:
    """The columns of a frame that hold single values (drops per-topic lists and the like)."""
    keep = [
        c
        for c in frame.columns
        if not frame[c].map(lambda v: isinstance(v, (list, tuple, np.ndarray, dict))).any()
    ]
    return frame[keep]
