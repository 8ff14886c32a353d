"""Records of prepared corpora, sweeps and their cells."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from talkthemes.store.records._base import (
    EMPTY,
    ReadOnlyDict,
    document,
    ints,
    opt_float,
    opt_int,
    opt_str,
)

__all__ = ["CellRecord", "PrepRecord", "SweepRecord"]


# -- preps ----------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class PrepRecord:
    """A prepared corpus (``preps`` row).

    Attributes
    ----------
    hash : str
        The prep's hash (its folder's name under ``prepared/``).
    created_at : str
        When the prep was built (ISO 8601; when it was recorded, for a record without it).
    path : str or None
        Its folder, relative to the workspace root (None: ``prepared/<hash>``).
    counts : mapping
        The prep's counts (``transcripts``, ``terms`` …; empty when not recorded).
    frozen_from : mapping or None
        ``version`` and ``prep_hash`` of the version whose frozen rules made this prep
        (None: made by the chain).
    info : mapping
        The recorded document (also ``settings``, ``versions``, ``chain_version``).
    """

    hash: str
    created_at: str
    path: str | None = None
    counts: Mapping[str, Any] = EMPTY
    frozen_from: Mapping[str, Any] | None = None
    info: Mapping[str, Any] = EMPTY

    @classmethod
    def from_row(cls, prep_hash: str, created_at: str, info: str) -> PrepRecord:
        """Build from the columns ``hash, created_at, info`` (the document's own hash and
        time, when it has them, take precedence)."""
        doc = document(info)
        frozen = doc.get("frozen_from")
        return cls(
            hash=str(doc.get("hash", prep_hash)),
            created_at=str(doc.get("created_at", created_at)),
            path=opt_str(doc.get("path")),
            counts=ReadOnlyDict(doc.get("counts") or {}),
            frozen_from=None if frozen is None else ReadOnlyDict(frozen),
            info=doc,
        )


# -- sweeps and cells -----------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class SweepRecord:
    """A sweep (``sweeps`` row) and what it recorded.

    Attributes
    ----------
    id : int
    prep_hash : str
    created_at : str
    finished_at : str or None
    status : str
        ``running``, ``done``, ``incomplete`` or ``interrupted``.
    grid_key : str or None
        Identifies the prep, cells and settings of the grid (a re-run with the same key
        resumes this sweep).
    k : tuple of int
        The topic counts of the grid.
    families : tuple of str
    seeds : int or None
        Seeds per (family, K).
    run_pid, run_host : int or None, str or None
        The process that ran (or runs) it; None for records written before they were kept.
    recommendations : mapping or None
        Family → the recommendation's JSON form, once the sweep is done.
    info : mapping
        The recorded document (also ``settings``).
    """

    id: int
    prep_hash: str
    created_at: str
    finished_at: str | None
    status: str
    grid_key: str | None = None
    k: tuple[int, ...] = ()
    families: tuple[str, ...] = ()
    seeds: int | None = None
    run_pid: int | None = None
    run_host: str | None = None
    recommendations: Mapping[str, Mapping[str, Any]] | None = None
    info: Mapping[str, Any] = EMPTY

    @classmethod
    def from_row(
        cls, sid: int, prep_hash: str, created: str, finished: str | None, status: str, info: str
    ) -> SweepRecord:
        """Build from the columns ``id, prep_hash, created_at, finished_at, status, info``."""
        doc = document(info)
        run = doc.get("run") or {}
        recs = doc.get("recommendations")
        return cls(
            id=int(sid),
            prep_hash=str(prep_hash),
            created_at=str(created),
            finished_at=finished,
            status=str(status),
            grid_key=opt_str(doc.get("grid_key")),
            k=ints(doc.get("k")),
            families=tuple(str(f) for f in doc.get("families") or ()),
            seeds=opt_int(doc.get("seeds")),
            run_pid=opt_int(run.get("pid")),
            run_host=opt_str(run.get("host")),
            recommendations=None
            if recs is None
            else ReadOnlyDict({f: ReadOnlyDict(r) for f, r in recs.items()}),
            info=doc,
        )


@dataclass(frozen=True, slots=True)
class CellRecord:
    """A finished sweep cell (``cells`` row): one model fit and its metrics.

    Attributes
    ----------
    sweep_id : int
    cell : str
        ``<family>-k<K>-s<seed>``.
    family : str
    k, seed : int
    finished_at : str
    top_terms : tuple of tuple of int
        Each topic's top term ids, most probable first.
    fit_seconds, peak_memory_mb : float or None
    perplexity : float or None
        Held-out perplexity (LDA).
    reconstruction_error : float or None
        NMF's reconstruction error.
    metrics : mapping
        The recorded document as the fit returned it (also ``convergence`` for LDA).
    """

    sweep_id: int
    cell: str
    family: str
    k: int
    seed: int
    finished_at: str = ""
    top_terms: tuple[tuple[int, ...], ...] = ()
    fit_seconds: float | None = None
    peak_memory_mb: float | None = None
    perplexity: float | None = None
    reconstruction_error: float | None = None
    metrics: Mapping[str, Any] = EMPTY

    @classmethod
    def from_row(
        cls, sweep_id: int, cell: str, family: str, k: int, seed: int, finished: str, metrics: str
    ) -> CellRecord:
        """Build from the columns ``sweep_id, cell, family, k, seed, finished_at, metrics``."""
        doc = document(metrics)
        return cls(
            sweep_id=int(sweep_id),
            cell=str(cell),
            family=str(family),
            k=int(k),
            seed=int(seed),
            finished_at=str(finished),
            top_terms=tuple(ints(t) for t in doc.get("top_terms") or ()),
            fit_seconds=opt_float(doc.get("fit_seconds")),
            peak_memory_mb=opt_float(doc.get("peak_memory_mb")),
            perplexity=opt_float(doc.get("perplexity")),
            reconstruction_error=opt_float(doc.get("reconstruction_error")),
            metrics=doc,
        )

    def row(self) -> dict[str, Any]:
        """The cell as one flat row: ``cell, family, k, seed`` and its metrics as recorded
        (the shape of a cells frame, one row per cell)."""
        return {
            "cell": self.cell,
            "family": self.family,
            "k": self.k,
            "seed": self.seed,
            **self.metrics,
        }
