"""The methods of :class:`talkthemes.Workspace` that read: status, versions, themes, their
evidence sentences, shares, the sweep's recommendation, and theme shares of new text.

None of them takes the writer lock: the store runs in WAL mode and a version becomes current
in one transaction after its files are in place, so a read made while a refresh runs sees
the version that was current when it started, whole. They are safe to call from several
threads at once (a service's workers): each call opens its own store connection, and loaded
versions are shared read-only (see :mod:`talkthemes.api._cache`).
"""

from __future__ import annotations

import dataclasses
import logging
import os
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from talkthemes.calls.model import Reject, Transcript
from talkthemes.errors import InputError, NotReadyError
from talkthemes.progress import Progress
from talkthemes.sweep.state import sweep_overview
from talkthemes.workspace import WorkspaceDir

from . import _choices
from ._base import WorkspaceBase
from ._deferred import deferred
from .inputs import read_inputs
from .results import Export, Status

if TYPE_CHECKING:  # heavy (numpy, pandas, scikit-learn): imported on first use, _deferred.py
    import pandas as pd

    from talkthemes import assign as assign_mod
    from talkthemes import routing as route_mod
    from talkthemes.sweep.recommend import Recommendation
    from talkthemes.versions import evidence_shown
    from talkthemes.versions import export as versions_export
    from talkthemes.versions import unthemed as unthemed_mod
    from talkthemes.versions.evidence import EvidenceSentence
    from talkthemes.versions.load import Version
    from talkthemes.versions.unthemed import UnthemedGroup
else:
    pd = deferred("pandas")
    assign_mod = deferred("talkthemes.assign")
    route_mod = deferred("talkthemes.routing")
    evidence_shown = deferred("talkthemes.versions.evidence_shown")
    versions_export = deferred("talkthemes.versions.export")
    unthemed_mod = deferred("talkthemes.versions.unthemed")

__all__ = ["THEME_COLUMNS", "ReadingMixin"]

log = logging.getLogger(__name__)

#: Columns of :meth:`ReadingMixin.themes` before the coherence measures.
THEME_COLUMNS = (
    "theme_id", "name", "label", "note", "hidden", "status", "coverage", "mean_share",
    "top_terms", "suggested_name", "labelled", "not_a_theme", "merged",
)  # fmt: skip

#: Rejects named in the message of a strict :meth:`ReadingMixin.assign`.
_NAMED = 5


class ReadingMixin(WorkspaceBase):
    """Status, versions, themes, shares, export, recommendation, assign (module notes)."""

    def status(self) -> Status:
        """What the workspace holds (counts by format, role, month, metadata field) and
        where each stage stands.

        Returns
        -------
        Status
        """
        with self._dir.store() as store:
            summary = store.summary()
            stages = store.stages()
        sweeps = sweep_overview(self._dir)
        if stages.swept and sweeps["latest"]:  # 'running' of a killed sweep reads interrupted
            swept = dataclasses.replace(stages.swept, status=sweeps["latest"]["status"])
            stages = dataclasses.replace(stages, swept=swept)
        stage_json = stages.to_json()
        published = stage_json.get("published")
        if published:  # the current version's unthemed group, read from its folder
            folder = self._dir.versions_dir / str(published["version"])
            published["unthemed"] = unthemed_mod.unthemed_group(folder).to_json()
        languages = []
        for state in self.languages():  # type: ignore[attr-defined]
            entry = state.to_json()
            if state.kind == "lane":
                lane = WorkspaceDir(state.folder)
                entry["version"] = None
                if lane.db_path.exists():
                    with lane.store() as lane_store:
                        current = lane_store.current_version()
                    entry["version"] = current.n if current else None
            languages.append(entry)
        return Status(
            workspace=str(self._dir.root),
            **summary.to_json(),
            stages=stage_json,
            unfinished_sweeps=sweeps["unfinished"],
            languages=languages,
        )

    def _assign_routed(
        self, items: Any, n: int, *, progress: Progress | None = None
    ) -> tuple[pd.DataFrame, list[Any], list[Any]]:
        """The assignment table of the transcripts among ``items``, each call by its
        language's version (``n`` for the main language; a lane's current one), with the
        rejects and warnings among ``items`` (docs/languages.md)."""
        rejects: list[Any] = []
        warnings: list[Any] = []
        calls: list[Any] = []
        for item in items:
            if isinstance(item, Transcript):
                calls.append(item)
            else:
                (rejects if isinstance(item, Reject) else warnings).append(item)

        def assign_with(lane: WorkspaceDir, group: list[Any]) -> pd.DataFrame:
            # the main version asked for, or a lane's current one; each cached per folder
            main = lane is self._dir
            cache = self._versions if main else self._lane_cache(lane)
            number = n
            if not main:
                with lane.store() as store:
                    current = store.current_version()
                if current is None:
                    raise NotReadyError(f"{lane.root}: no version published")
                number = current.n
            assigner = cache.assigner(lane, number)
            with assigner.lock:
                frame, _, _ = assign_mod.assign_items(
                    group, assigner.version, assigner.applier, assigner.model, progress=progress
                )
            return frame

        return route_mod.route_frames(self._dir, calls, assign_with), rejects, warnings

    def _lane_cache(self, lane: WorkspaceDir) -> Any:
        """The version cache of a language lane (one per lane folder, kept on this object)."""
        caches = self.__dict__.setdefault("_lane_caches", {})
        if lane.root not in caches:
            caches[lane.root] = type(self._versions)()
        return caches[lane.root]

    def current_version(self) -> int | None:
        """The current version's number; None before the first publish."""
        return _choices.current_number(self._dir)

    def version(self, n: int | None = None) -> Version:
        """A published version, loaded read-only (default: the current one).

        Parameters
        ----------
        n : int, optional

        Returns
        -------
        Version
            Its arrays (``topic_terms``, ``doc_topics``), vocabulary, transcript ids, and
            themes with their labels as stored now.

        Raises
        ------
        NotReadyError
            When nothing is published yet, or version ``n`` is not kept.
        """
        if n is None:
            n = self.current_version()
            if n is None:
                raise NotReadyError("no version published yet: run 'talkthemes publish' first")
        return self._versions.version(self._dir, int(n))

    def themes(
        self, version: int | None = None, *, lam: float | None = None, n_terms: int = 10
    ) -> pd.DataFrame:
        """A version's themes, one row each, in the version's order.

        Parameters
        ----------
        version : int, optional
            Default: the current version.
        lam : float, optional
            Relevance weight ranking the top terms: 1 by probability within the theme, 0
            by lift (default ``[view] relevance_lambda``; Sievert & Shirley 2014).
        n_terms : int
            Top terms per theme.

        Returns
        -------
        DataFrame
            ``theme_id``, ``name`` (the label, or the suggested name until labelled),
            ``label``, ``note``, ``hidden``, ``status`` (``new`` or ``carried``),
            ``coverage`` (share of transcripts the theme leads), ``mean_share``,
            ``top_terms`` (a list), ``suggested_name``, ``labelled``, ``not_a_theme`` (the
            hidden flag), ``merged`` (ids of the themes merged into it), then one column
            per coherence measure of the version (``c_npmi``, ``c_v``, ...).
        """
        v = self.version(version)
        lam = self.settings().view.relevance_lambda if lam is None else lam
        rows = []
        for theme in v.summary(lam=lam, n_terms=n_terms):
            row = {key: value for key, value in theme.items() if key != "coherence"}
            rows.append({**row, **theme.get("coherence", {})})
        frame = pd.DataFrame(rows)
        return frame if rows else pd.DataFrame(columns=list(THEME_COLUMNS))

    def evidence_sentences(
        self, version: int | None = None, *, masked: bool | None = None
    ) -> dict[int, list[EvidenceSentence]]:
        """Each theme's evidence sentences, as stored with the version and shown.

        The few sentences of the calls a theme leads that carry its words most (chosen
        when the version was published; ``docs/methods.md``, "Evidence sentences"), in
        the order chosen. Personal data is masked as on screens, with each call's names.

        Parameters
        ----------
        version : int, optional
            Default: the current version.
        masked : bool, optional
            Default: masked unless ``[view] original_text`` allows the original.

        Returns
        -------
        dict of int to list of EvidenceSentence
            By theme id, in the version's order (merged themes pooled under the id they
            keep); empty lists for a version published before sentences were kept.
        """
        v = self.version(version)
        masker = evidence_shown.EvidenceMasker(self._dir)
        return {
            t.theme_id: evidence_shown.shown_evidence(
                self._dir, v.evidence(i), masked=masked, masker=masker
            )
            for i, t in enumerate(v.themes)
        }

    def unthemed(self, version: int | None = None) -> UnthemedGroup:
        """A version's unthemed group: its transcripts too short to carry a theme.

        The transcripts its preparation left out (fewer than ``[prepare] min_tokens``
        content terms, only greetings, no words...), counted with their reasons; every
        screen and export shows them as one group (``docs/methods.md``, "The unthemed
        group").

        Parameters
        ----------
        version : int, optional
            Default: the current version.

        Returns
        -------
        UnthemedGroup
            ``count``, ``share`` (of the version's transcripts, themed and unthemed),
            ``by_reason`` and each transcript's ``reasons``.
        """
        v = self.version(version)
        return unthemed_mod.unthemed_group(v.folder, v.doc_ids)

    def shares(self, version: int | None = None) -> pd.DataFrame:
        """Every transcript's theme shares under a version (default: the current one).

        Returns
        -------
        DataFrame
            One row per transcript of the version: ``transcript_id``, ``lead_theme_id``,
            ``lead_theme_label``, ``lead_share``, ``lead_theme_suggested_name``, one column
            ``share_<theme id>`` per theme (a row sums to 1; merged themes are one column)
            and ``reason``. The themed transcripts come first; then the unthemed group
            (:meth:`unthemed`), whose label and suggested name say ``unthemed``, with no
            lead theme id, no shares and the preparation's reason.
        """
        return versions_export.export_shares(self.version(version))

    def export(
        self,
        path: str | os.PathLike[str],
        *,
        version: int | None = None,
        metadata: bool | Sequence[str] = False,
        masked: bool | None = None,
    ) -> Export:
        """Write :meth:`shares` to a ``.csv`` (spreadsheet-safe) or ``.parquet`` file, and
        the table naming its share columns beside it.

        Both files are written to a temporary name and moved into place. The themes table
        is ``<stem>.themes.csv`` (or ``.parquet``): per share column, in the same order, the
        theme id, its name (label, or suggested name until labelled), ``named_by``,
        ``not_a_theme``, coverage, average share and top terms (docs/viewer.md,
        "Exported shares").

        Parameters
        ----------
        path : path
            A ``.csv`` or ``.parquet`` file name.
        version : int, optional
            Default: the current version.
        metadata : bool or sequence of str
            ``True``: every metadata field the manifests gave, as the last columns;
            a sequence: those fields, in that order (a field no transcript has is refused).
        masked : bool, optional
            Mask personal data in metadata values as screens do. Default: masked unless
            ``[view] original_text`` allows the original.

        Returns
        -------
        Export

        Raises
        ------
        ConfigError
            When the name ends in neither ``.csv`` nor ``.parquet``.
        InputError
            When a named metadata field is not held by any transcript.
        """
        out = Path(path)
        v = self.version(version)
        frame = versions_export.export_shares(v)
        if metadata is not False:
            fields = None if metadata is True else [str(f) for f in metadata]
            with self._dir.store() as store:
                values = store.metadata_values(list(frame["transcript_id"]))
            if masked is None:
                masked = not self.settings().view.original_text
            frame = versions_export.with_metadata(frame, values, fields, masked=masked)
        themes = versions_export.export_themes(v)
        companion = versions_export.companion_path(out)
        versions_export.write_table(frame, out)
        versions_export.write_table(themes, companion)
        return Export(
            out=out,
            rows=len(frame),
            columns=[str(c) for c in frame.columns],
            themes_file=companion,
        )

    def recommendation(self, family: str | None = None) -> Recommendation:
        """The latest finished sweep's recommended K, with its rule, reasons, runners-up.

        Parameters
        ----------
        family : {'lda', 'nmf'}, optional
            Default: the family ``publish --recommended`` takes (usable — not weak, not a
            catch-all K — then the higher seed stability at its K, then the higher
            coherence).

        Raises
        ------
        ConfigError
            When no sweep has finished with a recommendation (for ``family``).
        """
        return _choices.latest(self._dir, family)

    def assign(
        self,
        data: pd.DataFrame | Sequence[str] | os.PathLike[str] | Sequence[os.PathLike[str]],
        *,
        version: int | None = None,
        strict: bool = True,
        progress: Progress | None = None,
    ) -> pd.DataFrame:
        """Theme shares of new transcripts under a version, without storing them.

        The texts are prepared exactly as the version's training data was and their shares
        inferred with its model (LDA: deterministic for a given input order; NMF: the
        topics held fixed). Thread-safe; a service may call it from several threads. Each
        call goes to its language's version: a call in a language with a lane and a
        published version is assigned with that lane's (docs/languages.md).

        Parameters
        ----------
        data : list of str, DataFrame, Path or list of Path
            Texts (ids ``"0"``, ``"1"``, ... by position), a frame in either shape the table
            ingest reads (one row per transcript, or one per turn), or files and folders;
            see :mod:`talkthemes.api.inputs`.
        version : int, optional
            Default: the current version.
        strict : bool
            Raise when an input is rejected (an empty text, a row without text, an
            unreadable file). With ``strict=False`` rejected inputs are left out and logged
            as warnings (logger ``talkthemes.api.reading``).
        progress : Progress, optional
            ``progress(done, 0, current_id)``.

        Returns
        -------
        DataFrame
            One row per transcript, in input order: ``transcript_id``, ``lead_theme_id``
            (empty when no word of the transcript is in the version's vocabulary),
            ``lead_theme_label``, ``lead_share``, ``lead_theme_suggested_name``, one
            ``share_<theme id>`` per theme, ``known_terms`` and ``reason`` (why there is
            no lead theme). When calls of several languages were routed: a ``language``
            column after ``transcript_id``, and ``share_<code>_<theme id>`` for a lane's
            themes.

        Raises
        ------
        InputError
            ``data`` of no accepted shape; with ``strict``, an input that was rejected.
        NotReadyError
            When nothing is published yet.
        """
        n = version if version is not None else self.current_version()
        if n is None:
            raise NotReadyError("no version published yet: run 'talkthemes publish' first")
        frame, rejects, warnings = self._assign_routed(
            read_inputs(data, self.settings().ingest), int(n), progress=progress
        )
        for w in warnings:
            log.warning("%s: %s", w.source, w.message)
        if rejects and strict:
            named = "; ".join(f"{r.source}: {r.reason}" for r in rejects[:_NAMED])
            more = f" (and {len(rejects) - _NAMED} more)" if len(rejects) > _NAMED else ""
            raise InputError(
                f"{len(rejects)} input(s) rejected: {named}{more}; "
                "strict=False assigns the rest and leaves these out"
            )
        for r in rejects:
            log.warning("rejected: %s: %s", r.source, r.reason)
        return frame
