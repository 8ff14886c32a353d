"""Topic coherence: C_V, C_NPMI, C_UCI and U_Mass, counted once per sweep.

The four measures follow the four-stage framework of Röder et al. (2015) —
segmentation, probability estimation, confirmation, aggregation — with exactly the
stages, window sizes and ε that gensim 4.4.0's ``CoherenceModel`` uses, so the numbers
are comparable with that library. One difference is deliberate: the Boolean sliding
window counts a word as present in every window that holds at least one copy of it.
gensim 4.4.0 marks a word absent as soon as one copy leaves the window, even when
another copy is still inside, and so undercounts words that repeat within a window
(see ``docs/methods_metrics.md``).

The counting and the probability-estimation stage live in
:mod:`talkthemes.metrics.cooccurrence` (:func:`~talkthemes.metrics.cooccurrence.build_reference`
counts once, for the union of every topic set to be scored, into a
:class:`~talkthemes.metrics.cooccurrence.CoherenceReference`); this module holds segmentation,
confirmation and aggregation, and scores any number of topic sets from one reference with
:func:`score`.

References
----------
Röder, M., Both, A., Hinneburg, A. (2015). Exploring the Space of Topic Coherence
Measures. WSDM '15.
Mimno, D., Wallach, H., Talley, E., Leenders, M., McCallum, A. (2011). Optimizing
Semantic Coherence in Topic Models. EMNLP 2011.
Newman, D., Lau, J. H., Grieser, K., Baldwin, T. (2010). Automatic Evaluation of Topic
Coherence. NAACL-HLT 2010.
Bouma, G. (2009). Normalized (Pointwise) Mutual Information in Collocation Extraction.
GSCL 2009.
"""

from __future__ import annotations

import logging
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from talkthemes.errors import InputError
from talkthemes.metrics.cooccurrence import (
    DEFAULT_WINDOWS,
    CoherenceReference,
    TopicProbabilities,
    estimate,
)

__all__ = [
    "EPSILON",
    "MEASURES",
    "CoherencePipeline",
    "CoherenceResult",
    "c_npmi",
    "c_uci",
    "c_v",
    "score",
    "u_mass",
]

logger = logging.getLogger(__name__)

EPSILON = 1e-12
"""Smoothing added to joint probabilities (gensim 4.4.0 ``direct_confirmation_measure``)."""


# --------------------------------------------------------------------------------------
# Stages: segmentation, confirmation, aggregation (probability estimation: cooccurrence.py)
# --------------------------------------------------------------------------------------


def one_pre(n: int) -> tuple[np.ndarray, np.ndarray]:
    """One-preceding segmentation: pairs (w_i, w_j) for i > j; w_j is higher ranked.

    Returns index arrays (W′, W*) in gensim's ``s_one_pre`` order.
    """
    prime, star = zip(*[(i, j) for i in range(1, n) for j in range(i)], strict=True)
    return np.array(prime), np.array(star)


def one_one(n: int) -> tuple[np.ndarray, np.ndarray]:
    """One-one segmentation: every ordered pair (w_i, w_j), i ≠ j (gensim ``s_one_one``)."""
    prime, star = zip(*[(i, j) for i in range(n) for j in range(n) if i != j], strict=True)
    return np.array(prime), np.array(star)


def log_conditional(tc: TopicProbabilities, prime: np.ndarray, star: np.ndarray) -> np.ndarray:
    """m_lc = ln((P(W′, W*) + ε) / P(W*)) per pair (Mimno et al. 2011, gensim form)."""
    joint = tc.p_pair[:, prime, star]
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.log((joint + EPSILON) / tc.p_word[:, star])
    out[tc.missing[:, star]] = np.nan
    return out


def log_ratio(tc: TopicProbabilities, prime: np.ndarray, star: np.ndarray) -> np.ndarray:
    """PMI: m_lr = ln((P(W′, W*) + ε) / (P(W′) P(W*))) per pair."""
    joint = tc.p_pair[:, prime, star]
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.log((joint + EPSILON) / (tc.p_word[:, prime] * tc.p_word[:, star]))
    out[tc.missing[:, prime] | tc.missing[:, star]] = np.nan
    return out


def normalized_log_ratio(tc: TopicProbabilities, prime: np.ndarray, star: np.ndarray) -> np.ndarray:
    """NPMI: m_nlr = m_lr / (−ln(P(W′, W*) + ε)) per pair (Bouma 2009, gensim form)."""
    joint = tc.p_pair[:, prime, star]
    with np.errstate(divide="ignore", invalid="ignore"):
        return log_ratio(tc, prime, star) / (-np.log(joint + EPSILON))


def indirect_cosine(tc: TopicProbabilities) -> np.ndarray:
    """C_V confirmation: cosine between each word's NPMI context vector and the topic's.

    With one-set segmentation, v(w_i)_j = NPMI(w_i, w_j) (γ = 1, the self-entry uses
    P(w_i, w_i) = P(w_i)) and v(W) = Σ_i v(w_i). Returns shape (K, N).
    """
    n = tc.p_word.shape[1]
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    npmi = normalized_log_ratio(tc, i.ravel(), j.ravel()).reshape(-1, n, n)
    whole = npmi.sum(axis=1)  # (K, N): v(W)
    with np.errstate(divide="ignore", invalid="ignore"):
        dots = np.einsum("kij,kj->ki", npmi, whole)
        norms = np.sqrt((npmi**2).sum(axis=2)) * np.sqrt((whole**2).sum(axis=1))[:, None]
        return dots / norms


def arithmetic_mean(segment_scores: np.ndarray) -> np.ndarray:
    """Aggregation: mean of a topic's segment scores, one value per topic."""
    return segment_scores.mean(axis=1)


# --------------------------------------------------------------------------------------
# Pipelines and the registry
# --------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class CoherenceResult:
    """Coherence of one topic set under one measure.

    Attributes
    ----------
    measure : str
        Measure name (``"c_v"``, ``"c_npmi"``, ``"c_uci"`` or ``"u_mass"``).
    per_topic : ndarray of float64, shape (K,)
        Score of each topic; NaN when a top word never occurs in the reference.
    mean : float
        Mean over topics (NaN if any topic is NaN, as gensim's ``get_coherence``).
    """

    measure: str
    per_topic: np.ndarray
    mean: float


@dataclass(frozen=True)
class CoherencePipeline:
    """A coherence measure as a composition of named stages (Röder et al. 2015).

    Attributes
    ----------
    name : str
        Measure name.
    window : int or None
        Default window size of the Boolean sliding window; ``None`` = Boolean document.
    segment_scores : Callable[[TopicProbabilities], ndarray]
        Segmentation + confirmation: maps estimated probabilities to scores of shape
        (K, n_segments).
    aggregate : Callable[[ndarray], ndarray]
        Aggregation of segment scores into one score per topic.
    """

    name: str
    window: int | None
    segment_scores: Callable[[TopicProbabilities], np.ndarray]
    aggregate: Callable[[np.ndarray], np.ndarray] = arithmetic_mean

    def run(
        self, reference: CoherenceReference, topics: np.ndarray, window: int | None = None
    ) -> CoherenceResult:
        """Score a topic set against a reference (window defaults to the measure's)."""
        if self.window is None and window is not None:
            raise InputError(f"coherence measure {self.name} counts documents, not windows")
        top = _check_topics(topics, reference.word_ids)
        stats = reference.counts(self.window if window is None else window)
        tc = estimate(stats, top)
        per_topic = self.aggregate(self.segment_scores(tc)).astype(np.float64)
        n_undefined = int(np.isnan(per_topic).sum())
        if n_undefined:
            logger.warning(
                "%s: %d of %d topics have an undefined coherence (NaN), because a top word "
                "never occurs in the reference corpus",
                self.name,
                n_undefined,
                top.shape[0],
            )
        return CoherenceResult(self.name, per_topic, float(np.mean(per_topic)))


def _direct(
    segmentation: Callable[[int], tuple[np.ndarray, np.ndarray]],
    confirmation: Callable[[TopicProbabilities, np.ndarray, np.ndarray], np.ndarray],
) -> Callable[[TopicProbabilities], np.ndarray]:
    def segment_scores(tc: TopicProbabilities) -> np.ndarray:
        prime, star = segmentation(tc.p_word.shape[1])
        return confirmation(tc, prime, star)

    return segment_scores


MEASURES: Mapping[str, CoherencePipeline] = MappingProxyType(
    {
        "c_v": CoherencePipeline("c_v", DEFAULT_WINDOWS["c_v"], indirect_cosine),
        "c_npmi": CoherencePipeline(
            "c_npmi", DEFAULT_WINDOWS["c_npmi"], _direct(one_one, normalized_log_ratio)
        ),
        "c_uci": CoherencePipeline("c_uci", DEFAULT_WINDOWS["c_uci"], _direct(one_one, log_ratio)),
        "u_mass": CoherencePipeline("u_mass", None, _direct(one_pre, log_conditional)),
    }
)
"""The coherence measures by name (gensim 4.4.0 ``COHERENCE_MEASURES`` stages)."""


def _check_topics(topics: np.ndarray, word_ids: np.ndarray) -> np.ndarray:
    top = np.asarray(topics)
    if top.ndim != 2 or (top.size and not np.issubdtype(top.dtype, np.integer)):
        raise InputError("coherence topics: expected a 2-D integer array (topics × top words)")
    if top.shape[0] == 0 or top.shape[1] < 2:
        raise InputError(
            f"coherence topics: need at least one topic of at least 2 words, got {top.shape}"
        )
    top = top.astype(np.int64)
    srt = np.sort(top, axis=1)
    dup = np.flatnonzero((srt[:, 1:] == srt[:, :-1]).any(axis=1))
    if dup.size:
        raise InputError(f"coherence topics: topic {int(dup[0])} lists a term id twice")
    pos = np.clip(np.searchsorted(word_ids, top), 0, max(word_ids.size - 1, 0))
    absent = (word_ids[pos] != top) if word_ids.size else np.ones(top.shape, dtype=bool)
    if absent.any():
        k, i = (int(x[0]) for x in np.nonzero(absent))
        raise InputError(
            f"coherence topics: topic {k} word {i} (term id {int(top[k, i])}) is not in the "
            "reference's word set; build the reference from the union of all topic sets"
        )
    return top


def score(
    reference: CoherenceReference,
    topics: np.ndarray,
    measure: str,
    *,
    window: int | None = None,
) -> CoherenceResult:
    """Score a topic set with a named coherence measure.

    Parameters
    ----------
    reference : CoherenceReference
        Counts built by :func:`build_reference`.
    topics : ndarray of int, shape (K, N)
        Term ids of each topic's top words, most probable first (order matters for U_Mass).
    measure : str
        One of :data:`MEASURES`.
    window : int, optional
        Override the measure's window size (the reference must hold counts for it).

    Returns
    -------
    CoherenceResult
    """
    if measure not in MEASURES:
        raise InputError(
            f"coherence measure {measure!r} is unknown; choose one of {', '.join(MEASURES)}"
        )
    return MEASURES[measure].run(reference, topics, window)


def c_v(
    reference: CoherenceReference, topics: np.ndarray, *, window: int | None = None
) -> CoherenceResult:
    """C_V: one-set segmentation, sliding window 110, indirect cosine over NPMI, mean.

    Parameters and result as :func:`score` (``window`` overrides the default size).

    References
    ----------
    Röder, M., Both, A., Hinneburg, A. (2015). Exploring the Space of Topic Coherence
    Measures. WSDM '15.
    """
    return MEASURES["c_v"].run(reference, topics, window)


def c_npmi(
    reference: CoherenceReference, topics: np.ndarray, *, window: int | None = None
) -> CoherenceResult:
    """C_NPMI: mean NPMI over all word pairs, sliding window 10.

    Parameters and result as :func:`score` (``window`` overrides the default size).

    References
    ----------
    Bouma, G. (2009). Normalized (Pointwise) Mutual Information in Collocation
    Extraction. GSCL 2009. Röder, Both & Hinneburg (2015), WSDM '15.
    """
    return MEASURES["c_npmi"].run(reference, topics, window)


def c_uci(
    reference: CoherenceReference, topics: np.ndarray, *, window: int | None = None
) -> CoherenceResult:
    """C_UCI: mean PMI over all word pairs, sliding window 10.

    Parameters and result as :func:`score` (``window`` overrides the default size).

    References
    ----------
    Newman, D., Lau, J. H., Grieser, K., Baldwin, T. (2010). Automatic Evaluation of
    Topic Coherence. NAACL-HLT 2010.
    """
    return MEASURES["c_uci"].run(reference, topics, window)


def u_mass(reference: CoherenceReference, topics: np.ndarray) -> CoherenceResult:
    """U_Mass: mean over one-preceding pairs of ln((P(w′, w*) + ε) / P(w*)), by documents.

    gensim's form: a mean with ε on the probability, not the original sum with +1 count
    smoothing, so the values are comparable with gensim, not with the paper. Parameters
    and result as :func:`score`; word order matters (most probable first).

    References
    ----------
    Mimno, D., Wallach, H., Talley, E., Leenders, M., McCallum, A. (2011). Optimizing
    Semantic Coherence in Topic Models. EMNLP 2011.
    """
    return MEASURES["u_mass"].run(reference, topics, None)
