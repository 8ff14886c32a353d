"""Choosing evidence sentences when a version is written (the rule: see
:mod:`talkthemes.versions.evidence`).

References
----------
Carbonell, J., Goldstein, J. (1998). The use of MMR, diversity-based reranking for
reordering documents and producing summaries. Proc. SIGIR '98, pp. 335–336.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp

from talkthemes.errors import InputError
from talkthemes.metrics.relevance import relevance
from talkthemes.prepare.boilerplate import split_sentences
from talkthemes.prepare.chain import normalised_sentence
from talkthemes.prepare.frozen import PrepApplier, PrepSpec
from talkthemes.prepare.scrub import scrub
from talkthemes.prepare.words import GAP
from talkthemes.progress import Progress, report
from talkthemes.versions.evidence import (
    CANDIDATE_CALLS,
    MAX_SENTENCES,
    MAX_WORDS,
    MIN_RELATIVE_SCORE,
    MIN_WORDS,
    MMR_LAMBDA,
    REMOVED,
    ROLE_TIERS,
    TOP_TERMS,
    EvidenceSentence,
)

__all__ = ["build_evidence", "mmr_select", "spoken_sentences"]

# A sentence ends at . ! ? … or a line break, except a point between digits ("19.44"),
# which the chain also splits at but which would leave half a sentence on screen.
_SENTENCE = re.compile(r"(?:[^.!?…\n]|(?<=\d)\.(?=\d))+[.!?…]*")
_WORD = re.compile(r"\w+")
_SCRUB_MARK = f" {GAP} "


# -- sentences --------------------------------------------------------------------------
def spoken_sentences(text: str, *, max_words: int = MAX_WORDS) -> list[str]:
    """A turn's sentences, end marks kept, cut where the chain cuts them.

    Sentences end at ``. ! ? …`` and line breaks (as
    :func:`talkthemes.prepare.boilerplate.split_sentences`); a sentence of more than
    ``max_words`` words is returned as consecutive pieces of at most that many words,
    each starting or ending with "…" where it was cut.
    """
    out: list[str] = []
    for m in _SENTENCE.finditer(text):
        piece = m.group().strip()
        if not piece:
            continue
        words = list(_WORD.finditer(piece))
        if len(words) <= max_words:
            out.append(piece)
            continue
        for i in range(0, len(words), max_words):
            start = 0 if i == 0 else words[i].start()
            end = len(piece) if i + max_words >= len(words) else words[i + max_words - 1].end()
            part = piece[start:end].strip()
            out.append(("… " if i else "") + part + (" …" if end < len(piece) else ""))
    return out


def _shown(text: str) -> str:
    """A scrubbed sentence as shown: gaps as "[…]", white space collapsed."""
    return " ".join(text.replace(GAP, REMOVED).split())


@dataclass(frozen=True)
class _Candidate:
    call: int  # index into the candidate calls
    role: str
    scored: str  # scrubbed, gap marks kept (phrases never join across them)
    shown: str


def _candidates(
    calls: Sequence[tuple[str, Sequence[tuple[str, str]]]],
    boilerplate: set[str],
    lang: str,
) -> list[_Candidate]:
    out: list[_Candidate] = []
    for c, (_, turns) in enumerate(calls):
        for role, raw in turns:
            # scrubbed as the chain scrubs, even when [prepare] scrub is off: the sentences
            # are shown on screens, in the report and in exports
            text = scrub(unicodedata.normalize("NFC", raw), mark=_SCRUB_MARK)[0]
            for whole in _SENTENCE.finditer(text):
                said = split_sentences(whole.group())  # the pieces the chain compared
                if any(normalised_sentence(p, lang) in boilerplate for p in said):
                    continue
                for piece in spoken_sentences(whole.group()):
                    if len(_WORD.findall(piece.replace(GAP, " "))) < MIN_WORDS:
                        continue
                    out.append(_Candidate(c, str(role), piece, _shown(piece)))
    return out


# -- choosing ---------------------------------------------------------------------------
def mmr_select(
    scores: np.ndarray,
    vectors: sp.csr_matrix,
    groups: np.ndarray,
    tiers: np.ndarray,
    k: int,
    lam: float = MMR_LAMBDA,
) -> list[int]:
    """Pick up to ``k`` items by maximal marginal relevance (Carbonell & Goldstein 1998).

    Items are taken tier by tier (all of tier 0 first); within the tiers open so far, the
    next item maximises ``lam · score / max(score) − (1 − lam) · max cos(item, chosen)``.
    At most one item per group. Ties go to the earlier item.

    Parameters
    ----------
    scores : ndarray of float, shape (n,)
        Non-negative relevance of each item.
    vectors : sparse matrix, shape (n, V)
        Item feature vectors (the cosine is taken between them).
    groups : ndarray of int, shape (n,)
        Items of one group exclude each other (one sentence per call).
    tiers : ndarray of int, shape (n,)
        Lower tiers are chosen first.
    k : int
    lam : float
        In [0, 1]: 1 ranks by score alone.

    Returns
    -------
    list of int
        Indices of the chosen items, in the order chosen.

    References
    ----------
    Carbonell, J., Goldstein, J. (1998). The use of MMR, diversity-based reranking for
    reordering documents and producing summaries. Proc. SIGIR '98, pp. 335–336.
    """
    scores = np.asarray(scores, dtype=np.float64)
    n = scores.size
    groups, tiers = np.asarray(groups), np.asarray(tiers)
    if vectors.shape[0] != n or groups.shape != (n,) or tiers.shape != (n,):
        raise InputError(
            f"mmr_select: {n} scores, {vectors.shape[0]} vectors, {groups.size} groups and "
            f"{tiers.size} tiers"
        )
    if not 0.0 <= lam <= 1.0:
        raise InputError(f"mmr_select: lambda must lie in [0, 1], got {lam}")
    if n == 0 or k <= 0:
        return []
    x = sp.csr_matrix(vectors, dtype=np.float64)
    norms = np.sqrt(np.asarray(x.multiply(x).sum(axis=1)).ravel())
    norms[norms == 0] = 1.0
    x = sp.diags(1.0 / norms) @ x
    top = scores.max()
    rel = scores / top if top > 0 else np.zeros(n)
    nearest = np.zeros(n)  # max cosine to anything chosen so far
    open_ = np.ones(n, dtype=bool)
    chosen: list[int] = []
    for tier in np.unique(tiers).tolist():
        in_tier = tiers == tier
        while len(chosen) < k:
            pool = np.flatnonzero(open_ & in_tier)
            if pool.size == 0:
                break
            gain = lam * rel[pool] - (1.0 - lam) * nearest[pool]
            best = int(pool[int(np.argmax(gain))])
            chosen.append(best)
            open_ &= groups != groups[best]
            sim = np.asarray((x @ x[best].T).todense()).ravel()
            np.maximum(nearest, sim, out=nearest)
        if len(chosen) >= k:
            break
    return chosen


def build_evidence(
    turns_of: Any,
    spec: PrepSpec,
    topic_terms: np.ndarray,
    doc_topics: np.ndarray,
    doc_ids: Sequence[str],
    marginal: np.ndarray,
    *,
    lam: float = 0.6,
    progress: Progress | None = None,
) -> list[list[EvidenceSentence]]:
    """Every theme's evidence sentences (see the module notes).

    Parameters
    ----------
    turns_of : callable
        ``turns_of(ids) -> [(id, [(role, text), ...]), ...]`` (e.g. the store's
        ``turns_for``); calls it does not return have no sentences.
    spec : PrepSpec
        The version's prep (settings, boilerplate sentences, phrases, vocabulary).
    topic_terms : ndarray (K, V)
    doc_topics : ndarray (D, K)
    doc_ids : sequence of str
        The D call ids, in the rows of ``doc_topics``.
    marginal : ndarray (V,)
        Corpus term distribution p(w), for relevance.
    lam : float
        Relevance weight λ ranking the theme's top terms.
    progress : Progress, optional

    Returns
    -------
    list of list of EvidenceSentence
        Per theme row, up to :data:`MAX_SENTENCES` sentences in the order chosen.
    """
    phi = np.asarray(topic_terms, dtype=np.float64)
    theta = np.asarray(doc_topics, dtype=np.float64)
    k = phi.shape[0]
    if theta.shape != (len(doc_ids), k) or phi.shape[1] != len(spec.vocabulary):
        raise InputError(
            f"evidence: doc_topics {theta.shape}, {len(doc_ids)} ids, topic_terms {phi.shape} "
            f"and {len(spec.vocabulary)} terms do not fit"
        )
    out: list[list[EvidenceSentence]] = [[] for _ in range(k)]
    if theta.shape[0] == 0:
        return out
    lead = np.argmax(theta, axis=1)
    wanted: list[list[int]] = []
    for j in range(k):
        rows = np.flatnonzero(lead == j)
        order = rows[np.lexsort((rows, -theta[rows, j]))]
        wanted.append(order[:CANDIDATE_CALLS].tolist())
    report(progress, 0, k + 1, "reading the calls")
    calls = turns_of([doc_ids[d] for rows in wanted for d in rows])
    call_index = {tid: i for i, (tid, _) in enumerate(calls)}
    cands = _candidates(calls, set(spec.boilerplate), spec.settings.lang)
    report(progress, 1, k + 1, f"preparing {len(cands):,} sentences")
    applier = PrepApplier(spec)
    applied = applier.apply_all(
        _batches([(str(i), [(c.role, c.scored)]) for i, c in enumerate(cands)], 2000)
    )
    terms = (applied.counts > 0).astype(np.float64).tocsr()
    cand_call = np.asarray([c.call for c in cands], dtype=np.int64)
    tiers = np.asarray([ROLE_TIERS.get(c.role, 1) for c in cands], dtype=np.int64)
    rel = relevance(phi, marginal, lam)
    vocab = spec.vocabulary
    for j in range(k):
        report(progress, 1 + j, k + 1, f"evidence of theme {j + 1} of {k}")
        idx = [call_index[doc_ids[d]] for d in wanted[j] if doc_ids[d] in call_index]
        if not idx:
            continue
        share = {
            call_index[doc_ids[d]]: float(theta[d, j])
            for d in wanted[j]
            if doc_ids[d] in call_index
        }
        mine = np.flatnonzero(np.isin(cand_call, idx))
        top = np.lexsort((np.arange(phi.shape[1]), -phi[j], -rel[j]))[:TOP_TERMS]
        top = top[phi[j, top] > 0]
        holds = np.asarray(terms[mine][:, top].sum(axis=1)).ravel() > 0
        mine = _first_of_each_text(mine[holds], cands)
        if mine.size == 0:
            continue
        scores = np.asarray(terms[mine] @ phi[j]).ravel()
        good = scores >= MIN_RELATIVE_SCORE * scores.max()
        mine, scores = mine[good], scores[good]
        sub = terms[mine]
        picked = mmr_select(scores, sub, cand_call[mine], tiers[mine], MAX_SENTENCES)
        top_set = set(top.tolist())
        for p in picked:
            s = int(mine[p])
            held = [int(t) for t in sub[p].indices if int(t) in top_set]
            held.sort(key=lambda t: (-phi[j, t], t))
            c = cands[s]
            out[j].append(
                EvidenceSentence(
                    call_id=calls[c.call][0],
                    role=c.role,
                    text=c.shown,
                    terms=tuple(vocab[t] for t in held),
                    score=float(scores[p]),
                    share=share[c.call],
                )
            )
    report(progress, k + 1, k + 1, "evidence chosen")
    return out


def _first_of_each_text(rows: np.ndarray, cands: Sequence[_Candidate]) -> np.ndarray:
    """``rows`` without repeats of a sentence already listed (same words, any case)."""
    seen: set[str] = set()
    keep = []
    for r in rows.tolist():
        key = " ".join(_WORD.findall(cands[r].shown.lower()))
        if key not in seen:
            seen.add(key)
            keep.append(r)
    return np.asarray(keep, dtype=np.int64)


def _batches(items: list[Any], size: int) -> Iterable[list[Any]]:
    for i in range(0, len(items), size):
        yield items[i : i + size]
