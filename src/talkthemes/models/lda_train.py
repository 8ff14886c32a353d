"""Training LDA to convergence: passes until the per-word bound stops changing, best of starts.

gensim's ``LdaModel.update`` runs a fixed number of passes. :class:`OnlineRun` runs the same
online variational Bayes one pass at a time — the same chunks, the same learning rate
ρ_t = (τ₀ + pass + updates/S)^(−κ), the same E-step, α update and M-step calls, so with the
same passes it gives gensim's model bit for bit — and after each pass evaluates the
**per-word bound** of the training corpus,

    b_p = L(γ, λ_p) / N,

gensim's variational lower bound (``LdaModel.bound``) with the topics λ_p at the end of pass p
and each document's γ from its E-step in that pass, divided by the corpus tokens N. No extra
E-step is spent on it: the cost is one pass of the compiled bound loop over the counts.

**Convergence rule** (Hoffman, Blei & Bach 2010, Algorithm 1, whose batch variational Bayes
stops when the relative improvement of the bound falls below a threshold): training stops
after pass p ≥ 2 once |b_p − b_{p−1}| / |b_{p−1}| < ``bound_tol``, or at the cap of
``passes``. The absolute value keeps an online run, whose bound can dip between passes, from
stopping on a dip.

**Starts.** Online VB reaches different local optima from different random starting topics,
and on planted corpora the run with the higher bound was the one closer to the truth.
:func:`train_to_convergence` therefore runs ``starts`` runs (start 0 with the estimator's own
seed, start r ≥ 1 with a seed derived from (seed, r)) for ``start_passes`` passes each, keeps
the one with the highest per-word bound and continues only that one to convergence.

The convergence trace (:class:`ConvergenceTrace`, JSON via :meth:`ConvergenceTrace.as_dict`) is
kept on the fitted result. See docs/methods_models.md, "Training to convergence".

References
----------
Hoffman, M. D., Blei, D. M., Bach, F. (2010). Online Learning for Latent Dirichlet
Allocation. Advances in Neural Information Processing Systems 23.
"""

from __future__ import annotations

import logging
import math
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.sparse as sp
from gensim.models.ldamodel import LdaState

from talkthemes.models.csr_lda import CsrLdaModel
from talkthemes.models.lda_infer import variational_bound

__all__ = ["ConvergenceTrace", "OnlineRun", "relative_change", "start_seed", "train_to_convergence"]

logger = logging.getLogger(__name__)


def relative_change(previous: float, current: float) -> float:
    """|current − previous| / |previous| (infinite when ``previous`` is 0 or not finite)."""
    if not (math.isfinite(previous) and math.isfinite(current)) or previous == 0:
        return math.inf
    return abs(current - previous) / abs(previous)


def start_seed(seed: int, start: int) -> int:
    """The random seed of start ``start``: the seed itself for start 0, else one derived from
    (seed, start) with numpy's ``SeedSequence`` (independent streams, same on every run)."""
    if start == 0:
        return int(seed)
    return int(np.random.SeedSequence([int(seed), int(start)]).generate_state(1)[0])


class OnlineRun:
    """One online VB run of a :class:`CsrLdaModel` over a fixed corpus, one pass at a time.

    The loop is gensim 4.4's ``LdaModel.update`` for one process with ``update_every=1``:
    the corpus is counted once into ``state.numdocs``; each chunk gets an E-step into a fresh
    ``LdaState``, then (when α is learned) ``update_alpha`` and ``do_mstep`` with
    ρ = (offset + pass + num_updates / chunksize)^(−decay); passes after the first do not
    advance ``num_updates`` (gensim's ``extra_pass``).

    Parameters
    ----------
    model : CsrLdaModel
        A freshly built model (or one to keep training); its ``chunksize``, ``decay`` and
        ``offset`` are used.
    counts : scipy.sparse.csr_matrix of shape (D, V)
        The training counts, float64, canonical.
    """

    def __init__(self, model: CsrLdaModel, counts: sp.csr_matrix) -> None:
        self.model = model
        self.counts = counts
        self.n_docs = int(counts.shape[0])
        self.n_words = float(counts.sum())
        self.chunksize = int(min(self.n_docs, model.chunksize))
        self.passes_done = 0
        self.bounds: list[float] = []
        self.estep_converged: list[float | None] = []
        self._gamma = np.empty((self.n_docs, model.num_topics), dtype=np.float64)
        model.state.numdocs += self.n_docs

    def _rho(self, pass_: int) -> float:
        m = self.model
        return float(pow(m.offset + pass_ + (m.num_updates / self.chunksize), -m.decay))

    def run_pass(self) -> float:
        """Run one pass and return its per-word bound (also appended to :attr:`bounds`)."""
        m = self.model
        pass_ = self.passes_done
        converged: int | None = 0
        for lo in range(0, self.n_docs, self.chunksize):
            chunk = self.counts[lo : lo + self.chunksize]
            other = LdaState(m.eta, m.state.sstats.shape, m.dtype)
            gamma = m.do_estep(chunk, other)
            self._gamma[lo : lo + gamma.shape[0]] = gamma
            converged = (
                None if converged is None or m.estep_converged is None
                else converged + m.estep_converged
            )  # fmt: skip
            if m.optimize_alpha:
                m.update_alpha(gamma, self._rho(pass_))
            m.do_mstep(self._rho(pass_), other, pass_ > 0)
        self.passes_done += 1
        bound = self.per_word_bound()
        self.bounds.append(bound)
        self.estep_converged.append(None if converged is None else converged / self.n_docs)
        logger.debug("LDA pass %d: per-word bound %.6f", self.passes_done, bound)
        return bound

    def per_word_bound(self) -> float:
        """gensim's bound with the current topics and each document's γ from its last E-step
        in this run, divided by the corpus tokens (the same as
        ``model.bound(corpus, gamma) / N``)."""
        if self.passes_done == 0:
            raise RuntimeError("per_word_bound: no pass has run yet")
        m = self.model
        score = variational_bound(
            self.counts,
            self._gamma,
            lambda_=np.asarray(m.state.get_lambda(), dtype=np.float64),
            alpha=np.asarray(m.alpha, dtype=np.float64),
            eta=np.asarray(m.eta, dtype=np.float64),
        )
        return float(score / self.n_words) if self.n_words > 0 else 0.0

    @property
    def gamma(self) -> np.ndarray:
        """Each training document's γ from its E-step in the last pass (read-only view)."""
        view = self._gamma.view()
        view.flags.writeable = False
        return view

    def converged(self, bound_tol: float) -> bool:
        """Whether the last two passes meet the rule |b_p − b_{p−1}| / |b_{p−1}| < bound_tol."""
        if len(self.bounds) < 2:
            return False
        return relative_change(self.bounds[-2], self.bounds[-1]) < bound_tol

    def run(self, passes: int, bound_tol: float) -> bool:
        """Run passes until the rule holds or ``passes`` passes are done in all; return
        whether the rule stopped it."""
        while self.passes_done < passes:
            self.run_pass()
            if self.converged(bound_tol):
                return True
        return False


@dataclass(frozen=True)
class ConvergenceTrace:
    """How an LDA fit was trained (JSON: :meth:`as_dict`).

    Attributes
    ----------
    per_word_bound : list of float
        The kept run's per-word bound (nats per token, training corpus) after each pass.
    estep_converged : list of float or None
        Share of documents whose E-step met ``gamma_threshold`` within ``iterations``, per pass
        (None when gensim's own E-step ran, for models that are not float64).
    passes : int
        Passes of the kept run (the length of ``per_word_bound``).
    converged : bool
        Whether the rule stopped training before the cap.
    bound_tol, max_passes : float, int
        The rule's threshold and the cap on passes.
    start_bounds : list of float
        Per-word bound of each start after ``start_passes`` passes (start order).
    start_passes : int
        Passes each start ran before the best was kept.
    kept_start : int
        Index of the start that was kept and trained on.
    seconds : float
        Wall time of all starts and passes.
    """

    per_word_bound: list[float]
    estep_converged: list[float | None]
    passes: int
    converged: bool
    bound_tol: float
    max_passes: int
    start_bounds: list[float] = field(default_factory=list)
    start_passes: int = 0
    kept_start: int = 0
    seconds: float = 0.0

    def as_dict(self) -> dict[str, Any]:
        """Plain JSON values (non-finite bounds become None)."""
        return {
            "per_word_bound": [_finite(b) for b in self.per_word_bound],
            "estep_converged": [None if s is None else float(s) for s in self.estep_converged],
            "passes": int(self.passes),
            "converged": bool(self.converged),
            "bound_tol": float(self.bound_tol),
            "max_passes": int(self.max_passes),
            "start_bounds": [_finite(b) for b in self.start_bounds],
            "start_passes": int(self.start_passes),
            "kept_start": int(self.kept_start),
            "seconds": float(self.seconds),
        }


def _finite(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


def train_to_convergence(
    build: Callable[[int], CsrLdaModel],
    counts: sp.csr_matrix,
    *,
    seed: int,
    passes: int,
    bound_tol: float,
    starts: int = 1,
    start_passes: int = 3,
) -> tuple[CsrLdaModel, ConvergenceTrace]:
    """Train the best of ``starts`` runs until the per-word bound converges.

    Parameters
    ----------
    build : callable
        ``build(random_seed)`` returns a fresh, untrained :class:`CsrLdaModel`.
    counts : scipy.sparse.csr_matrix of shape (D, V)
        Training counts (float64, canonical).
    seed : int
        The fit's seed; start r uses :func:`start_seed` (seed, r).
    passes : int
        Cap on passes of the kept run (the starts' passes included).
    bound_tol : float
        Relative change of the per-word bound below which training stops; 0 runs every pass.
    starts : int
        Runs started; with 1 the fit is a single run from ``seed``.
    start_passes : int
        Passes every start runs before the one with the highest bound is kept (capped at
        ``passes``; a start that converges earlier stops there).

    Returns
    -------
    model : CsrLdaModel
    trace : ConvergenceTrace
    """
    t0 = time.perf_counter()
    warmup = min(start_passes, passes) if starts > 1 else 0
    best: OnlineRun | None = None
    best_start = 0
    start_bounds: list[float] = []
    for start in range(starts):
        run = OnlineRun(build(start_seed(seed, start)), counts)
        if starts > 1:
            run.run(warmup, bound_tol)
            start_bounds.append(run.bounds[-1])
            if best is None or run.bounds[-1] > best.bounds[-1]:
                best, best_start = run, start
        else:
            best = run
    assert best is not None
    done = best.converged(bound_tol) if best.passes_done else False
    if not done:
        done = best.run(passes, bound_tol)
    trace = ConvergenceTrace(
        per_word_bound=list(best.bounds),
        estep_converged=list(best.estep_converged),
        passes=best.passes_done,
        converged=done,
        bound_tol=float(bound_tol),
        max_passes=int(passes),
        start_bounds=start_bounds,
        start_passes=warmup,
        kept_start=best_start,
        seconds=time.perf_counter() - t0,
    )
    if not done:
        logger.info(
            "LDA stopped at the cap of %d passes before the per-word bound converged "
            "(last relative change %.2g, rule < %.2g)",
            passes,
            relative_change(*best.bounds[-2:]) if len(best.bounds) > 1 else math.inf,
            bound_tol,
        )
    return best.model, trace
