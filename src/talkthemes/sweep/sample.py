"""Sweeping a sample of the calls: a stratified random sample, and a disjoint second one.

On a large prep a sweep fits its cells on a **stratified random sample** of the calls
instead of all of them (docs/methods.md, "Sweeping a sample"). The strata are the call's
month (from its ``date``) crossed with the metadata fields that name segments (text fields
with at most :data:`MAX_SEGMENT_VALUES` distinct values, e.g. a queue or a site), so every
month and segment is represented in proportion to its size.

**Allocation** is proportional (Cochran 1977, section 5.5, from memory): stratum h of N_h
of the N calls gets n_h = n · N_h / N calls, rounded by largest remainders so the n_h add up
to n exactly (each n_h is ⌊n N_h / N⌋ or one more). Within a stratum the calls are drawn by
simple random sampling without replacement: every call gets a seeded uniform key and a
stratum takes its n_h calls with the smallest keys. The **second sample** (B) takes, in each
stratum, the next n_h calls by key, so it is disjoint from the first (A) and allocated alike
wherever the stratum has 2 n_h calls (fewer otherwise). Both depend only on the prep's call
order, the strata and the seed.

References
----------
Cochran, W. G. (1977). Sampling Techniques, 3rd ed. Wiley. Chapter 5 (stratified random
sampling; proportional allocation).
"""

from __future__ import annotations

import hashlib
import io
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.config import SweepSettings
from talkthemes.errors import ConfigError, NotReadyError
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.sweep.limits import PrepSize
from talkthemes.sweep.split import split_rows, subsample_size
from talkthemes.workspace import Workspace, atomic_write_bytes

__all__ = [
    "MAX_SEGMENT_VALUES",
    "SAMPLE_FILE",
    "SweepSample",
    "allocate",
    "draw_for_sweep",
    "draw_sample",
    "load_sample_rows",
    "restrict",
    "sample_size",
    "save_sample",
    "sized_for",
    "strata_labels",
    "stratified_rows",
]

#: A metadata field with at most this many distinct values is a segment (a stratum field).
MAX_SEGMENT_VALUES = 30

#: Mixed into the seed so the sample's stream differs from the seeds' subsample streams.
_STREAM = 19770101


def allocate(stratum_sizes: Sequence[int] | np.ndarray, n: int) -> np.ndarray:
    """Proportional allocation of ``n`` sample units to strata of the given sizes.

    n_h = n · N_h / N rounded by largest remainders: every stratum gets the floor of its
    quota and the strata with the largest fractional parts one more (ties: the earlier
    stratum), so the allocation adds up to ``n`` and no n_h exceeds N_h.

    Parameters
    ----------
    stratum_sizes : sequence of int
        N_h per stratum (each ≥ 0).
    n : int
        Sample size, 0 ≤ n ≤ Σ N_h.

    Returns
    -------
    numpy.ndarray of int64
        n_h per stratum.

    Examples
    --------
    >>> allocate([50, 30, 20], 10).tolist()
    [5, 3, 2]
    >>> allocate([5, 5, 5], 4).tolist()
    [2, 1, 1]
    """
    sizes = np.asarray(stratum_sizes, dtype=np.int64)
    total = int(sizes.sum())
    if n < 0 or n > total:
        raise ValueError(f"allocate: n={n} must be between 0 and {total}")
    if total == 0:
        return np.zeros_like(sizes)
    quota = n * sizes.astype(np.float64) / total
    base = np.floor(quota).astype(np.int64)
    left = n - int(base.sum())
    if left > 0:
        order = np.argsort(-(quota - base), kind="stable")
        base[order[:left]] += 1
    return np.minimum(base, sizes)


def stratified_rows(
    labels: Sequence[str] | np.ndarray, n: int, seed: int
) -> tuple[np.ndarray, np.ndarray]:
    """Rows of a proportionally allocated stratified sample, and of a disjoint second one.

    Parameters
    ----------
    labels : sequence of str
        The stratum of each row.
    n : int
        Size of the first sample.
    seed : int

    Returns
    -------
    rows_a, rows_b : numpy.ndarray of int64, sorted
        Sample A (``n`` rows) and sample B (the next n_h rows of each stratum by the same
        random keys; disjoint from A).
    """
    # strata numbered in sorted label order (hashing, not sorting, the million labels)
    inverse, codes = pd.factorize(np.asarray(labels, dtype=object), sort=True)
    sizes = np.bincount(inverse, minlength=len(codes))
    alloc = allocate(sizes, n)
    keys = np.random.default_rng([int(seed), _STREAM]).random(len(inverse))
    order = np.lexsort((keys, inverse))  # by stratum, then by key
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    rank = np.empty(len(inverse), dtype=np.int64)
    rank[order] = np.arange(len(inverse)) - np.repeat(starts, sizes)
    quota = alloc[inverse]
    rows_a = np.flatnonzero(rank < quota).astype(np.int64)
    rows_b = np.flatnonzero((rank >= quota) & (rank < 2 * quota)).astype(np.int64)
    return rows_a, rows_b


def strata_labels(
    doc_ids: Sequence[str], metadata: Mapping[str, Mapping[str, str]]
) -> tuple[np.ndarray, list[str]]:
    """Each call's stratum: its month crossed with the segment fields of the metadata.

    The month is ``YYYY-MM`` of the ``date`` field (``no date`` when missing or not a date).
    A segment field is any other field whose values are not all numbers and that has at
    most :data:`MAX_SEGMENT_VALUES` distinct values; a call without it is in ``(none)``.

    Returns
    -------
    labels : numpy.ndarray of str
        One label per call, e.g. ``2026-03|queue=billing``.
    by : list of str
        ``month`` (when any call has a date) and the segment fields, in that order.
    """
    rows = [metadata.get(t) or {} for t in doc_ids]
    names = sorted({name for r in rows for name in r})
    parts: list[list[str]] = []
    by: list[str] = []
    if "date" in names:  # parsed once per distinct value: calls share few dates
        raw = [r.get("date") for r in rows]
        distinct = sorted({v for v in raw if v is not None})
        parsed = pd.to_datetime(
            pd.Series(distinct, dtype=object), errors="coerce", format="ISO8601", utc=True
        )
        month_of = {
            v: d.strftime("%Y-%m") for v, d in zip(distinct, parsed, strict=True) if pd.notna(d)
        }
        if month_of:
            parts.append([month_of.get(v, "no date") for v in raw])  # type: ignore[arg-type]
            by.append("month")
    for name in names:
        if name == "date":
            continue
        raw = [r.get(name) for r in rows]
        distinct = {v for v in raw if v is not None}
        if not distinct or len(distinct) > MAX_SEGMENT_VALUES:
            continue
        if pd.to_numeric(pd.Series(sorted(distinct)), errors="coerce").notna().all():
            continue  # a number (a duration): a measure, not a segment
        parts.append([f"{name}=" + ("(none)" if v is None else str(v)) for v in raw])
        by.append(str(name))
    if not parts:
        return np.full(len(doc_ids), "all", dtype=object), by
    return np.array(["|".join(t) for t in zip(*parts, strict=True)], dtype=object), by


def sample_size(settings: SweepSettings, n_calls: int, requested: int | None = None) -> int:
    """The sample a sweep uses: ``requested`` (or ``[sweep] sample``), else the automatic
    ``[sweep] auto_sample`` when the prep has more than ``auto_sample_above`` calls; 0 = all.

    Raises
    ------
    ConfigError
        When the sample asked for is below 1 or not smaller than the prep's calls.
    """
    n = settings.sample if requested is None else requested
    if n < 0 or (requested is not None and requested == 0):
        raise ConfigError(
            f"--sample {n}: give the number of calls to sweep on, at least 1 and fewer than "
            f"the prep's {n_calls:,} calls (to sweep every call, leave --sample out)"
        )
    if n == 0:
        above = settings.auto_sample_above
        if above and n_calls > above:
            return min(settings.auto_sample, n_calls - 1)
        return 0
    if n >= n_calls:
        raise ConfigError(
            f"--sample {n:,}: the prep has {n_calls:,} calls; a sample must be smaller "
            "(to sweep every call, leave --sample out)"
        )
    return n


@dataclass(frozen=True)
class SweepSample:
    """The calls a sweep fits on, and a disjoint second sample for the stability check.

    Attributes
    ----------
    size : int
        Calls asked for (sample A has exactly this many).
    seed : int
    by : list of str
        Stratum fields (``month`` and segment fields).
    rows_a, rows_b : numpy.ndarray of int64
        Row numbers in the prep of samples A and B.
    n_calls : int
        Calls in the prep.
    n_strata : int
    automatic : bool
        True when ``[sweep] auto_sample_above`` switched it on.
    """

    size: int
    seed: int
    by: list[str]
    rows_a: np.ndarray = field(repr=False)
    rows_b: np.ndarray = field(repr=False)
    n_calls: int
    n_strata: int
    automatic: bool

    @property
    def digest(self) -> str:
        """A short hash of sample A's rows (part of the sweep's grid key)."""
        return hashlib.sha256(np.ascontiguousarray(self.rows_a, dtype="<i8").tobytes()).hexdigest()[
            :16
        ]

    def key_part(self) -> dict[str, Any]:
        """What the grid key holds of the sample: size, seed, strata and rows."""
        return {"n": self.size, "seed": self.seed, "by": list(self.by), "rows": self.digest}

    def info(self) -> dict[str, Any]:
        """The sample as the sweep record keeps it (JSON values)."""
        return {
            **self.key_part(),
            "calls": self.n_calls,
            "strata": self.n_strata,
            "sample_b": len(self.rows_b),
            "automatic": self.automatic,
        }


def draw_sample(
    doc_ids: Sequence[str],
    metadata: Mapping[str, Mapping[str, str]],
    n: int,
    seed: int,
    *,
    automatic: bool = False,
) -> SweepSample:
    """Draw samples A and B of ``n`` calls, stratified by month and segment fields."""
    labels, by = strata_labels(doc_ids, metadata)
    rows_a, rows_b = stratified_rows(labels, n, seed)
    return SweepSample(
        size=int(n),
        seed=int(seed),
        by=by,
        rows_a=rows_a,
        rows_b=rows_b,
        n_calls=len(doc_ids),
        n_strata=len(pd.unique(labels)),
        automatic=automatic,
    )


def restrict(rows: np.ndarray, sample: np.ndarray | None) -> np.ndarray:
    """The rows of ``rows`` that are in ``sample`` (all of them when ``sample`` is None)."""
    if sample is None:
        return rows
    return rows[np.isin(rows, sample)]


def draw_for_sweep(
    ws: Workspace, corpus: PreparedCorpus, settings: SweepSettings, requested: int | None = None
) -> SweepSample | None:
    """The sample a sweep of ``corpus`` fits on, or None to sweep every call.

    ``requested`` is ``--sample`` (None: ``[sweep] sample`` and the automatic rule of
    :func:`sample_size`); the strata come from the stored metadata of the prep's calls.
    """
    n = sample_size(settings, corpus.n_docs, requested)
    if n == 0:
        return None
    with ws.store() as store:
        metadata = store.metadata_values(corpus.doc_ids)
    automatic = requested is None and settings.sample == 0
    return draw_sample(corpus.doc_ids, metadata, n, settings.sample_seed, automatic=automatic)


#: The sample's rows in a sweep's folder (written by the client; read by ``publish``).
SAMPLE_FILE = "sample_rows.npy"


def save_sample(folder: Path, sample: SweepSample) -> None:
    """Write sample A's rows as ``<folder>/sample_rows.npy`` (no pickle), atomically."""
    buf = io.BytesIO()
    np.save(buf, np.asarray(sample.rows_a, dtype=np.int64), allow_pickle=False)
    atomic_write_bytes(folder / SAMPLE_FILE, buf.getvalue())


def load_sample_rows(folder: Path, info: Mapping[str, Any]) -> np.ndarray:
    """Sample A's rows of a sweep, checked against the digest its record keeps.

    Raises
    ------
    NotReadyError
        When the file is missing or does not hold the rows the sweep was run on.
    """
    path = folder / SAMPLE_FILE
    if not path.exists():
        raise NotReadyError(
            f"{path} is missing: the sweep's sample cannot be read; run 'talkthemes sweep "
            "--force' again"
        )
    rows = np.load(path, allow_pickle=False).astype(np.int64)
    digest = hashlib.sha256(np.ascontiguousarray(rows, dtype="<i8").tobytes()).hexdigest()[:16]
    if digest != info.get("rows"):
        raise NotReadyError(
            f"{path} does not hold the rows sweep {folder.name} was run on; run "
            "'talkthemes sweep --force' again"
        )
    return rows


def sized_for(
    size: PrepSize, corpus: PreparedCorpus, sample: SweepSample | None, settings: SweepSettings
) -> PrepSize:
    """The sizes that bound K and memory when the cells fit on ``sample`` (else ``size``)."""
    if sample is None:
        return size
    train = len(restrict(split_rows(corpus.doc_ids, settings.heldout_share)[0], sample.rows_a))
    return replace(size, train=train, fit=subsample_size(train, settings.subsample))
