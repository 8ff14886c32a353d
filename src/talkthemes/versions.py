"""Published versions: publish a sweep cell, load a version, its themes and labels, export.

A version is a folder ``versions/<n>/`` written in full under a temporary name, moved into
place, and only then recorded as current in the store (one transaction), so a crash at
any point leaves the previous version current:

``topic_terms.npy`` (K×V float32), ``doc_topics.npy`` (D×K float32), ``doc_ids.json``,
``vocabulary.json``, ``model/`` (the model state as ``.npy`` arrays plus ``params.json``),
``prep.json`` (what the prep learned that new text needs: settings, boilerplate sentences,
phrases, excluded transcripts; see :mod:`talkthemes.assign`), ``version.json`` (what was
published, from which sweep cell or refresh, settings, library versions, theme ids by row,
retired theme ids, per-theme coherence), and for a refresh ``drift.json``, ``drift.md``
and ``drift.png`` (see :mod:`talkthemes.drift`).

Only the newest ``[refresh] keep_versions`` versions are kept, and always the current one
(:func:`prune_versions`).
"""

from __future__ import annotations

import io
import json
import logging
import re
import shutil
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
    "FittedVersion",
    "PublishResult",
    "ThemePlan",
    "Version",
    "export_shares",
    "fit_version",
    "load_version",
    "pick_cell",
    "prune_versions",
    "publish",
    "remove_leftovers",
    "write_table",
    "write_version",
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


@dataclass
class FittedVersion:
    """A model fitted on a prep and scored: everything a version folder holds.

    Built by :func:`fit_version`; written by :func:`write_version`.
    """

    family: str
    k: int
    seed: int
    topic_terms: np.ndarray
    doc_topics: np.ndarray
    doc_ids: list[str]
    vocabulary: list[str]
    state_arrays: dict[str, np.ndarray]
    state_params: dict[str, Any]
    info: dict[str, Any]
    prep_info: dict[str, Any]


@dataclass
class ThemePlan:
    """Which theme each row of a new version is, and what it retires.

    Attributes
    ----------
    theme_ids : list of int or None
        Per row: the theme id it carries, or None for a new theme (an id is reserved).
    statuses : list of str
        Per row: ``carried`` or ``new``.
    info : list of dict
        Per row: stored with the theme (e.g. the distance it moved, near-ties).
    retired : list of dict
        Themes of the previous version that this one retires: ``theme_id`` and ``info``.
    """

    theme_ids: list[int | None]
    statuses: list[str]
    info: list[dict[str, Any]]
    retired: list[dict[str, Any]] = field(default_factory=list)

    @classmethod
    def all_new(cls, k: int) -> ThemePlan:
        """Every row a new theme (a first publish)."""
        return cls([None] * k, ["new"] * k, [{} for _ in range(k)], [])


#: ``extra_files(folder, n, theme_ids)``: writes more files into the version folder before
#: it is moved into place.
ExtraFiles = Callable[[Path, int, list[int]], None]
#: ``checkpoint(stage)``: called at the named stages of writing a version.
Checkpoint = Callable[[str], None]


def prep_record(corpus: Any) -> dict[str, Any]:
    """The part of a prep's ``prep.json`` a version keeps, to prepare new text alike."""
    info = corpus.info
    return {
        "hash": info.get("hash", ""),
        "settings": info.get("settings", {}),
        "phrases": info.get("phrases", []),
        "boilerplate": info.get("boilerplate", []),
        "chain_version": info.get("chain_version", ""),
        "lemmas": info.get("lemmas", {}),
        "excluded": [[t, r] for t, r in corpus.excluded],
        "corpus_fingerprint": info.get("corpus_fingerprint", ""),
    }


def fit_version(
    ws: Workspace,
    corpus: Any,
    *,
    family: str,
    k: int,
    seed: int,
    prep_hash: str,
    model: Any = None,
) -> FittedVersion:
    """Fit ``family`` at ``k`` with ``seed`` on every transcript of a prep and score it.

    Parameters
    ----------
    ws : Workspace
    corpus : PreparedCorpus
    family, k, seed
        The model to fit (``[sweep]`` settings give the rest).
    prep_hash : str
    model : fitted model, optional
        An already fitted model of this configuration on ``corpus`` (it is not refitted).

    Returns
    -------
    FittedVersion
        With per-theme coherence (C_NPMI, C_V on the prep's token streams) and each
        theme's share of all tokens.
    """
    from talkthemes.metrics.coherence import build_reference, score
    from talkthemes.models.base import top_terms, topic_shares
    from talkthemes.sweep import make_model

    settings = ws.settings()
    counts = corpus.counts.tocsr()
    if model is None:
        model = make_model(family, k, seed, settings.sweep).fit(counts)
    result = model.result_
    tops = top_terms(result.topic_terms, min(settings.sweep.topn, result.topic_terms.shape[1]))
    reference = build_reference(
        corpus.tokens, corpus.offsets, counts, np.unique(tops), windows=(110, 10)
    )
    coherence = {
        m: [float(x) for x in score(reference, tops, m).per_topic] for m in ("c_npmi", "c_v")
    }
    lengths = np.asarray(counts.sum(axis=1)).ravel()
    weights = topic_shares(result.doc_topics, lengths)
    arrays, params = model.state()
    info = {
        "family": family,
        "k": int(k),
        "seed": int(seed),
        "prep_hash": prep_hash,
        "n_docs": corpus.n_docs,
        "n_terms": corpus.n_terms,
        "topic_weights": [float(x) for x in weights],
        "coherence": coherence,
        "topn": settings.sweep.topn,
        "params": result.params,
        "fit_seconds": float(result.fit_seconds),
        "prepare_settings": corpus.info.get("settings") or settings.prepare.model_dump(),
        "libraries": corpus.info.get("versions", {}),
    }
    return FittedVersion(
        family=family,
        k=int(k),
        seed=int(seed),
        topic_terms=np.asarray(result.topic_terms),
        doc_topics=np.asarray(result.doc_topics),
        doc_ids=list(corpus.doc_ids),
        vocabulary=list(corpus.vocabulary),
        state_arrays=arrays,
        state_params=params,
        info=info,
        prep_info=prep_record(corpus),
    )


def write_version(
    ws: Workspace,
    fitted: FittedVersion,
    *,
    plan: ThemePlan | None = None,
    extra_info: dict[str, Any] | None = None,
    extra_files: ExtraFiles | None = None,
    refresh_id: int | None = None,
    refresh_info: Callable[[int, list[int]], dict[str, Any]] | None = None,
    checkpoint: Checkpoint | None = None,
) -> int:
    """Write a version folder in full, make it current in one transaction, prune old ones.

    The caller holds the workspace lock. The folder is built under a temporary name and
    moved into place (:func:`~talkthemes.workspace.atomic_dir`); only then does one
    transaction record the version, its themes, the themes it retires and (for a refresh)
    the refresh log row. A crash before that commit leaves the previous version current.

    Parameters
    ----------
    ws : Workspace
    fitted : FittedVersion
    plan : ThemePlan, optional
        Theme ids and statuses per row; by default every row is a new theme.
    extra_info : dict, optional
        Added to ``version.json`` and the store's record.
    extra_files : callable, optional
        ``extra_files(folder, n, theme_ids)`` writes more files (e.g. the drift report).
    refresh_id : int, optional
        The refresh log row to mark published in the same transaction.
    refresh_info : callable, optional
        ``refresh_info(n, theme_ids)`` gives that row's summary.
    checkpoint : callable, optional
        Called with ``"version-files"`` once the files are written (not yet moved),
        ``"version-folder"`` once the folder is in place (not yet current) and
        ``"version-current"`` after the commit (before pruning).

    Returns
    -------
    int
        The version number.
    """
    plan = plan or ThemePlan.all_new(fitted.k)
    if len(plan.theme_ids) != fitted.k or len(plan.statuses) != fitted.k:
        raise InputError(f"theme plan has {len(plan.theme_ids)} rows for {fitted.k} themes")
    with ws.store() as store:
        n = store.next_version_number()
        fresh = iter(store.reserve_theme_ids(sum(t is None for t in plan.theme_ids)))
    theme_ids = [int(t) if t is not None else next(fresh) for t in plan.theme_ids]
    folder = ws.versions_dir / str(n)
    info = {"n": n, **fitted.info, **(extra_info or {}), "theme_ids": theme_ids}
    info["retired_theme_ids"] = [int(r["theme_id"]) for r in plan.retired]
    with atomic_dir(folder) as tmp:
        np.save(tmp / "topic_terms.npy", fitted.topic_terms.astype(np.float32), allow_pickle=False)
        np.save(tmp / "doc_topics.npy", fitted.doc_topics.astype(np.float32), allow_pickle=False)
        (tmp / "doc_ids.json").write_text(json.dumps(fitted.doc_ids), encoding="utf-8")
        (tmp / "vocabulary.json").write_text(
            json.dumps(fitted.vocabulary, ensure_ascii=False), encoding="utf-8"
        )
        (tmp / "prep.json").write_text(
            json.dumps(fitted.prep_info, ensure_ascii=False), encoding="utf-8"
        )
        (tmp / "model").mkdir()
        for name, arr in fitted.state_arrays.items():
            np.save(tmp / "model" / f"{name}.npy", np.asarray(arr), allow_pickle=False)
        (tmp / "model" / "params.json").write_text(
            json.dumps(fitted.state_params, default=float), "utf-8"
        )
        if extra_files is not None:
            extra_files(tmp, n, theme_ids)
        (tmp / "version.json").write_text(json.dumps(info, indent=1, default=float), "utf-8")
        if checkpoint:
            checkpoint("version-files")
    if checkpoint:
        checkpoint("version-folder")
    themes = [
        {"theme_id": tid, "position": i, "status": plan.statuses[i], "info": plan.info[i]}
        for i, tid in enumerate(theme_ids)
    ]
    with ws.store() as store:
        store.publish_version(
            n,
            info,
            themes,
            retired=plan.retired,
            refresh_id=refresh_id,
            refresh_info=refresh_info(n, theme_ids) if refresh_info else None,
        )
    if checkpoint:
        checkpoint("version-current")
    removed = prune_versions(ws, ws.settings().refresh.keep_versions)
    if removed:
        log.info("removed old versions %s", removed)
    return n


def prune_versions(ws: Workspace, keep: int) -> list[int]:
    """Delete all but the newest ``keep`` versions, never the current one.

    The store forgets them first (one transaction), then their folders are removed, with
    any leftovers of interrupted runs (:func:`remove_leftovers`). The caller holds the
    workspace lock.

    Returns
    -------
    list of int
        The versions deleted from the store.
    """
    keep = max(1, int(keep))
    with ws.store() as store:
        numbers = store.version_numbers()
        current = store.current_version()
        cur = None if current is None else int(current["n"])
        old = [x for x in numbers[:-keep] if x != cur] if len(numbers) > keep else []
        deleted = store.delete_versions(old)
    remove_leftovers(ws)
    return deleted


_TEMPORARY = re.compile(r"\.\d+\.(.+\.tmp|old-\d+)")


def remove_leftovers(ws: Workspace) -> list[str]:
    """Remove version folders no version record points to.

    These are a version folder written by a run killed before its commit, the temporary
    folder of a run killed while writing (:func:`~talkthemes.workspace.atomic_dir`), and
    the folders of versions the store has forgotten. None is visible to readers. The
    caller holds the workspace lock.

    Returns
    -------
    list of str
        Names of the folders removed.
    """
    root = ws.versions_dir
    if not root.is_dir():
        return []
    with ws.store() as store:
        known = set(store.version_numbers())
    removed = []
    for entry in sorted(root.iterdir()):
        name = entry.name
        stale = (name.isdigit() and int(name) not in known) or bool(_TEMPORARY.fullmatch(name))
        if stale and entry.is_dir():
            shutil.rmtree(entry, ignore_errors=True)
            removed.append(name)
    if removed:
        log.info("removed leftover version folders: %s", ", ".join(removed))
    return removed


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

    Every theme of a version published this way is new. The caller holds the workspace
    lock.
    """
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.sweep import load_current_prep

    def step(name: str, i: int) -> None:
        if progress:
            progress(name, i, 5)

    prep, prep_folder = load_current_prep(ws)
    sweep, chosen = _find_cell(ws, prep["hash"], sweep_id, k=k, family=family, cell=cell)
    settings = ws.settings()
    step("loading the prep", 0)
    corpus = PreparedCorpus.load(prep_folder)
    fam, kk, seed = str(chosen["family"]), int(chosen["k"]), int(chosen["seed"])
    step(f"fitting {fam} K={kk} on {corpus.n_docs:,} transcripts", 1)
    fitted = fit_version(ws, corpus, family=fam, k=kk, seed=seed, prep_hash=prep["hash"])
    step("writing the version", 3)
    n = write_version(
        ws, fitted, extra_info={"cell": str(chosen["cell"]), "sweep_id": int(sweep["id"])}
    )
    step("done", 5)
    version = load_version(ws, n)
    return PublishResult(
        version=n,
        family=fam,
        k=kk,
        seed=seed,
        cell=str(chosen["cell"]),
        sweep_id=int(sweep["id"]),
        fit_seconds=float(fitted.info["fit_seconds"]),
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
