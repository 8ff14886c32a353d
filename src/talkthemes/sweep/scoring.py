"""Scoring a finished grid: coherence counted once for every cell, diversity, stability.

Coherence is counted once for the union of all cells' top words on the training
transcripts' token streams (:mod:`talkthemes.metrics.coherence`); stability is measured
across the seeds of each (family, K) and diversity per cell (docs/methods.md, "The sweep").
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from talkthemes.metrics.coherence import score
from talkthemes.metrics.cooccurrence import build_reference, union_of_topics
from talkthemes.metrics.diversity import topic_diversity
from talkthemes.metrics.stability import agreement, seed_stability
from talkthemes.sweep.recommend import Recommendation, recommend

if TYPE_CHECKING:
    from talkthemes.config import SweepSettings
    from talkthemes.prepare.corpus import PreparedCorpus

__all__ = ["MEASURES", "score_and_recommend", "score_cells", "seed_agreement"]

#: The coherence measures every cell is scored with.
MEASURES = ("c_v", "c_npmi", "c_uci", "u_mass")


def score_cells(
    cells: list[dict[str, Any]],
    tokens: np.ndarray,
    offsets: np.ndarray,
    counts: Any,
    rows: np.ndarray,
    *,
    topn: int = 10,
    stability_topn: int = 20,
    diversity_topn: int = 25,
) -> pd.DataFrame:
    """Coherence (counted once for all cells), diversity and seed stability per cell.

    Parameters
    ----------
    cells : list of dict
        Finished cells with ``cell, family, k, seed, top_terms`` and fit metrics.
    tokens, offsets, counts : arrays
        The prep's token stream and counts.
    rows : ndarray
        The transcripts the models were trained on: the coherence reference corpus.
    topn : int
        Top terms per topic used by coherence.
    stability_topn, diversity_topn : int
        Top terms compared by stability (Greene et al. 2014 use 20) and counted by
        diversity (Dieng et al. 2020 use 25).

    Returns
    -------
    DataFrame
        One row per cell: its fit metrics plus ``c_v, c_npmi, c_uci, u_mass`` (means),
        ``*_per_topic`` lists, ``diversity`` and ``stability`` (the same for all seeds of a K).
    """
    tops = {c["cell"]: np.asarray(c["top_terms"], dtype=np.int64) for c in cells}
    union = union_of_topics(t[:, :topn] for t in tops.values())
    reference = build_reference(tokens, offsets, counts, union, windows=(110, 10), rows=rows)
    rows_out = []
    for c in cells:
        top = tops[c["cell"]]
        row = {k: v for k, v in c.items() if k != "top_terms"}
        for m in MEASURES:
            res = score(reference, top[:, :topn], m)
            row[m] = res.mean
            row[f"{m}_per_topic"] = [float(x) for x in res.per_topic]
        row["diversity"] = float(topic_diversity(top[:, :diversity_topn], diversity_topn))
        rows_out.append(row)
    frame = pd.DataFrame(rows_out)
    stab: dict[tuple[str, int], float] = {}
    for (family, k), g in frame.groupby(["family", "k"]):
        sets = [tops[c][:, :stability_topn] for c in g["cell"]]
        stab[(family, k)] = float(seed_stability(sets, stability_topn)) if len(sets) > 1 else np.nan
    frame["stability"] = [stab[(f, k)] for f, k in zip(frame["family"], frame["k"], strict=True)]
    return frame.sort_values(["family", "k", "seed"]).reset_index(drop=True)


def seed_agreement(cells: pd.DataFrame, topn: int = 20) -> pd.DataFrame:
    """Add ``agreement``: each cell's mean agreement with the other seeds at its (family, K).

    Agreement is the Hungarian-matched average Jaccard of ranked top terms (Greene et
    al. 2014), the same quantity stability averages; the seed with the highest agreement is
    the medoid, the most typical run of that K.
    """
    out = cells.copy()
    values = np.full(len(out), np.nan)
    for _, g in out.groupby(["family", "k"]):
        idx = list(g.index)
        tops = [np.asarray(out.at[i, "top_terms"])[:, :topn] for i in idx]
        for a, i in enumerate(idx):
            others = [agreement(tops[a], tops[b], topn) for b in range(len(idx)) if b != a]
            values[out.index.get_loc(i)] = float(np.mean(others)) if others else np.nan
    out["agreement"] = values
    return out


def score_and_recommend(
    cells: list[dict[str, Any]],
    corpus: PreparedCorpus,
    train: np.ndarray,
    settings: SweepSettings,
) -> tuple[pd.DataFrame, dict[str, Recommendation]]:
    """Score recorded cells on the ``train`` rows of ``corpus`` (:func:`score_cells`) and
    recommend K per family by the ``[sweep]`` rule (docs/methods.md, "The recommendation")."""
    frame = score_cells(
        cells,
        corpus.tokens,
        corpus.offsets,
        corpus.counts,
        train,
        topn=settings.topn,
        stability_topn=settings.stability_topn,
        diversity_topn=settings.diversity_topn,
    )
    recs = recommend(
        frame,
        rank_by=settings.rank_by,
        stability_min=settings.stability_min,
        catch_all_ratio=settings.catch_all_ratio,
        catch_all_share=settings.catch_all_share,
    )
    return frame, recs
