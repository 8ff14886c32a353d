"""Loading a published version read-only: its arrays, themes, vocabulary and summaries.

A version is the folder ``versions/<n>/`` (see :mod:`talkthemes.versions`) plus its rows in
the store: the themes with their ids, labels, notes and hidden flags.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.errors import InputError, NotReadyError
from talkthemes.metrics.relevance import relevance
from talkthemes.store.records import ThemeRecord
from talkthemes.versions.naming import theme_name
from talkthemes.workspace import Workspace

__all__ = ["Version", "load_version"]


def _load_json(path: Path) -> Any:
    return json.loads(path.read_text(encoding="utf-8"))


@dataclass
class Version:
    """A published version, loaded read-only.

    Attributes
    ----------
    n : int
    folder : Path
    info : dict
        ``version.json``.
    themes : list of ThemeRecord
        One per row of ``topic_terms``, with its label, note and hidden flag.
    vocabulary : list of str
    doc_ids : list of str
    topic_terms : ndarray (K, V)
    doc_topics : ndarray (D, K)
    """

    n: int
    folder: Path
    info: dict[str, Any]
    themes: list[ThemeRecord]
    vocabulary: list[str]
    doc_ids: list[str]
    topic_terms: np.ndarray
    doc_topics: np.ndarray
    _cache: dict[str, Any] = field(default_factory=dict, repr=False)

    @property
    def k(self) -> int:
        return int(self.topic_terms.shape[0])

    @property
    def theme_ids(self) -> list[int]:
        return [t.theme_id for t in self.themes]

    def position(self, theme_id: int) -> int:
        """Row of a theme id in this version's arrays."""
        try:
            return self.theme_ids.index(int(theme_id))
        except ValueError:
            raise InputError(
                f"theme {theme_id} is not in version {self.n} (themes: "
                f"{', '.join(map(str, self.theme_ids))})"
            ) from None

    def lead(self) -> np.ndarray:
        """Row index of each transcript's lead theme (its largest share)."""
        if "lead" not in self._cache:
            self._cache["lead"] = np.argmax(self.doc_topics, axis=1)
        return self._cache["lead"]

    def lead_share(self) -> np.ndarray:
        """Each transcript's largest share."""
        return self.doc_topics[np.arange(self.doc_topics.shape[0]), self.lead()]

    def coverage(self) -> np.ndarray:
        """Share of transcripts each theme leads (sums to 1 over themes)."""
        counts = np.bincount(self.lead(), minlength=self.k)
        return counts / max(1, counts.sum())

    def mean_share(self) -> np.ndarray:
        """Mean share of each theme over transcripts."""
        return self.doc_topics.mean(axis=0)

    def topic_weights(self) -> np.ndarray:
        """P(k): each theme's share of all corpus tokens (from ``version.json``)."""
        w = np.asarray(self.info.get("topic_weights") or self.mean_share(), dtype=np.float64)
        return w / w.sum()

    def term_marginal(self) -> np.ndarray:
        """p(w) = Σ_k P(k) φ_kw, the corpus-wide term distribution of the model."""
        if "marginal" not in self._cache:
            self._cache["marginal"] = self.topic_weights() @ self.topic_terms
        return self._cache["marginal"]

    def top_terms(self, position: int, n: int = 10, lam: float = 1.0) -> list[str]:
        """A theme's top terms ranked by relevance with weight ``lam`` (1 = probability)."""
        frame = self.term_table(position, n=n, lam=lam)
        return frame["term"].tolist()

    def term_table(self, position: int, *, n: int = 20, lam: float = 0.6) -> pd.DataFrame:
        """Top ``n`` terms of a theme by relevance (Sievert & Shirley 2014).

        relevance(w | λ) = λ ln φ_kw + (1 − λ) ln(φ_kw / p(w)).

        Returns
        -------
        DataFrame
            ``term, relevance, weight, corpus_weight, lift, rank``; only terms the theme gives
            some weight (fewer than ``n`` rows when a sparse NMF theme has fewer).
        """
        phi = self.topic_terms[position].astype(np.float64)
        marginal = self.term_marginal()
        rel = relevance(phi[None, :], marginal, lam)[0]
        order = np.lexsort((np.arange(phi.size), -rel))
        # An NMF theme can give most words exactly no weight: those are not its terms, and a
        # chart on a logarithmic axis has no place for them.
        order = order[phi[order] > 0][:n]
        return pd.DataFrame(
            {
                "term": [self.vocabulary[i] for i in order],
                "relevance": rel[order],
                "weight": phi[order],
                "corpus_weight": marginal[order],
                "lift": phi[order] / marginal[order],
                "rank": np.arange(1, len(order) + 1),
            }
        )

    def names(self) -> list[str]:
        """Display name of each theme (label, or three top terms)."""
        return [theme_name(t.label, self.top_terms(i, 3)) for i, t in enumerate(self.themes)]

    def summary(self, *, lam: float = 0.6, n_terms: int = 10) -> list[dict[str, Any]]:
        """Per theme: id, label, note, hidden, status, coverage, mean share, terms, coherence."""
        cov, mean = self.coverage(), self.mean_share()
        coh = self.info.get("coherence", {})
        out = []
        for i, t in enumerate(self.themes):
            out.append(
                {
                    "theme_id": t.theme_id,
                    "name": theme_name(t.label, self.top_terms(i, 3)),
                    "label": t.label,
                    "note": t.note,
                    "hidden": t.hidden,
                    "status": t.status,
                    "coverage": float(cov[i]),
                    "mean_share": float(mean[i]),
                    "top_terms": self.top_terms(i, n_terms, lam),
                    "coherence": {m: float(v[i]) for m, v in coh.items()},
                }
            )
        return out


def load_version(ws: Workspace, n: int | None = None) -> Version:
    """Load version ``n`` (default: the current one).

    Raises
    ------
    NotReadyError
        When nothing is published yet, naming the command to run.
    """
    with ws.store() as store:
        if n is None:
            cur = store.current_version()
            if cur is None:
                raise NotReadyError("no version published yet: run 'talkthemes publish' first")
            n = cur.n
        themes = store.themes(n)
    folder = ws.versions_dir / str(n)
    if not themes or not folder.exists():
        raise NotReadyError(f"version {n} is not on disk (kept versions: see 'talkthemes status')")
    return Version(
        n=n,
        folder=folder,
        info=_load_json(folder / "version.json"),
        themes=themes,
        vocabulary=_load_json(folder / "vocabulary.json"),
        doc_ids=_load_json(folder / "doc_ids.json"),
        topic_terms=np.load(folder / "topic_terms.npy", allow_pickle=False),
        doc_topics=np.load(folder / "doc_topics.npy", allow_pickle=False, mmap_mode="r"),
    )
