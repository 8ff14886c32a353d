"""Loading a published version read-only: its arrays, themes, vocabulary and summaries.

A version is the folder ``versions/<n>/`` (see :mod:`talkthemes.versions`) plus its rows in
the store: the themes with their ids, labels, notes and hidden (*not a theme*) flags.

Themes merged into others (:mod:`talkthemes.versions.curation`) are shown as one: a loaded
version's ``themes``, ``topic_terms``, ``doc_topics`` and per-theme records already hold
the merged themes, unless it is loaded with ``fold=False`` (what a refresh aligns).
Each theme has a *suggested name* (:mod:`talkthemes.versions.naming`), shown until it is
labelled, and its evidence sentences (:mod:`talkthemes.versions.evidence`), both stored
with the version when it was written.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.errors import InputError, NotReadyError
from talkthemes.metrics.relevance import relevance
from talkthemes.store.records import ThemeRecord
from talkthemes.versions.curation import Group, fold_columns, fold_rows, merge_groups
from talkthemes.versions.evidence import MAX_SENTENCES, EvidenceSentence, load_evidence
from talkthemes.versions.naming import display_name, suggest_names
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
        One per row of ``topic_terms``, with its label, note and hidden flag; ``merged``
        holds the ids of the themes merged into it.
    vocabulary : list of str
    doc_ids : list of str
    topic_terms : ndarray (K, V)
    doc_topics : ndarray (D, K)
    groups : list of (int, list of int) or None
        When themes are merged: per row, the id it keeps and the rows of the version's
        files folded into it (None: the files' rows as they are).
    tables : ViewTables or None
        The version's viewer tables once the viewer has opened them
        (:mod:`talkthemes.versions.tables`; kept by :meth:`with_labels`).
    """

    n: int
    folder: Path
    info: dict[str, Any]
    themes: list[ThemeRecord]
    vocabulary: list[str]
    doc_ids: list[str]
    topic_terms: np.ndarray
    doc_topics: np.ndarray
    groups: list[Group] | None = None
    tables: Any = field(default=None, repr=False)
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

    def suggested_names(self) -> list[str]:
        """Each theme's suggested name (stored with the version; worked out for versions
        written before names were stored)."""
        names = self.info.get("suggested_names")
        if not names or len(names) != self.k:
            if "suggested" not in self._cache:
                self._cache["suggested"] = suggest_names(
                    self.topic_terms,
                    self.term_marginal(),
                    self.vocabulary,
                    order=np.argsort(-self.topic_weights(), kind="stable"),
                    skip=_name_term(self.prep_words()),
                )
            names = self._cache["suggested"]
        return [str(x) for x in names]

    def prep_words(self) -> frozenset[str]:
        """The first names this version's preparation kept as words (its ``prep.json``:
        ``[prepare] not_names`` and first names the corpus uses as words; read once)."""
        if "prep_words" not in self._cache:
            # Deferred on purpose: privacy loads the preparation chain (see _name_term).
            from talkthemes.privacy import prep_words

            path = self.folder / "prep.json"
            try:
                info = json.loads(path.read_text(encoding="utf-8")) if path.is_file() else {}
            except (OSError, ValueError):  # unreadable: every first-name term stays hidden
                info = {}
            self._cache["prep_words"] = prep_words(info if isinstance(info, dict) else {})
        return self._cache["prep_words"]

    def names(self) -> list[str]:
        """Display name of each theme: its label, or its suggested name until labelled."""
        suggested = self.suggested_names()
        return [display_name(t.label, suggested[i]) for i, t in enumerate(self.themes)]

    def fold(self, shares: np.ndarray) -> np.ndarray:
        """Shares of transcripts (D × the model's K, e.g. of new calls) as this version's
        themes: the columns of merged themes summed (unchanged without merges)."""
        return fold_columns(shares, self.groups)

    def evidence_stored(self) -> bool:
        """Whether the version holds evidence sentences (versions written before they
        were kept do not)."""
        return self._evidence() is not None

    def _evidence(self) -> dict[int, list[EvidenceSentence]] | None:
        if "evidence" not in self._cache:
            self._cache["evidence"] = load_evidence(self.folder)
        return self._cache["evidence"]

    def evidence(self, position: int) -> list[EvidenceSentence]:
        """A theme's evidence sentences, in the order chosen (empty when none are stored).

        A merged theme has its themes' sentences, highest score first, one per call.
        """
        stored = self._evidence()
        if not stored:
            return []
        theme = self.themes[position]
        ids = [theme.theme_id, *theme.merged]
        if len(ids) == 1:
            return list(stored.get(ids[0], []))
        pooled = sorted(
            (s for t in ids for s in stored.get(t, [])), key=lambda s: (-s.score, s.call_id)
        )
        seen: set[str] = set()
        out = []
        for s in pooled:
            if s.call_id not in seen:
                seen.add(s.call_id)
                out.append(s)
        return out[:MAX_SENTENCES]

    def with_labels(self, store: Any) -> Version:
        """This version with its themes' labels, notes and flags read again from ``store``
        (the arrays are kept; the merges must be those it was loaded with)."""
        return replace(self, themes=_themes(store, self.n, self.groups))

    def summary(self, *, lam: float = 0.6, n_terms: int = 10) -> list[dict[str, Any]]:
        """Per theme: id, name, label, note, hidden, status, coverage, mean share, terms,
        coherence, then suggested name, whether labelled, not-a-theme flag, merged ids."""
        cov, mean = self.coverage(), self.mean_share()
        coh = self.info.get("coherence", {})
        suggested = self.suggested_names()
        out = []
        for i, t in enumerate(self.themes):
            out.append(
                {
                    "theme_id": t.theme_id,
                    "name": display_name(t.label, suggested[i]),
                    "label": t.label,
                    "note": t.note,
                    "hidden": t.hidden,
                    "status": t.status,
                    "coverage": float(cov[i]),
                    "mean_share": float(mean[i]),
                    "top_terms": self.top_terms(i, n_terms, lam),
                    "coherence": {
                        m: (float(v[i]) if v[i] is not None and np.isfinite(v[i]) else None)
                        for m, v in coh.items()
                    },
                    "suggested_name": suggested[i],
                    "labelled": bool(t.label.strip()),
                    "not_a_theme": t.hidden,
                    "merged": list(t.merged),
                }
            )
        return out


def _themes(
    store: Any, n: int, groups: list[Group] | None, raw: list[ThemeRecord] | None = None
) -> list[ThemeRecord]:
    """A version's themes from the store (``raw``: as already read), merged themes as one
    (see :class:`Version`): a merged theme is the record of the id it keeps, with that id's
    label, note and flag, its new position and the ids merged into it."""
    raw = store.themes(n) if raw is None else raw
    if groups is None:
        return list(raw)
    labels = store.labels_for([root for root, _ in groups])
    out = []
    for pos, (root, rows) in enumerate(groups):
        ids = [raw[r].theme_id for r in rows]
        base = next((raw[r] for r in rows if raw[r].theme_id == root), raw[rows[0]])
        lab = labels[root]
        out.append(
            replace(
                base,
                theme_id=root,
                position=pos,
                label=lab.label,
                note=lab.note,
                hidden=lab.hidden,
                merged=tuple(t for t in ids if t != root),
            )
        )
    return out


def _fold_info(info: dict[str, Any], groups: list[Group], weights: np.ndarray) -> dict[str, Any]:
    """``version.json`` with its per-theme lists as the merged themes: weights summed,
    coherence unknown for a merged theme, suggested names kept for themes left alone."""
    out = dict(info)
    out["topic_weights"] = [float(w) for w in weights]
    out["coherence"] = {
        m: [float(v[rows[0]]) if len(rows) == 1 else None for _, rows in groups]
        for m, v in (info.get("coherence") or {}).items()
    }
    names = info.get("suggested_names")
    raw_k = len(info.get("theme_ids") or [])
    if names and len(names) == raw_k:
        out["suggested_names"] = [names[rows[0]] if len(rows) == 1 else None for _, rows in groups]
    else:
        out.pop("suggested_names", None)
    out["theme_ids"] = [root for root, _ in groups]
    out["merged_groups"] = {
        str(root): [int(info["theme_ids"][r]) for r in rows]
        for root, rows in groups
        if len(rows) > 1
    }
    return out


def _name_term(words: frozenset[str] = frozenset()) -> Callable[[str], bool]:
    """:func:`talkthemes.privacy.name_term`: person names are never in a suggested name,
    unless the version's preparation decided they are words (``words``)."""
    # Deferred on purpose: privacy loads the preparation chain (about a second), needed
    # here only to name merged themes and versions written before names were stored.
    from talkthemes.privacy import name_term

    return lambda term: name_term(term, words=words)


def _name_merged(version: Version) -> None:
    """Suggested names of merged themes: from their mixed words, distinct from the rest."""
    names = version.info.get("suggested_names")
    if not names or all(x is not None for x in names):
        return
    missing = [i for i, x in enumerate(names) if x is None]
    taken = [x for x in names if x is not None]
    fresh = suggest_names(
        version.topic_terms[missing],
        version.term_marginal(),
        version.vocabulary,
        taken=taken,
        skip=_name_term(version.prep_words()),
    )
    for i, name in zip(missing, fresh, strict=True):
        names[i] = name


def load_version(ws: Workspace, n: int | None = None, *, fold: bool = True) -> Version:
    """Load version ``n`` (default: the current one).

    Parameters
    ----------
    ws : Workspace
    n : int, optional
    fold : bool
        Show merged themes as one (the default); False gives the themes as fitted, as a
        refresh aligns them.

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
        raw = store.themes(n)
        merges = store.theme_merges() if fold else {}
        groups = merge_groups([t.theme_id for t in raw], merges) if merges else None
        themes = _themes(store, n, groups, raw) if raw else []
    folder = ws.versions_dir / str(n)
    if not themes or not folder.exists():
        raise NotReadyError(f"version {n} is not on disk (kept versions: see 'talkthemes status')")
    info = _load_json(folder / "version.json")
    topic_terms = np.load(folder / "topic_terms.npy", allow_pickle=False)
    doc_topics = np.load(folder / "doc_topics.npy", allow_pickle=False, mmap_mode="r")
    if groups is not None:
        info.setdefault("theme_ids", [t.theme_id for t in raw])
        weights = np.asarray(
            info.get("topic_weights") or np.asarray(doc_topics).mean(axis=0), dtype=np.float64
        )
        folded, folded_weights = fold_rows(topic_terms, weights, groups)
        topic_terms = folded.astype(topic_terms.dtype)
        doc_topics = fold_columns(doc_topics, groups).astype(np.float32)
        info = _fold_info(info, groups, folded_weights)
    version = Version(
        n=n,
        folder=folder,
        info=info,
        themes=themes,
        vocabulary=_load_json(folder / "vocabulary.json"),
        doc_ids=_load_json(folder / "doc_ids.json"),
        topic_terms=topic_terms,
        doc_topics=doc_topics,
        groups=groups,
    )
    if groups is not None:
        _name_merged(version)
    return version
