"""Published versions: publish a sweep cell, load a version, its themes and labels, export.

A version is a folder ``versions/<n>/`` written in full under a temporary name, moved into
place, and only then recorded as current in the store (one transaction), so a crash at
any point leaves the previous version current:

``topic_terms.npy`` (K×V float32), ``doc_topics.npy`` (D×K float32), ``doc_ids.json``,
``vocabulary.json``, ``model/`` (the model state as ``.npy`` arrays plus ``params.json``),
``version.json`` (what was published, from which sweep cell, settings, library versions,
theme ids by row, per-theme coherence).
"""

from __future__ import annotations

import io
import json
import logging
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.charts import theme_name
from talkthemes.errors import ConfigError, InputError, NotReadyError
from talkthemes.workspace import Workspace, atomic_dir, atomic_write_bytes

__all__ = [
    "PublishResult",
    "Version",
    "export_shares",
    "load_version",
    "pick_cell",
    "publish",
]

log = logging.getLogger(__name__)

#: ``progress(step, done, total)``
ProgressFn = Callable[[str, int, int], None]


# -- loading ---------------------------------------------------------------------------
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
    themes : list of dict
        One per row of ``topic_terms``: ``theme_id, position, status, label, note, hidden``.
    vocabulary : list of str
    doc_ids : list of str
    topic_terms : ndarray (K, V)
    doc_topics : ndarray (D, K)
    """

    n: int
    folder: Path
    info: dict[str, Any]
    themes: list[dict[str, Any]]
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
        return [int(t["theme_id"]) for t in self.themes]

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
            ``term, relevance, weight, corpus_weight, lift, rank``.
        """
        from talkthemes.metrics.relevance import relevance

        phi = self.topic_terms[position].astype(np.float64)
        marginal = self.term_marginal()
        rel = relevance(phi[None, :], marginal, lam)[0]
        order = np.lexsort((np.arange(phi.size), -rel))[:n]
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
        return [theme_name(t["label"], self.top_terms(i, 3)) for i, t in enumerate(self.themes)]

    def summary(self, *, lam: float = 0.6, n_terms: int = 10) -> list[dict[str, Any]]:
        """Per theme: id, label, note, hidden, status, coverage, mean share, terms, coherence."""
        cov, mean = self.coverage(), self.mean_share()
        coh = self.info.get("coherence", {})
        out = []
        for i, t in enumerate(self.themes):
            out.append(
                {
                    "theme_id": t["theme_id"],
                    "name": theme_name(t["label"], self.top_terms(i, 3)),
                    "label": t["label"],
                    "note": t["note"],
                    "hidden": t["hidden"],
                    "status": t["status"],
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
            n = int(cur["n"])
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


# -- publishing --------------------------------------------------------------------------
@dataclass
class PublishResult:
    """What ``publish`` did."""

    version: int
    family: str
    k: int
    seed: int
    cell: str
    sweep_id: int | None
    fit_seconds: float
    themes: list[dict[str, Any]]

    def to_json(self) -> dict[str, Any]:
        return {
            "version": self.version,
            "family": self.family,
            "k": self.k,
            "seed": self.seed,
            "cell": self.cell,
            "sweep_id": self.sweep_id,
            "fit_seconds": self.fit_seconds,
            "themes": self.themes,
        }


def pick_cell(
    cells: pd.DataFrame, *, k: int | None, family: str | None, cell: str | None
) -> pd.Series:
    """Choose the cell to publish: by id, or by (family, K) taking the medoid seed.

    The medoid seed is the one whose topics agree most, on average, with the other seeds'
    topics (the same average-Jaccard agreement as stability), so the published themes
    are the most typical of that K.
    """
    if cell is not None:
        hit = cells[cells["cell"] == cell]
        if hit.empty:
            raise InputError(f"--cell {cell!r} is not in the sweep (e.g. {cells['cell'].iloc[0]})")
        return hit.iloc[0]
    if k is None or family is None:
        raise ConfigError("give --k and --family, or --cell, or --version")
    hit = cells[(cells["k"] == k) & (cells["family"] == family)]
    if hit.empty:
        ks = sorted(set(cells.loc[cells["family"] == family, "k"]))
        raise InputError(
            f"no {family} cell with K={k} in the sweep (K swept for {family}: "
            f"{', '.join(map(str, ks)) or 'none'})"
        )
    if len(hit) == 1:
        return hit.iloc[0]
    if "agreement" in hit.columns:
        return hit.sort_values(["agreement", "seed"], ascending=[False, True]).iloc[0]
    return hit.sort_values("seed").iloc[0]


def _find_cell(
    ws: Workspace,
    prep_hash: str,
    sweep_id: int | None,
    *,
    k: int | None,
    family: str | None,
    cell: str | None,
) -> tuple[dict[str, Any], pd.Series]:
    """The newest sweep of the current prep holding the requested cell, and that cell."""
    from talkthemes.sweep import seed_agreement

    with ws.store() as store:
        ids = [sweep_id] if sweep_id is not None else store.sweep_ids(prep_hash)
        if not ids:
            if store.sweep_ids():
                raise NotReadyError(
                    "the sweeps were run on an older prep: run 'talkthemes sweep' again first"
                )
            raise NotReadyError("no sweep yet: run 'talkthemes sweep' first")
        last_error: Exception | None = None
        for sid in ids:
            cells = pd.DataFrame(store.cells(sid))
            if cells.empty:
                continue
            try:
                chosen = pick_cell(
                    seed_agreement(cells, ws.settings().sweep.stability_topn),
                    k=k,
                    family=family,
                    cell=cell,
                )
            except InputError as exc:
                last_error = exc
                continue
            sweep = store.get_sweep(sid)
            assert sweep is not None
            if sweep["prep_hash"] != prep_hash:
                raise NotReadyError(
                    f"sweep {sid} was run on an older prep: run 'talkthemes sweep' again first"
                )
            return sweep, chosen
    if last_error is not None:
        raise last_error
    raise NotReadyError("no finished sweep cell yet: run 'talkthemes sweep' first")


def publish(
    ws: Workspace,
    *,
    k: int | None = None,
    family: str | None = None,
    cell: str | None = None,
    sweep_id: int | None = None,
    progress: ProgressFn | None = None,
) -> PublishResult:
    """Fit the chosen cell's model on every eligible transcript and publish it as a version.

    The caller holds the workspace lock.
    """
    from talkthemes.metrics.coherence import build_reference, score
    from talkthemes.models.base import top_terms, topic_shares
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.sweep import load_current_prep, make_model

    def step(name: str, i: int) -> None:
        if progress:
            progress(name, i, 5)

    prep, prep_folder = load_current_prep(ws)
    sweep, chosen = _find_cell(ws, prep["hash"], sweep_id, k=k, family=family, cell=cell)
    settings = ws.settings()
    step("loading the prep", 0)
    corpus = PreparedCorpus.load(prep_folder)
    counts = corpus.counts.tocsr()
    fam, kk, seed = str(chosen["family"]), int(chosen["k"]), int(chosen["seed"])
    step(f"fitting {fam} K={kk} on {corpus.n_docs:,} transcripts", 1)
    t0 = time.perf_counter()
    model = make_model(fam, kk, seed, settings.sweep).fit(counts)
    result = model.result_
    fit_seconds = time.perf_counter() - t0
    step("scoring the themes", 2)
    tops = top_terms(result.topic_terms, settings.sweep.topn)
    reference = build_reference(
        corpus.tokens, corpus.offsets, counts, np.unique(tops), windows=(110, 10)
    )
    coherence = {
        m: [float(x) for x in score(reference, tops, m).per_topic] for m in ("c_npmi", "c_v")
    }
    lengths = np.asarray(counts.sum(axis=1)).ravel()
    weights = topic_shares(result.doc_topics, lengths)
    arrays, params = model.state()

    with ws.store() as store:
        n = store.next_version_number()
        theme_ids = store.reserve_theme_ids(kk)
    step(f"writing version {n}", 3)
    folder = ws.versions_dir / str(n)
    info = {
        "n": n,
        "family": fam,
        "k": kk,
        "seed": seed,
        "cell": str(chosen["cell"]),
        "sweep_id": int(sweep["id"]),
        "prep_hash": prep["hash"],
        "n_docs": corpus.n_docs,
        "n_terms": corpus.n_terms,
        "theme_ids": theme_ids,
        "topic_weights": [float(x) for x in weights],
        "coherence": coherence,
        "topn": settings.sweep.topn,
        "params": result.params,
        "fit_seconds": fit_seconds,
        "prepare_settings": settings.prepare.model_dump(),
        "libraries": corpus.info.get("libraries", {}),
    }
    with atomic_dir(folder) as tmp:
        np.save(tmp / "topic_terms.npy", result.topic_terms.astype(np.float32), allow_pickle=False)
        np.save(tmp / "doc_topics.npy", result.doc_topics.astype(np.float32), allow_pickle=False)
        (tmp / "doc_ids.json").write_text(json.dumps(list(corpus.doc_ids)), encoding="utf-8")
        (tmp / "vocabulary.json").write_text(
            json.dumps(list(corpus.vocabulary), ensure_ascii=False), encoding="utf-8"
        )
        (tmp / "model").mkdir()
        for name, arr in arrays.items():
            np.save(tmp / "model" / f"{name}.npy", np.asarray(arr), allow_pickle=False)
        (tmp / "model" / "params.json").write_text(json.dumps(params, default=float), "utf-8")
        (tmp / "version.json").write_text(json.dumps(info, indent=1, default=float), "utf-8")
    step("making it current", 4)
    themes = [
        {"theme_id": tid, "position": i, "status": "new", "info": {}}
        for i, tid in enumerate(theme_ids)
    ]
    with ws.store() as store:
        store.add_version(n, info, themes)
    step("done", 5)
    version = load_version(ws, n)
    return PublishResult(
        version=n,
        family=fam,
        k=kk,
        seed=seed,
        cell=str(chosen["cell"]),
        sweep_id=int(sweep["id"]),
        fit_seconds=fit_seconds,
        themes=version.summary(lam=settings.view.relevance_lambda),
    )


# -- export ---------------------------------------------------------------------------
def export_shares(version: Version) -> pd.DataFrame:
    """One row per transcript: id, lead theme id and label, lead share, a share per theme.

    Share columns are named ``share_<theme id>``.
    """
    lead = version.lead()
    ids = np.asarray(version.theme_ids)
    labels = [t["label"] for t in version.themes]
    frame = pd.DataFrame(
        {
            "transcript_id": version.doc_ids,
            "lead_theme_id": ids[lead],
            "lead_theme_label": [labels[i] for i in lead],
            "lead_share": np.round(version.lead_share().astype(np.float64), 6),
        }
    )
    shares = pd.DataFrame(
        np.round(np.asarray(version.doc_topics, dtype=np.float64), 6),
        columns=[f"share_{t}" for t in ids],
    )
    return pd.concat([frame, shares], axis=1)


def write_table(frame: pd.DataFrame, path: Path) -> None:
    """Write a frame as CSV or Parquet (by extension), atomically."""
    suffix = path.suffix.lower()
    if suffix == ".csv":
        atomic_write_bytes(path, frame.to_csv(index=False).encode("utf-8"))
    elif suffix == ".parquet":
        buf = io.BytesIO()
        frame.to_parquet(buf, index=False)
        atomic_write_bytes(path, buf.getvalue())
    else:
        raise ConfigError(f"--out {path}: expected a .csv or .parquet file name")
