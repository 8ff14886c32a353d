"""What every topic model returns, and the small pieces both model families share.

Both families (:mod:`talkthemes.models.lda`, :mod:`talkthemes.models.nmf`) return a
:class:`FittedTopics`: a topic–term matrix and a document–topic matrix whose rows are
probability distributions, the parameters that produced them, and the fit time. Everything
downstream (metrics, sweep, versions, viewer) works from these two matrices only.

A model's *state* (what is needed to give shares to new documents) is a pair
``(arrays, params)``: a dict of named numpy arrays, saved as ``.npy`` files, and a dict of
JSON values. There is no pickle anywhere on that path.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, TypeAlias

import numpy as np
import scipy.sparse as sp

from talkthemes.errors import ConfigError, InputError

__all__ = [
    "FittedTopics",
    "StateParts",
    "check_counts",
    "check_params",
    "normalise_rows",
    "top_terms",
    "topic_shares",
]

StateParts: TypeAlias = tuple[Mapping[str, np.ndarray], Mapping[str, Any]]
"""A saved model state: named numpy arrays and JSON-serialisable parameters."""

_ROW_SUM_TOLERANCE = 1e-6


@dataclass(frozen=True)
class FittedTopics:
    """A fitted topic model, as plain arrays.

    The arrays are validated when the object is built (rows must sum to 1 within 1e-6), stored
    as float64 copies with each row divided by its sum, and made read-only.

    Attributes
    ----------
    topic_terms : numpy.ndarray of shape (K, V), float64
        Row k is the topic–term distribution φ_k; every row sums to 1.
    doc_topics : numpy.ndarray of shape (D, K), float64
        Row d is the document–topic distribution θ_d of training document d; every row
        sums to 1. Zero rows (shape (0, K)) when the fit was asked not to infer them
        (``fit(..., shares=False)``, as the refresh calibration fits do).
    params : dict
        JSON-serialisable parameters and fit diagnostics (family, K, seed, library version…).
    fit_seconds : float
        Wall-clock seconds spent in ``fit``, including the document–topic inference.
    """

    topic_terms: np.ndarray
    doc_topics: np.ndarray
    params: dict[str, Any]
    fit_seconds: float

    def __post_init__(self) -> None:
        phi = _checked_distribution_rows(self.topic_terms, "topic_terms")
        theta = _checked_distribution_rows(self.doc_topics, "doc_topics", allow_no_rows=True)
        if theta.shape[1] != phi.shape[0]:
            raise InputError(
                f"FittedTopics: doc_topics has {theta.shape[1]} topic columns but topic_terms "
                f"has {phi.shape[0]} topic rows"
            )
        if not (math.isfinite(self.fit_seconds) and self.fit_seconds >= 0):
            raise InputError(f"FittedTopics: fit_seconds={self.fit_seconds!r} is not a time")
        object.__setattr__(self, "topic_terms", phi)
        object.__setattr__(self, "doc_topics", theta)

    @property
    def k(self) -> int:
        """Number of topics."""
        return int(self.topic_terms.shape[0])


def _checked_distribution_rows(
    values: np.ndarray, name: str, *, allow_no_rows: bool = False
) -> np.ndarray:
    arr = np.array(values, dtype=np.float64, copy=True)
    if arr.ndim != 2 or (arr.shape[0] == 0 and not allow_no_rows) or arr.shape[1] == 0:
        raise InputError(
            f"FittedTopics: {name} must be a non-empty 2-D array, got shape {arr.shape}"
        )
    if not np.all(np.isfinite(arr)):
        row = int(np.flatnonzero(~np.all(np.isfinite(arr), axis=1))[0])
        raise InputError(f"FittedTopics: {name} row {row} holds a value that is not finite")
    if np.any(arr < 0):
        row = int(np.flatnonzero(np.any(arr < 0, axis=1))[0])
        raise InputError(f"FittedTopics: {name} row {row} holds a negative value")
    sums = arr.sum(axis=1)
    bad = np.flatnonzero(np.abs(sums - 1.0) > _ROW_SUM_TOLERANCE)
    if bad.size:
        row = int(bad[0])
        raise InputError(
            f"FittedTopics: {name} row {row} sums to {float(sums[row])!r}, not 1 "
            f"({bad.size} such rows)"
        )
    arr /= sums[:, np.newaxis]
    arr.flags.writeable = False
    return arr


def top_terms(topic_terms: np.ndarray, n: int) -> np.ndarray:
    """Ids of each topic's ``n`` most probable terms, most probable first.

    Ties are broken by the lower term id, so the result is the same on every run.

    Parameters
    ----------
    topic_terms : numpy.ndarray of shape (K, V)
        Topic–term weights (any non-negative scale).
    n : int
        Terms per topic; capped at V.

    Returns
    -------
    numpy.ndarray of shape (K, min(n, V)), int64
    """
    phi = np.asarray(topic_terms)
    if phi.ndim != 2:
        raise InputError(f"top_terms: topic_terms must be 2-D, got shape {phi.shape}")
    if n < 1:
        raise ConfigError(f"top_terms: n={n!r} is not allowed; expected an integer >= 1")
    order = np.argsort(-phi, axis=1, kind="stable")
    return order[:, : min(n, phi.shape[1])].astype(np.int64, copy=False)


def topic_shares(doc_topics: np.ndarray, doc_lengths: np.ndarray) -> np.ndarray:
    """Each topic's share of the corpus tokens, P(k) = Σ_d n_d θ_dk / Σ_d n_d.

    This is the topic weight used by term relevance and saliency (Sievert & Shirley 2014;
    Chuang, Manning & Heer 2012).

    Parameters
    ----------
    doc_topics : numpy.ndarray of shape (D, K)
        Document–topic distributions.
    doc_lengths : numpy.ndarray of shape (D,)
        Tokens per document (non-negative, not all zero).

    Returns
    -------
    numpy.ndarray of shape (K,), float64, summing to 1.
    """
    theta = np.asarray(doc_topics, dtype=np.float64)
    lengths = np.asarray(doc_lengths, dtype=np.float64).ravel()
    if theta.ndim != 2 or lengths.shape[0] != theta.shape[0]:
        raise InputError(
            f"topic_shares: doc_lengths has {lengths.shape[0]} entries for "
            f"{theta.shape[0] if theta.ndim == 2 else '?'} documents"
        )
    if np.any(lengths < 0) or not np.all(np.isfinite(lengths)) or lengths.sum() <= 0:
        raise InputError("topic_shares: doc_lengths must be finite, non-negative and not all zero")
    weights = lengths @ theta
    return weights / weights.sum()


def normalise_rows(matrix: np.ndarray) -> np.ndarray:
    """Scale each row of a non-negative matrix to sum to 1; an all-zero row becomes uniform.

    Parameters
    ----------
    matrix : numpy.ndarray of shape (n, m)

    Returns
    -------
    numpy.ndarray of shape (n, m), float64
    """
    arr = np.array(matrix, dtype=np.float64, copy=True)
    sums = arr.sum(axis=1, keepdims=True)
    zero = sums[:, 0] <= 0
    arr[zero] = 1.0 / arr.shape[1]
    arr[~zero] /= sums[~zero]
    return arr


def check_counts(counts: Any, *, name: str = "counts", n_terms: int | None = None) -> sp.csr_matrix:
    """Validate a document × term count matrix and return it as float64 CSR.

    Parameters
    ----------
    counts : scipy.sparse matrix or array of shape (D, V)
        Term counts (or other non-negative weights) per document.
    name : str
        What to call the matrix in error messages.
    n_terms : int, optional
        The number of terms the matrix must have (a fitted model's vocabulary size).

    Returns
    -------
    scipy.sparse.csr_matrix
        Float64, canonical (sorted indices, no duplicates), explicit zeros removed. The input
        is not modified.

    Raises
    ------
    InputError
        When the matrix is not sparse, not 2-D, empty, or holds a negative or non-finite value
        (the message names the first such row).
    """
    if not sp.issparse(counts):
        raise InputError(
            f"{name}: expected a scipy.sparse document × term matrix, got {type(counts).__name__}"
        )
    if counts.ndim != 2:
        raise InputError(f"{name}: expected a 2-D matrix, got {counts.ndim} dimensions")
    n_docs, n_cols = counts.shape
    if n_docs == 0 or n_cols == 0:
        raise InputError(f"{name}: the matrix is empty (shape {counts.shape})")
    if n_terms is not None and n_cols != n_terms:
        raise InputError(f"{name}: has {n_cols} term columns, the model has {n_terms} terms")
    kind = counts.dtype
    if not np.issubdtype(kind, np.number) or np.issubdtype(kind, np.complexfloating):
        raise InputError(f"{name}: values must be real numbers, got dtype {counts.dtype}")
    csr = sp.csr_matrix(counts, dtype=np.float64, copy=True)
    csr.sum_duplicates()
    data = csr.data
    bad = ~np.isfinite(data) | (data < 0)
    if bad.any():
        pos = int(np.flatnonzero(bad)[0])
        row = int(np.searchsorted(csr.indptr, pos, side="right") - 1)
        col = int(csr.indices[pos])
        raise InputError(
            f"{name}: row {row}, column {col} holds {float(data[pos])!r}; counts must be "
            "finite and non-negative"
        )
    csr.eliminate_zeros()
    csr.sort_indices()
    return csr


@dataclass(frozen=True)
class _Rule:
    check: Callable[[Any], bool]
    allowed: str


def check_params(owner: str, values: Mapping[str, Any], rules: Mapping[str, _Rule]) -> None:
    """Check parameter values against a declared table of rules.

    Every failure uses one template: ``"<owner>: <name>=<value> is not allowed; expected
    <allowed>"``.

    Raises
    ------
    ConfigError
        On the first parameter (in table order) whose value breaks its rule.
    """
    for name, rule in rules.items():
        value = values[name]
        ok = False
        try:
            ok = bool(rule.check(value))
        except (TypeError, ValueError):
            ok = False
        if not ok:
            raise ConfigError(f"{owner}: {name}={value!r} is not allowed; expected {rule.allowed}")


def _is_int(value: Any) -> bool:
    return isinstance(value, int | np.integer) and not isinstance(value, bool)


def _is_real(value: Any) -> bool:
    return isinstance(value, int | float | np.integer | np.floating) and not isinstance(value, bool)


def plain_value(value: Any) -> Any:
    """A numpy scalar as the matching Python scalar (for JSON); anything else unchanged."""
    return value.item() if isinstance(value, np.generic) else value


def int_rule(low: int) -> _Rule:
    """Rule: an integer at least ``low``."""
    return _Rule(lambda v: _is_int(v) and v >= low, f"an integer >= {low}")


def real_rule(low: float, high: float, *, low_open: bool = False) -> _Rule:
    """Rule: a finite real number in [low, high] (or (low, high] when ``low_open``)."""
    bracket = "(" if low_open else "["

    def check(v: Any) -> bool:
        if not _is_real(v) or not math.isfinite(float(v)) or float(v) > high:
            return False
        return float(v) > low if low_open else float(v) >= low

    return _Rule(check, f"a number in {bracket}{low}, {high}]")


def choice_rule(options: Sequence[Any]) -> _Rule:
    """Rule: one of ``options``."""
    return _Rule(
        lambda v: isinstance(v, str) and v in options, "one of " + ", ".join(map(repr, options))
    )


def vocabulary_rule() -> _Rule:
    """Rule: ``None`` or a list of strings."""
    return _Rule(
        lambda v: v is None or (isinstance(v, Sequence) and all(isinstance(t, str) for t in v)),
        "None or a list of strings",
    )


def check_vocabulary(owner: str, vocabulary: Sequence[str] | None, n_terms: int) -> dict[int, str]:
    """Return an id → term mapping, checking the vocabulary size against the matrix."""
    if vocabulary is None:
        return {i: f"term{i}" for i in range(n_terms)}
    if len(vocabulary) != n_terms:
        raise InputError(
            f"{owner}: vocabulary has {len(vocabulary)} terms but the count matrix has "
            f"{n_terms} columns"
        )
    return dict(enumerate(vocabulary))
