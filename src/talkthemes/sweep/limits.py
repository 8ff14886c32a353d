"""How many themes a prep supports, and how much memory one model fit needs.

Both are checked before any model is fitted (docs/methods.md, "Limits on K and memory"):

**Largest K.** A cell may not ask for more themes than

* the terms of the vocabulary, V, nor the calls one cell fits on: the call × term count
  matrix has rank at most min(calls, V), so more topics than that cannot all differ (NMF's
  ``nndsvda`` start refuses them outright);
* the training calls divided by ``[sweep] min_calls_per_theme`` (5): a theme should be able
  to lead a few calls on average, or it cannot be labelled from its calls and its coherence
  and stability rest on almost nothing. This one is our rule, not a published one.

**Memory.** The estimate of one fit is the sum of

* the model's arrays, measured on this code with fresh processes (``resource`` peak RSS
  above the loaded data; LDA with gensim 4.4, NMF with scikit-learn 1.x, float32):
  LDA keeps about six K × V float64 arrays at once (its sufficient statistics, λ, E[log β]
  and exp E[log β], the update's statistics): 56 bytes per K × V entry here (46 measured);
  its held-out perplexity and, when publishing, every call's shares add about three
  D × K float64 arrays: 24 bytes per D × K entry (21 measured); NMF keeps W, H, their
  gradients and the SVD start: 48 bytes per (D + V) × K entry (35–44 measured);
* the prep a worker holds: the count matrix three times (loaded, sliced, weighted) at
  12 bytes per non-zero, and the token stream at 4 bytes per token;
* the worker process itself with its libraries: 400 MiB (350–490 MiB measured with the data
  of these runs loaded).

The sum is compared with ``[sweep] worker_memory_gb`` (8 GiB: two workers on a 24 GiB
machine leave room for the client, which scores the grid, and the system).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from talkthemes.config import SweepSettings
from talkthemes.errors import ConfigError
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.sweep.grid import CellSpec
from talkthemes.sweep.split import split_rows, subsample_size

__all__ = [
    "PROCESS_BYTES",
    "PrepSize",
    "check_k",
    "check_memory",
    "estimate_fit_bytes",
    "largest_k",
]

GIB = 2**30
#: A worker process with Python, numpy, scipy, gensim, scikit-learn, numba and Dask loaded.
PROCESS_BYTES = 400 * 2**20
_LDA_PER_KV = 56
#: With several starts (``[sweep] lda_starts``) the best start's topics are kept while the
#: others run: about three more K × V float64 arrays (measured with tracemalloc: 10 → 13).
_LDA_STARTS_PER_KV = 48
_SHARES_PER_DK = 24
_NMF_PER_NK = 48
_COUNTS_PER_NONZERO = 3 * 12
_TOKEN_BYTES = 4


@dataclass(frozen=True)
class PrepSize:
    """The sizes of a prep that bound K and a fit's memory.

    Attributes
    ----------
    calls : int
        Prepared (usable) calls.
    train : int
        Calls in the training split (the rest are held out for perplexity).
    fit : int
        Calls one sweep cell fits on (its seed's subsample of the training calls).
    terms : int
        Vocabulary size V.
    nonzero : int
        Non-zero entries of the call × term count matrix.
    tokens : int
        Tokens in the prep's token stream.
    """

    calls: int
    train: int
    fit: int
    terms: int
    nonzero: int
    tokens: int

    @classmethod
    def of(cls, corpus: PreparedCorpus, settings: SweepSettings) -> PrepSize:
        """The sizes of ``corpus`` as a sweep with ``settings`` splits it."""
        train, _ = split_rows(corpus.doc_ids, settings.heldout_share)
        return cls(
            calls=corpus.n_docs,
            train=len(train),
            fit=subsample_size(len(train), settings.subsample),
            terms=corpus.n_terms,
            nonzero=int(corpus.counts.nnz),
            tokens=int(corpus.tokens.size),
        )

    @property
    def heldout(self) -> int:
        """Calls held out for perplexity."""
        return self.calls - self.train


def largest_k(
    size: PrepSize, min_calls_per_theme: int, *, fit_calls: int | None = None
) -> tuple[int, str]:
    """The largest K the prep supports, and the limit that sets it, in words.

    Parameters
    ----------
    size : PrepSize
    min_calls_per_theme : int
        ``[sweep] min_calls_per_theme``.
    fit_calls : int, optional
        Calls the model fits on (default: one sweep cell's, ``size.fit``); the training calls
        per theme are counted on the same calls when it is given.
    """
    fit = size.fit if fit_calls is None else fit_calls
    train = size.train if fit_calls is None else fit_calls
    limits = [
        (
            train // max(1, min_calls_per_theme),
            f"{train:,} training calls / [sweep] min_calls_per_theme = {min_calls_per_theme}",
        ),
        (
            size.terms,
            f"{size.terms:,} terms in the vocabulary (a theme is a distribution over terms: "
            "more themes than terms cannot all differ)",
        ),
        (
            fit,
            f"{fit:,} calls one fit trains on (more themes than calls cannot all differ)",
        ),
    ]
    return min(limits, key=lambda item: item[0])


def check_k(
    ks: Sequence[int],
    size: PrepSize,
    settings: SweepSettings,
    *,
    option: str = "--k",
    fit_calls: int | None = None,
) -> None:
    """Refuse topic counts above :func:`largest_k`.

    Raises
    ------
    ConfigError
        Naming the largest K asked for, the largest allowed, and the limit that sets it.
    """
    most, reason = largest_k(size, settings.min_calls_per_theme, fit_calls=fit_calls)
    too_many = [k for k in ks if k > most]
    if too_many:
        raise ConfigError(
            f"{option}: K = {max(too_many):,} is more than the current prep supports: at most "
            f"{most:,} themes ({reason}). Lower {option}, or prepare more calls."
        )


def estimate_fit_bytes(
    family: str,
    k: int,
    size: PrepSize,
    *,
    fit_calls: int | None = None,
    shares_calls: int = 0,
    lda_starts: int = 1,
) -> int:
    """Estimated peak memory of one fit of ``family`` at ``k`` (see the module notes).

    Parameters
    ----------
    family : {'lda', 'nmf'}
    k : int
    size : PrepSize
    fit_calls : int, optional
        Calls the model fits on (default: one sweep cell's).
    shares_calls : int
        Calls whose shares are inferred after the fit (held-out calls for a sweep cell's
        perplexity, every call when publishing).
    lda_starts : int
        LDA's starts (``[sweep] lda_starts``); more than one keeps a second set of topics.

    Returns
    -------
    int
        Bytes.
    """
    fit = size.fit if fit_calls is None else fit_calls
    if family == "lda":
        per_kv = _LDA_PER_KV + (_LDA_STARTS_PER_KV if lda_starts > 1 else 0)
        model = per_kv * k * size.terms + _SHARES_PER_DK * shares_calls * k
    else:
        model = _NMF_PER_NK * (fit + size.terms) * k
    prep = _COUNTS_PER_NONZERO * size.nonzero + _TOKEN_BYTES * size.tokens
    return int(model + prep + PROCESS_BYTES)


def check_memory(
    cells: Sequence[CellSpec],
    size: PrepSize,
    settings: SweepSettings,
    *,
    fit_calls: int | None = None,
    shares_calls: int | None = None,
) -> int:
    """Refuse when the largest cell's estimated memory exceeds ``[sweep] worker_memory_gb``.

    Returns
    -------
    int
        The largest estimate, in bytes.

    Raises
    ------
    ConfigError
        With the cell, its estimate and the limit.
    """
    shares = size.heldout if shares_calls is None else shares_calls
    need = {
        c.cell: estimate_fit_bytes(
            c.family,
            c.k,
            size,
            fit_calls=fit_calls,
            shares_calls=shares * (c.family == "lda"),
            lda_starts=settings.lda_starts,
        )
        for c in cells
    }
    if not need:
        return 0
    cell, most = max(need.items(), key=lambda item: item[1])
    limit = settings.worker_memory_gb * GIB
    if most > limit:
        raise ConfigError(
            f"cell {cell} would need about {most / GIB:.1f} GiB of memory (estimated from "
            f"{size.terms:,} terms, {fit_calls or size.fit:,} calls and K), more than "
            f"[sweep] worker_memory_gb = {settings.worker_memory_gb:g} GiB per worker. Lower K, "
            "or raise worker_memory_gb if the workers have the memory."
        )
    return most
