"""Writing a version: the folder in full under a temporary name, then current in one
transaction.

A version is a folder ``versions/<n>/`` written in full under a temporary name, moved into
place, and only then recorded as current in the store (one transaction), so a crash at any
point leaves the previous version current: ``topic_terms.npy`` (K×V float32),
``doc_topics.npy`` (D×K float32), ``doc_ids.json``, ``vocabulary.json``, ``model/`` (the
model state as ``.npy`` arrays plus ``params.json``), ``prep.json`` (what the prep learned
that new text needs: settings, boilerplate sentences, phrases, excluded transcripts; see
:mod:`talkthemes.assign`), ``version.json`` (what was published, from which sweep cell or
refresh, settings, library versions, theme ids by row, retired theme ids, per-theme
coherence, each theme's suggested name), ``evidence.json`` (each theme's evidence sentences,
:mod:`talkthemes.versions.evidence`), and for a refresh ``drift.json``, ``drift.md`` and
``drift.png`` (see :mod:`talkthemes.versions.drift`), and ``view_tables/``: what the viewer's
sections read instead of the share matrix (:mod:`talkthemes.versions.tables`).
"""

from __future__ import annotations

import json
import logging
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from talkthemes.diskspace import room_for
from talkthemes.errors import InputError
from talkthemes.prepare.frozen import PrepSpec
from talkthemes.privacy import name_term, prep_words
from talkthemes.versions.evidence import EVIDENCE_FILE, evidence_document
from talkthemes.versions.evidence_build import build_evidence
from talkthemes.versions.fit import FittedVersion
from talkthemes.versions.metadata import metadata_table
from talkthemes.versions.naming import suggest_names
from talkthemes.versions.prune import prune_versions
from talkthemes.versions.tables import TABLES_DIR, build_and_write
from talkthemes.workspace import Workspace, atomic_dir

__all__ = [
    "Checkpoint",
    "ExtraFiles",
    "ThemePlan",
    "fitted_names",
    "version_bytes",
    "write_version",
]

log = logging.getLogger(__name__)


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
    names, evidence = _labelling_aids(ws, fitted)
    info["suggested_names"] = names
    # refused before a byte is written when it cannot fit; a disk that fills up meanwhile
    # gives the same message (the temporary folder is removed, the last version stays)
    with (
        room_for(ws.versions_dir, version_bytes(fitted), "publish a version"),
        atomic_dir(folder) as tmp,
    ):
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
        (tmp / EVIDENCE_FILE).write_text(
            json.dumps(evidence_document(theme_ids, evidence), ensure_ascii=False, indent=1),
            encoding="utf-8",
        )
        _view_tables(ws, tmp, fitted, theme_ids)
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


def version_bytes(fitted: FittedVersion) -> int:
    """About how many bytes a version folder of ``fitted`` takes on disk (its arrays
    exactly, its JSON files from their lengths; the small files are in the margin of
    :func:`talkthemes.diskspace.check_room`)."""
    k, v = np.shape(fitted.topic_terms)
    arrays = 4 * (k * v + len(fitted.doc_ids) * k)  # float32
    arrays += sum(np.asarray(a).nbytes for a in fitted.state_arrays.values())
    ids = sum(len(t) + 4 for t in fitted.doc_ids)
    vocabulary = sum(len(t) + 4 for t in fitted.vocabulary)
    tables = 64 * len(fitted.doc_ids)  # the viewer tables: about a call's metadata row each
    return int(arrays + ids + 2 * vocabulary + tables)


def _view_tables(ws: Workspace, folder: Path, fitted: FittedVersion, theme_ids: list[int]) -> None:
    """The version's viewer tables (:mod:`talkthemes.versions.tables`), counted over every
    call of the version with the calls' metadata as stored now."""
    with ws.store() as store:
        meta = metadata_table(fitted.doc_ids, store.metadata_for(None))
    # The arrays as written (float32), as the viewer loads them: the same leads and shares.
    doc_topics = np.load(folder / "doc_topics.npy", mmap_mode="r", allow_pickle=False)
    topic_terms = np.load(folder / "topic_terms.npy", allow_pickle=False)
    build_and_write(
        folder / TABLES_DIR, doc_topics, list(fitted.doc_ids), meta, theme_ids, topic_terms
    )


def _weights_and_marginal(fitted: FittedVersion) -> tuple[np.ndarray, np.ndarray]:
    """The themes' weights in the corpus and the corpus term distribution p(w)."""
    phi = np.asarray(fitted.topic_terms, dtype=np.float64)
    weights = np.asarray(
        fitted.info.get("topic_weights") or np.asarray(fitted.doc_topics).mean(axis=0),
        dtype=np.float64,
    )
    return weights, (weights / weights.sum()) @ phi


def fitted_names(fitted: FittedVersion, lam: float) -> list[str]:
    """Each theme's suggested name, as the version written from ``fitted`` stores it
    (docs/methods.md, "Suggested names"); the drift report names a refit's themes so too."""
    weights, marginal = _weights_and_marginal(fitted)
    kept_words = prep_words(fitted.prep_info)
    return suggest_names(
        np.asarray(fitted.topic_terms, dtype=np.float64),
        marginal,
        fitted.vocabulary,
        lam=lam,
        order=np.argsort(-weights, kind="stable"),
        # a person's name is personal data, never a theme's name (unless the prep kept it)
        skip=lambda term: name_term(term, words=kept_words),
    )


def _labelling_aids(ws: Workspace, fitted: FittedVersion) -> tuple[list[str], list[Any]]:
    """Each theme's suggested name and evidence sentences (docs/methods.md, "Suggested
    names" and "Evidence sentences"), worked out once so that screens only read them."""
    lam = ws.settings().view.relevance_lambda
    phi = np.asarray(fitted.topic_terms, dtype=np.float64)
    _, marginal = _weights_and_marginal(fitted)
    names = fitted_names(fitted, lam)
    spec = PrepSpec.from_prep_info(fitted.prep_info, fitted.vocabulary)
    with ws.store() as store:
        evidence = build_evidence(
            store.turns_for,
            spec,
            phi,
            fitted.doc_topics,
            fitted.doc_ids,
            marginal,
            lam=lam,
        )
    return names, evidence
