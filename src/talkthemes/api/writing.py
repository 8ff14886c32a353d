"""The methods of :class:`talkthemes.Workspace` that change the workspace.

Each takes the writer lock itself (``wait=`` and ``on_wait=`` say what to do when another
writer holds it) unless this object already holds it in this thread
(:meth:`~talkthemes.api._base.WorkspaceBase.hold`), reports through ``progress=`` (the one
:class:`~talkthemes.progress.Progress` protocol), prints nothing, and returns a result
dataclass. Keyword options beyond the named ones are passed on to the domain function named
in each docstring.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from contextlib import nullcontext
from pathlib import Path
from typing import TYPE_CHECKING, Any

from talkthemes.errors import ConfigError
from talkthemes.progress import Progress

from . import _choices
from ._base import OnWait, PathsLike, WorkspaceBase, as_paths
from ._deferred import deferred
from .results import Label

if TYPE_CHECKING:  # heavy (numpy, pandas, gensim, Dask): imported on first use, _deferred.py
    from talkthemes import assign as assign_mod
    from talkthemes.api import drift_picture
    from talkthemes.ingest import run as ingest_run
    from talkthemes.prepare import run as prepare_run
    from talkthemes.refresh import run as refresh_run
    from talkthemes.sweep import run as sweep_run
    from talkthemes.versions import load as versions_load
    from talkthemes.versions import publish as versions_publish
else:
    assign_mod = deferred("talkthemes.assign")
    ingest_run = deferred("talkthemes.ingest.run")
    prepare_run = deferred("talkthemes.prepare.run")
    drift_picture = deferred("talkthemes.api.drift_picture")
    refresh_run = deferred("talkthemes.refresh.run")
    sweep_run = deferred("talkthemes.sweep.run")
    versions_load = deferred("talkthemes.versions.load")
    versions_publish = deferred("talkthemes.versions.publish")

__all__ = ["WritingMixin"]


def _grid(k: str | Sequence[int] | None) -> str | None:
    """A topic-count grid as the sweep reads it: ``"4:12:2"``, ``"5,10"``, or ints."""
    if k is None or isinstance(k, str):
        return k
    return ",".join(str(int(x)) for x in k)


def _families(families: str | Sequence[str] | None) -> list[str] | None:
    """``"lda,nmf"`` or ``["lda", "nmf"]`` as a list (None keeps the settings')."""
    if families is None:
        return None
    if isinstance(families, str):
        families = families.split(",")
    return [f.strip() for f in families if f.strip()] or None


class WritingMixin(WorkspaceBase):
    """Ingest, prepare, sweep, publish, refresh, label (see the module notes)."""

    def ingest(
        self,
        paths: PathsLike,
        *,
        manifests: PathsLike = (),
        update_metadata: bool = False,
        rejects_csv: str | os.PathLike[str] | None = None,
        wait: bool = False,
        on_wait: OnWait | None = None,
        progress: Progress | None = None,
        **options: Any,
    ) -> ingest_run.IngestReport:
        """Read transcripts and metadata manifests into the store.

        Files and folders (recursively): ``.txt``, ``.vtt``, ``.csv``, ``.jsonl``,
        ``.parquet``. Good inputs are stored even when others are rejected; nothing stored
        is changed unless ``update_metadata`` asks. Large runs parse files in worker
        processes, so a script calling this needs the ``if __name__ == "__main__":`` guard.

        Parameters
        ----------
        paths : path or sequence of paths
        manifests : path or sequence of paths
            Metadata tables keyed by transcript id or file name.
        update_metadata : bool
            Let manifests overwrite stored metadata values (else such changes are rejected).
        rejects_csv : path, optional
            Also write one CSV row per rejected input (source, row, format, reason).
        wait, on_wait
            What to do when another writer holds the workspace (see :meth:`hold`).
        progress : Progress, optional
            ``progress(done_files, total_files, current_file)``.
        **options
            Passed to :func:`talkthemes.ingest.run.ingest` (``batch_size``, ``workers``).

        Returns
        -------
        IngestReport
            Counts per format and outcome, rejects with their reasons, warnings;
            ``exit_code`` is 3 when something was rejected.
        """
        with self.hold("ingest", wait=wait, on_wait=on_wait):
            report = ingest_run.ingest(
                self._dir,
                as_paths(paths),
                manifests=as_paths(manifests),
                update_metadata=update_metadata,
                progress=progress,
                **options,
            )
        if rejects_csv is not None:
            ingest_run.write_rejects_csv(Path(rejects_csv), report.rejects)
        return report

    def prepare(
        self,
        *,
        force: bool = False,
        wait: bool = False,
        on_wait: OnWait | None = None,
        progress: Progress | None = None,
        **options: Any,
    ) -> prepare_run.PrepareResult:
        """Run the preprocessing chain (``[prepare]`` settings) into a cached prep.

        Parameters
        ----------
        force : bool
            Run the chain even when nothing changed since the last prep.
        wait, on_wait
            See :meth:`hold`.
        progress : Progress, optional
            ``progress(done, total, stage)``.
        **options
            Passed to :func:`talkthemes.prepare.run.run_prepare`.

        Returns
        -------
        PrepareResult
            The prep's hash, folder, counts, whether it was cached, and what each step did.

        Raises
        ------
        NotReadyError
            When nothing is ingested yet.
        """
        with self.hold("prepare", wait=wait, on_wait=on_wait):
            return prepare_run.run_prepare(self._dir, force=force, progress=progress, **options)

    def sweep(
        self,
        *,
        k: str | Sequence[int] | None = None,
        families: str | Sequence[str] | None = None,
        seeds: int | None = None,
        scheduler: str | None = None,
        workers: int | None = None,
        force: bool = False,
        wait: bool = False,
        on_wait: OnWait | None = None,
        progress: Progress | None = None,
        sample: int | None = None,
        **options: Any,
    ) -> sweep_run.SweepResult:
        """Fit models over a grid of topic counts, families and seeds; score; recommend K.

        Arguments left None come from ``[sweep]`` in ``talkthemes.toml``. A grid already
        finished on the current prep is reused; an interrupted one is resumed. Runs on
        Dask, so a script calling this needs the ``if __name__ == "__main__":`` guard.

        Parameters
        ----------
        k : str or sequence of int, optional
            Topic counts: ``"4:30:2"`` (start:stop:step, stop included), ``"5,10,15"``, or
            ``[5, 10, 15]``.
        families : str or sequence of str, optional
            ``"lda"``, ``"nmf"``, ``"lda,nmf"`` or ``["lda", "nmf"]``.
        seeds : int, optional
            Seeds per (family, K): stability needs at least 2.
        scheduler : str, optional
            A Dask scheduler address (``tcp://host:8786``); default a local cluster.
        workers : int, optional
            Local cluster size (0: one per core).
        force : bool
            Run again even when the same grid finished on this prep.
        wait, on_wait
            See :meth:`hold`.
        progress : Progress, optional
            ``progress(done_cells, total_cells, cell)``.
        sample : int, optional
            Sweep a stratified random sample of this many calls (by month and segment
            fields; docs/methods.md, "Sweeping a sample"); default ``[sweep] sample``, and
            ``[sweep] auto_sample`` calls when the prep has more than ``auto_sample_above``.
            ``publish`` then fits the chosen cell on every call.
        **options
            Passed to :func:`talkthemes.sweep.run.run_sweep`.

        Returns
        -------
        SweepResult
            ``cells`` (a DataFrame: one row per fitted cell with its metrics) and
            ``recommendation`` (family → :class:`~talkthemes.sweep.recommend.Recommendation`);
            on a sample, ``sample`` holds it and the recommended K on a second, disjoint
            sample.
        """
        with self.hold("sweep", wait=wait, on_wait=on_wait):
            return sweep_run.run_sweep(
                self._dir,
                k=_grid(k),
                families=_families(families),
                seeds=seeds,
                scheduler=scheduler,
                workers=workers,
                force=force,
                progress=progress,
                sample=sample,
                **options,
            )

    def publish(
        self,
        *,
        k: int | None = None,
        family: str | None = None,
        cell: str | None = None,
        recommended: bool = False,
        force: bool = False,
        wait: bool = False,
        on_wait: OnWait | None = None,
        progress: Progress | None = None,
        **options: Any,
    ) -> versions_publish.PublishResult:
        """Publish a model as the next version: refit on every eligible transcript.

        Give ``k`` and ``family`` (the sweep's cell of that K with the most typical seed,
        or that cell fitted directly when no sweep has it), or ``cell`` (a sweep cell id),
        or ``recommended=True`` (the latest sweep's recommendation; of ``family`` if
        given, else of the better family). Publishing the current version's model again
        changes nothing unless ``force``.

        Parameters
        ----------
        k : int, optional
        family : {'lda', 'nmf'}, optional
        cell : str, optional
        recommended : bool
        force : bool
        wait, on_wait
            See :meth:`hold`.
        progress : Progress, optional
            ``progress(done, 5, step)``.
        **options
            Passed to :func:`talkthemes.versions.publish.publish`.

        Returns
        -------
        PublishResult
            ``status`` ``published`` or ``already_current``; the version, its themes.

        Raises
        ------
        ConfigError
            Contradicting choices; no recommendation; a cell whose K or family differs.
        NotReadyError
            Nothing prepared, or no sweep holds the cell.
        """
        if recommended and (k is not None or cell):
            raise ConfigError("--recommended chooses K itself: give it without --k and --cell")
        with self.hold("publish", wait=wait, on_wait=on_wait):
            if recommended:
                rec = _choices.latest(self._dir, family)
                family, k = rec.family, rec.k
            if cell is not None and (k is not None or family is not None):
                _choices.check_cell(self._dir, cell, k=k, family=family)
            return versions_publish.publish(
                self._dir,
                k=k,
                family=family,
                cell=cell,
                force=force,
                progress=progress,
                **options,
            )

    def make_current(
        self, version: int, *, wait: bool = False, on_wait: OnWait | None = None
    ) -> versions_load.Version:
        """Make a kept version current again (roll back, or forward).

        Parameters
        ----------
        version : int
        wait, on_wait
            See :meth:`hold`.

        Returns
        -------
        Version
            The version now current.

        Raises
        ------
        ConfigError
            When no such version is kept.
        """
        with self.hold("publish", wait=wait, on_wait=on_wait):
            _choices.kept_version(self._dir, version)
            with self._dir.store() as store:
                store.set_current_version(version)
        return versions_load.load_version(self._dir, version)

    def refresh(
        self,
        *,
        ingest: PathsLike | None = None,
        manifests: PathsLike = (),
        resweep: bool = False,
        alert_on_new: bool = False,
        alert_on_rise: bool = False,
        alerts: Mapping[str, Any] | None = None,
        lanes: bool = True,
        wait: bool = False,
        on_wait: OnWait | None = None,
        progress: Progress | None = None,
        **options: Any,
    ) -> refresh_run.RefreshResult:
        """Ingest new transcripts, retrain, keep theme ids and labels, report drift, publish.

        Parameters
        ----------
        ingest : path or sequence of paths, optional
            Files or folders to ingest first (default: ``[refresh] inbox``). A
            ``manifest.csv``/``.parquet``/``.jsonl`` at the top of a folder is its manifest.
        manifests : path or sequence of paths
            Metadata tables for the ingested transcripts.
        resweep : bool
            Choose K again with the ``[sweep]`` grid.
        alert_on_new : bool
            Make the result's ``exit_code`` 4 when a new theme is alerted: it leads enough
            new transcripts, is not a split of an old theme, its words are new, and it is
            not marked not a theme (docs/methods_alerts.md).
        alert_on_rise : bool
            Make the result's ``exit_code`` 4 when a carried theme's share of the new
            transcripts rose significantly (two-proportion test, Benjamini–Hochberg).
        alerts : mapping, optional
            Alert thresholds for this run only, overriding the ``[refresh] alert_*``
            settings; each named without its ``alert_`` prefix, e.g.
            ``{"new_min_calls": 20, "change_fdr": 0.05}`` (the names are
            ``talkthemes.refresh.alert_step.ALERT_SETTINGS``). Checked like the settings
            file before anything is done.
        lanes : bool
            Then refresh every language lane that has a published version, with the same
            options, into ``languages`` of the result (docs/languages.md).
        wait, on_wait
            See :meth:`hold`.
        progress : Progress, optional
            ``progress(done, total, step)``.
        **options
            Passed to :func:`talkthemes.refresh.run.refresh`.

        Returns
        -------
        RefreshResult
            ``status`` ``published`` or ``nothing_new``; carried, new and retired themes;
            each new theme's verdict and evidence; ``risers`` and ``fallers``.

        Raises
        ------
        NotReadyError
            When no version is published yet.
        ConfigError
            An ``alerts`` name unknown or a value not allowed.
        """
        with self.hold("refresh", wait=wait, on_wait=on_wait):
            result = refresh_run.refresh(
                self._dir,
                ingest_paths=None if ingest is None else as_paths(ingest) or None,
                manifests=as_paths(manifests),
                resweep=resweep,
                alert_on_new=alert_on_new,
                alert_on_rise=alert_on_rise,
                alerts=alerts,
                progress=progress,
                **{"drift_png": drift_picture.drift_png, **options},
            )
            result.language = self.settings().prepare.lang
            if lanes:  # each language lane with a version, on the calls copied in
                if result.ingest is None:  # an ingest brought the lanes up to date itself
                    self.sync_languages()  # type: ignore[attr-defined]
                for code, lane in self.languages_themed()[1:]:  # type: ignore[attr-defined]
                    if lane.current_version() is None:
                        continue  # nothing published in that language yet
                    result.languages[code] = lane.refresh(
                        ingest=[],
                        resweep=resweep,
                        alert_on_new=alert_on_new,
                        alert_on_rise=alert_on_rise,
                        alerts=alerts,
                        wait=wait,
                        on_wait=on_wait,
                        progress=progress,
                        lanes=False,
                        **options,
                    )
            return result

    def label(
        self,
        theme_id: int,
        label: str | None = None,
        *,
        note: str | None = None,
        hidden: bool | None = None,
    ) -> Label:
        """Set a theme's label, note or hidden flag; kept across versions by theme id.

        ``None`` leaves a field as it is. Labelling writes one row in one transaction (with
        its entry in the curation log) and does not take the writer lock (as ``talkthemes
        label`` never did).

        Parameters
        ----------
        theme_id : int
            A theme of the current version (see :meth:`themes`).
        label : str, optional
        note : str, optional
        hidden : bool, optional
            True marks the theme *not a theme* (noise: hidden from trends and alerts by
            default, still counted and listed); False makes it a theme again (see
            :meth:`mark_not_a_theme`).

        Returns
        -------
        Label
            The theme's label, note and hidden flag as stored now.

        Raises
        ------
        ConfigError
            When nothing is given to set.
        NotReadyError
            When nothing is published yet.
        InputError
            When the current version shows no theme ``theme_id`` (the message lists its
            ids, or names the theme a merged one is shown as).
        """
        if label is None and note is None and hidden is None:
            raise ConfigError("give a label, a note or hidden=True/False to set")
        _choices.check_theme(self._dir, theme_id)
        with self._dir.store() as store:
            row = store.set_label(theme_id, label=label, note=note, hidden=hidden)
        return Label(
            theme_id=row.theme_id,
            label=row.label or "",
            note=row.note or "",
            hidden=bool(row.hidden),
        )

    def assign_files(
        self,
        paths: PathsLike,
        *,
        out: str | os.PathLike[str],
        store: bool = False,
        manifests: PathsLike = (),
        version: int | None = None,
        wait: bool = False,
        on_wait: OnWait | None = None,
        progress: Progress | None = None,
        **options: Any,
    ) -> assign_mod.AssignResult:
        """Theme shares of the transcripts in files, written to a CSV or Parquet table.

        For frames and lists of texts in memory, see :meth:`assign`. With ``store`` the
        transcripts are ingested too, under the writer lock.

        Parameters
        ----------
        paths : path or sequence of paths
            Transcript files, tables and folders (any format :meth:`ingest` reads).
        out : path
            The ``.csv`` or ``.parquet`` file to write.
        store : bool
            Also ingest the transcripts (and ``manifests``).
        manifests : path or sequence of paths
        version : int, optional
            Default: the current version.
        wait, on_wait
            See :meth:`hold` (only with ``store``).
        progress : Progress, optional
            ``progress(done, 0, current)``: the total is not known ahead.
        **options
            Passed to :func:`talkthemes.assign.assign`.

        Returns
        -------
        AssignResult
            Rows written, those without a known word, rejects; ``exit_code`` 3 on rejects.
        """
        held = self.hold("assign", wait=wait, on_wait=on_wait) if store else nullcontext()
        with held:
            return assign_mod.assign(
                self._dir,
                as_paths(paths),
                out=Path(out),
                store=store,
                manifests=as_paths(manifests),
                version=version,
                progress=progress,
                **options,
            )
