"""Theme shares for new transcripts under a published version (``talkthemes assign``).

:func:`assign` reads transcripts in any supported format without storing them (or stores
them too), prepares them exactly as the version's training data was
(:class:`~talkthemes.prepare.frozen.PrepApplier`) and infers their shares: for LDA with gensim's
E-step on the model restored from its saved ``.npy`` state (deterministic for the version's
seed and the input order), for NMF by solving for the weights with the topics held fixed,
on TF-IDF with the saved idf. A transcript with fewer terms of the vocabulary than the
version's ``min_tokens`` gets a row too, in the **unthemed** group (no lead theme, the
reason given), as the version's own short calls are (docs/methods.md, "The unthemed group").
"""

from __future__ import annotations

import json
import logging
import time
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import scipy.sparse as sp

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.errors import InputError, NotReadyError
from talkthemes.ingest.decode import check_fallback
from talkthemes.ingest.detect import is_manifest, iter_files, read_file, resolved
from talkthemes.ingest.run import ingest
from talkthemes.prepare.frozen import AppliedBatch, PrepApplier, load_prep_spec, too_few_terms
from talkthemes.progress import Progress, report
from talkthemes.routing import call_languages, join_routed, route_frames
from talkthemes.versions.export import share_order, write_table
from talkthemes.versions.load import Version, load_version
from talkthemes.versions.unthemed import UNTHEMED
from talkthemes.workspace import Workspace

__all__ = [
    "AssignResult",
    "ShareModel",
    "assign",
    "assign_frame",
    "assign_items",
    "read_transcripts",
]

log = logging.getLogger(__name__)


# -- inference -----------------------------------------------------------------------------
class ShareModel:
    """A version's model restored from its saved state, for theme shares of new transcripts.

    Parameters
    ----------
    family : {'lda', 'nmf'}
    arrays : dict of str to ndarray
        ``versions/<n>/model/*.npy``.
    params : dict
        ``versions/<n>/model/params.json``.
    seed : int
        Seed of LDA's E-step starting points (the version's seed).
    """

    #: Documents per LDA E-step call; fixed so results do not depend on the batch size.
    CHUNKSIZE = 2000

    def __init__(
        self, family: str, arrays: dict[str, np.ndarray], params: dict[str, Any], seed: int
    ) -> None:
        self.family = family
        self.arrays = arrays
        self.params = params
        self.seed = seed
        self._lda: Any = None

    @classmethod
    def from_version(cls, version: Version) -> ShareModel:
        """Load the state saved with a version (``.npy`` arrays and ``params.json``)."""
        folder = version.folder / "model"
        if not (folder / "params.json").is_file():
            raise NotReadyError(f"version {version.n}: the model state is missing ({folder})")
        params = json.loads((folder / "params.json").read_text(encoding="utf-8"))
        arrays = {p.stem: np.load(p, allow_pickle=False) for p in sorted(folder.glob("*.npy"))}
        return cls(str(version.info["family"]), arrays, params, int(version.info.get("seed", 0)))

    def shares(self, counts: sp.csr_matrix) -> np.ndarray:
        """Theme shares (D, K), rows summing to 1, of transcripts' term counts.

        The rows are inferred in order, in chunks of :attr:`CHUNKSIZE`, from one random
        state seeded with the version's seed: the same input gives the same shares.
        """
        if counts.shape[0] == 0:
            k = self.params.get("num_topics", self.params.get("k", 0))
            return np.zeros((0, int(k)), dtype=np.float64)
        # Deferred on purpose: talkthemes.models loads gensim and scikit-learn (about a
        # second), which reading the inputs and writing the table never need.
        if self.family == "lda":
            from talkthemes.models.lda_infer import infer_doc_topics
            from talkthemes.models.lda_state import restore_lda

            if self._lda is None:
                self._lda = restore_lda(self.arrays, self.params, seed=self.seed)
            return infer_doc_topics(
                self._lda, counts.astype(np.float64), seed=self.seed, chunksize=self.CHUNKSIZE
            )
        from talkthemes.models.nmf import transform_counts

        return transform_counts(counts.astype(np.float64), (self.arrays, self.params))


def assign_frame(
    applied: AppliedBatch,
    shares: np.ndarray,
    theme_ids: Sequence[int],
    labels: Sequence[str],
    suggested: Sequence[str] | None = None,
    *,
    min_tokens: int = 1,
) -> pd.DataFrame:
    """The assignment table: the layout of ``export`` with ``known_terms`` before ``reason``.

    Columns: ``transcript_id``, ``lead_theme_id``, ``lead_theme_label``, ``lead_share``,
    ``lead_theme_suggested_name`` (when ``suggested`` names are given), one
    ``share_<theme id>`` per theme in ascending theme id, ``known_terms`` (tokens in the
    vocabulary) and ``reason``. A transcript with fewer than ``min_tokens`` known terms (the
    version's ``[prepare] min_tokens``, the rule that left such calls out of its training) is
    **unthemed**, as in ``export``: no lead theme id and no shares, the label and suggested
    name say ``unthemed`` and ``reason`` says why (empty on themed rows).
    """
    n, k = len(applied.doc_ids), len(theme_ids)
    if shares.shape != (n, k):
        raise InputError(f"assign: {shares.shape} shares for {n} transcripts and {k} themes")
    has = (applied.known > 0) & (applied.known >= min_tokens)
    values = np.where(has[:, None], np.round(np.asarray(shares, dtype=np.float64), 6), np.nan)
    lead = np.argmax(shares, axis=1) if k else np.zeros(n, dtype=np.int64)
    ids = np.asarray(theme_ids, dtype=np.int64)
    frame = pd.DataFrame(
        {
            "transcript_id": applied.doc_ids,
            "lead_theme_id": pd.array(
                [int(ids[i]) if h else None for i, h in zip(lead, has, strict=True)],
                dtype="Int64",
            ),
            "lead_theme_label": [
                labels[i] if h else UNTHEMED for i, h in zip(lead, has, strict=True)
            ],
            "lead_share": values[np.arange(n), lead] if k else np.full(n, np.nan),
        }
    )
    if suggested is not None:
        frame["lead_theme_suggested_name"] = [
            suggested[i] if h else UNTHEMED for i, h in zip(lead, has, strict=True)
        ]
    order = share_order(ids)  # as export writes them: ascending theme id
    share_cols = pd.DataFrame(values[:, order], columns=[f"share_{t}" for t in ids[order]])
    reasons = [
        "" if h else (r or too_few_terms(int(known), min_tokens))
        for h, r, known in zip(has, applied.reasons, applied.known, strict=True)
    ]
    tail = pd.DataFrame({"known_terms": applied.known.astype(np.int64), "reason": reasons})
    return pd.concat([frame, share_cols, tail], axis=1)


# -- the command -------------------------------------------------------------------------
@dataclass
class AssignResult:
    """What :func:`assign` did.

    Attributes
    ----------
    out : Path
        The table written.
    version : int
    rows : int
        Transcripts in the table.
    assigned : int
        Rows with a lead theme.
    unassigned : int
        Rows of the unthemed group (fewer known terms than the version's ``min_tokens``).
    rejects : list of Reject
    warnings : list of Warning_
    seconds : float
    stored : dict, optional
        The ingest report when the transcripts were stored too.
    no_known_words : int
        Unthemed rows with no word of the vocabulary at all.
    """

    out: Path
    version: int
    rows: int
    assigned: int
    unassigned: int
    rejects: list[Reject]
    warnings: list[Warning_]
    seconds: float
    stored: dict[str, Any] | None = None
    no_known_words: int = 0

    @property
    def exit_code(self) -> int:
        """0, or 3 when some inputs were rejected (the rest was assigned)."""
        return 3 if self.rejects else 0

    @property
    def per_second(self) -> float:
        """Transcripts assigned per second."""
        return self.rows / self.seconds if self.seconds > 0 else float("inf")

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict (what ``assign --json`` prints)."""
        return {
            "out": str(self.out),
            "version": self.version,
            "rows": self.rows,
            "assigned": self.assigned,
            "unthemed": self.unassigned,
            "without_known_words": self.no_known_words,
            "seconds": round(self.seconds, 3),
            "transcripts_per_second": round(self.per_second, 1),
            "rejects": [
                {"source": r.source, "row": r.row, "format": r.format, "reason": r.reason}
                for r in self.rejects
            ],
            "warnings": [
                {"source": w.source, "row": w.row, "message": w.message} for w in self.warnings
            ],
            "stored": self.stored,
        }


def read_transcripts(
    paths: Sequence[Path], settings: Any, *, manifests: Sequence[Path] = ()
) -> Iterator[Transcript | Reject | Warning_]:
    """Every transcript, reject and warning in ``paths``, leaving out the manifests: the
    files named as one and those given in ``manifests``, by ingest's rule
    (:func:`talkthemes.ingest.detect.is_manifest`)."""
    check_fallback(settings.encoding_fallback)
    given = resolved(manifests)
    for item in iter_files([Path(p) for p in paths], settings):
        if isinstance(item, Path):
            if not is_manifest(item, given):
                yield from read_file(item, settings)
        else:
            yield item


def _batches(
    items: Iterable[Transcript | Reject | Warning_],
    size: int,
    rejects: list[Reject],
    warnings: list[Warning_],
) -> Iterator[list[tuple[str, list[tuple[str, str, str]]]]]:
    for chunk in _call_chunks(items, rejects, warnings, size):
        yield [(t.tid, [(u.role, u.text, u.speaker) for u in t.turns]) for t in chunk]


#: Calls read, prepared and assigned at a time by :func:`assign`.
CALLS_PER_CHUNK = 5000


def _call_chunks(
    items: Iterable[Transcript | Reject | Warning_],
    rejects: list[Reject],
    warnings: list[Warning_],
    size: int | None = None,
) -> Iterator[list[Transcript]]:
    """The transcripts among ``items`` in lists of ``size`` (default
    :data:`CALLS_PER_CHUNK`); rejects and warnings are collected."""
    size = size or CALLS_PER_CHUNK
    chunk: list[Transcript] = []
    for item in items:
        if isinstance(item, Transcript):
            chunk.append(item)
            if len(chunk) >= size:
                yield chunk
                chunk = []
        elif isinstance(item, Reject):
            rejects.append(item)
        else:
            warnings.append(item)
    if chunk:
        yield chunk


def assign_items(
    items: Iterable[Transcript | Reject | Warning_],
    version: Version,
    applier: PrepApplier,
    model: ShareModel,
    *,
    batch_size: int = 250,
    progress: Progress | None = None,
) -> tuple[pd.DataFrame, list[Reject], list[Warning_]]:
    """The assignment table (:func:`assign_frame`) of the transcripts among ``items``.

    Transcripts are prepared and inferred ``batch_size`` at a time, in order; rejects and
    warnings among ``items`` are collected, not raised.

    Returns
    -------
    frame : DataFrame
        One row per transcript (no rows when there was none).
    rejects : list of Reject
    warnings : list of Warning_
    """
    labels = [t.label for t in version.themes]
    suggested = version.suggested_names()
    ids = version.theme_ids
    min_tokens = applier.spec.settings.min_tokens
    rejects: list[Reject] = []
    warnings: list[Warning_] = []
    frames = []
    done = 0
    for batch in _batches(items, batch_size, rejects, warnings):
        applied = applier.apply(batch)
        shares = version.fold(model.shares(applied.counts))  # merged themes as one
        frames.append(assign_frame(applied, shares, ids, labels, suggested, min_tokens=min_tokens))
        done += len(applied.doc_ids)
        report(progress, done, 0, applied.doc_ids[-1] if applied.doc_ids else "")
    if not frames:
        empty = AppliedBatch.concat([], version.topic_terms.shape[1])
        frames.append(assign_frame(empty, np.zeros((0, version.k)), ids, labels, suggested))
    return pd.concat(frames, ignore_index=True), rejects, warnings


def assign(
    ws: Workspace,
    paths: Sequence[Path],
    *,
    out: Path,
    store: bool = False,
    manifests: Sequence[Path] = (),
    version: int | None = None,
    batch_size: int = 250,
    progress: Progress | None = None,
) -> AssignResult:
    """Theme shares of the transcripts in ``paths`` under a version (default: current).

    Parameters
    ----------
    ws : Workspace
    paths : sequence of Path
        Transcript files, tables and folders (any supported format).
    out : Path
        ``.csv`` or ``.parquet`` file to write (see :func:`assign_frame`).
    store : bool
        Also ingest the transcripts into the store (the caller then holds the lock).
    manifests : sequence of Path
        Metadata tables, applied when ``store`` is set. A ``manifest.csv``,
        ``manifest.parquet`` or ``manifest.jsonl`` in ``paths`` (in a folder, at any depth)
        is a manifest too, as for ingest: applied when ``store`` is set, never read as
        transcripts.
    version : int, optional
        Version to assign with.
    batch_size : int
        Transcripts prepared and inferred at a time (one process: on two cores, worker
        processes cost more to start than they save; see ``bench/assign.py``).
    progress : Progress, optional
        ``progress(done, 0, current)`` (the total is not known ahead).

    Returns
    -------
    AssignResult

    Raises
    ------
    InputError
        When no transcript was found in ``paths`` and nothing was rejected, or ``out`` is
        not a ``.csv`` or ``.parquet`` name.
    """
    if out.suffix.lower() not in (".csv", ".parquet"):
        raise InputError(f"--out {out}: expected a .csv or .parquet file name")
    t0 = time.perf_counter()
    v = load_version(ws, version)
    settings = ws.settings().ingest
    stored = None
    if store:  # ingest applies the manifests in the folders itself
        stored = ingest(ws, list(paths), manifests=list(manifests)).to_json()
    rejects: list[Reject] = []
    warnings: list[Warning_] = []
    loaded: dict[Path, tuple[Version, PrepApplier, ShareModel]] = {}

    def assign_with(lane: Workspace, group: list[Transcript]) -> pd.DataFrame:
        if lane.root not in loaded:  # once per language, not once per chunk
            lane_v = v if lane is ws else load_version(lane, None)
            loaded[lane.root] = (
                lane_v,
                PrepApplier(load_prep_spec(lane, lane_v)),
                ShareModel.from_version(lane_v),
            )
        lane_v, applier, model = loaded[lane.root]
        frame, _, _ = assign_items(
            group, lane_v, applier, model, batch_size=batch_size, progress=progress
        )
        return frame

    # In chunks of calls, so memory does not grow with the number of files: each call by
    # its language's version, the chunks' tables joined as one table of all of them.
    prepare = ws.settings().prepare
    frames, langs = [], []
    for chunk in _call_chunks(read_transcripts(paths, settings, manifests=manifests),
                              rejects, warnings):  # fmt: skip
        codes = call_languages(chunk, prepare)
        frames.append(route_frames(ws, chunk, assign_with, codes))
        langs.append(codes)
    frame = join_routed(frames, langs, prepare.lang) if frames else pd.DataFrame()
    if frame.empty and not rejects:
        raise InputError(
            "no transcripts found in "
            + ", ".join(str(p) for p in paths)
            + " (read: .txt, .vtt, .csv, .jsonl, .parquet)"
        )
    write_table(frame, out)
    seconds = time.perf_counter() - t0
    assigned = int(frame["lead_theme_id"].notna().sum())
    log.info("assigned %d transcripts in %.2fs", len(frame), seconds)
    return AssignResult(
        out=out,
        version=v.n,
        rows=len(frame),
        assigned=assigned,
        unassigned=len(frame) - assigned,
        rejects=rejects,
        warnings=warnings,
        seconds=seconds,
        stored=stored,
        no_known_words=int((frame["known_terms"] == 0).sum()),
    )
