"""Ingest a set of files and folders into a workspace's store.

Readers turn inputs into transcripts, rejects and warnings; this module applies manifests
(:mod:`talkthemes.ingest.metadata`), stores the transcripts in batches (one transaction per
batch, so a killed run leaves whole transcripts only) under the identity rule of
:mod:`talkthemes.calls.identity`, and keeps the tally shown to the user.
"""

from __future__ import annotations

import collections
import csv
import io
import itertools
import logging
import multiprocessing
import os
import sys
import threading
import time
from collections import Counter
from collections.abc import Callable, Iterable, Iterator, Sequence
from concurrent.futures import Executor, Future, ProcessPoolExecutor
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any, TypeVar

from talkthemes.calls.identity import KEPT, SKIPPED, ReexportRule
from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.detect import iter_files, read_file, split_manifests
from talkthemes.ingest.manifest import Manifest, read_manifest
from talkthemes.ingest.metadata import MetadataChange, apply_manifest, unknown_ids
from talkthemes.languages.lanes import LaneSync, LanguageState, language_states, sync_lanes
from talkthemes.languages.settle import settle_languages
from talkthemes.progress import Progress
from talkthemes.store import Store, TextMatch
from talkthemes.testhook import pause_at
from talkthemes.text.escape import csv_cell
from talkthemes.workspace import Workspace, atomic_write_text

__all__ = ["IngestReport", "bounded_map", "ingest", "reexport_rule", "write_rejects_csv"]

log = logging.getLogger(__name__)

OUTCOMES = ("added", "unchanged", "duplicate", "rejected")

#: Ids listed per manifest in the report's JSON.
FIRST_IDS = 10


@dataclass
class IngestReport:
    """The tally of one ingest run.

    Attributes
    ----------
    counts : dict
        ``format -> Counter`` of ``added``, ``unchanged`` (already stored, same id and
        text), ``duplicate`` (a likely re-export of a stored call, skipped) and
        ``rejected``.
    rejects : list of Reject
        One entry per rejected input (file, table row, or manifest row), with the reason.
    warnings : list of Warning_
        Inputs that were used but deserve attention (decoding fallback, skipped cues, same
        text as another call, manifest ids not stored, metadata updated...).
    duplicates : list of (str, str, str)
        Likely re-exports skipped: ``(id, source, id of the stored original)``.
    same_text : list of TextMatch
        Every call whose text equals a stored call's, and how it was judged.
    manifest_rows : int
        Rows read from manifests.
    manifests : list of dict
        Per manifest: ``source``, ``rows``, ``unknown_ids`` (ids with no stored call).
    metadata_changes : list of MetadataChange
        Stored metadata values a manifest changed (``applied``) or wanted to change.
    languages : list of LanguageState
        Every language of the stored calls after the run, and where each is themed.
    lanes : list of LaneSync
        The language lanes brought up to date (calls copied in, removed).
    """

    run_id: int
    counts: dict[str, Counter[str]] = field(default_factory=dict)
    rejects: list[Reject] = field(default_factory=list)
    warnings: list[Warning_] = field(default_factory=list)
    duplicates: list[tuple[str, str, str]] = field(default_factory=list)
    same_text: list[TextMatch] = field(default_factory=list)
    manifest_rows: int = 0
    manifests: list[dict[str, Any]] = field(default_factory=list)
    metadata_changes: list[MetadataChange] = field(default_factory=list)
    files: int = 0
    languages: list[LanguageState] = field(default_factory=list)
    lanes: list[LaneSync] = field(default_factory=list)

    def tally(self, fmt: str, outcome: str, n: int = 1) -> None:
        self.counts.setdefault(fmt, Counter())[outcome] += n

    def total(self, outcome: str) -> int:
        return sum(c[outcome] for c in self.counts.values())

    @property
    def exit_code(self) -> int:
        """0 when nothing was rejected, 3 when some inputs were (the rest is stored)."""
        return 3 if self.rejects else 0

    def to_json(self) -> dict:
        return {
            "run_id": self.run_id,
            "files": self.files,
            "totals": {o: self.total(o) for o in OUTCOMES},
            "by_format": {
                fmt: {o: int(c[o]) for o in OUTCOMES} for fmt, c in sorted(self.counts.items())
            },
            "manifest_rows": self.manifest_rows,
            "manifests": [
                {
                    "source": m["source"],
                    "rows": m["rows"],
                    "unknown_ids": len(m["unknown_ids"]),
                    "first_unknown_ids": m["unknown_ids"][:FIRST_IDS],
                }
                for m in self.manifests
            ],
            "metadata_changes": [
                {
                    "id": c.tid,
                    "field": c.field,
                    "old": c.old,
                    "new": c.new,
                    "source": c.source,
                    "row": c.row,
                    "applied": c.applied,
                }
                for c in self.metadata_changes
            ],
            "rejects": [
                {"source": r.source, "row": r.row, "format": r.format, "reason": r.reason}
                for r in self.rejects
            ],
            "warnings": [
                {"source": w.source, "row": w.row, "message": w.message} for w in self.warnings
            ],
            "duplicates": [
                {"id": tid, "source": src, "duplicate_of": orig}
                for tid, src, orig in self.duplicates
            ],
            "same_text": [
                {
                    "id": m.tid,
                    "source": m.source,
                    "same_text_as": m.original,
                    "kind": m.kind,
                    "reason": m.reason,
                }
                for m in self.same_text
            ],
            "languages": [s.to_json() for s in self.languages],
            "lanes": [lane.to_json() for lane in self.lanes],
        }


def reexport_rule(settings: IngestSettings) -> ReexportRule:
    """The likely re-export rule the ``[ingest]`` settings describe."""
    return ReexportRule(
        min_words=settings.reexport_min_words,
        action=settings.reexport_action,
        fields=tuple(settings.reexport_fields),
    )


def _same_text_warning(m: TextMatch) -> Warning_:
    if m.kind == SKIPPED:
        what = (
            "likely re-export (long text, no conflicting metadata); not stored — setting "
            "[ingest] reexport_action = 'keep' stores it"
        )
    elif m.kind == KEPT:
        what = "likely re-export (long text, no conflicting metadata); kept as set"
    else:
        what = f"{m.reason}; stored as a different call"
    return Warning_(m.source, f"id {m.tid!r}: same text as {m.original!r}: {what}")


class _Batcher:
    def __init__(
        self, store: Store, report: IngestReport, batch_size: int, rule: ReexportRule
    ) -> None:
        self.store = store
        self.report = report
        self.batch_size = batch_size
        self.rule = rule
        self.pending: list[Transcript] = []

    def add(self, t: Transcript) -> None:
        self.pending.append(t)
        if len(self.pending) >= self.batch_size:
            self.flush()

    def flush(self) -> None:
        if not self.pending:
            return
        out = self.store.add_transcripts(self.pending, self.report.run_id, rule=self.rule)
        self.pending = []
        r = self.report
        for t in out.added:
            r.tally(t.format, "added")
        for t in out.unchanged:
            r.tally(t.format, "unchanged")
        for t, original in out.duplicates:
            r.tally(t.format, "duplicate")
            r.duplicates.append((t.tid, t.source, original))
        for m in out.same_text:
            r.same_text.append(m)
            r.warnings.append(_same_text_warning(m))
        for rej in out.rejects:
            r.tally(rej.format, "rejected")
            r.rejects.append(rej)
        pause_at("ingest-batch", "ingest")  # a test can kill the run after a committed batch


def ingest(
    workspace: Workspace,
    paths: Sequence[Path],
    *,
    manifests: Sequence[Path] = (),
    update_metadata: bool = False,
    progress: Progress | None = None,
    batch_size: int = 500,
    workers: int | None = None,
) -> IngestReport:
    """Read ``paths`` (files and folders, recursively) and store what they hold.

    The caller holds the workspace lock. Good inputs are stored even when others are
    rejected; nothing already stored is changed unless asked (``update_metadata``). A file
    named ``manifest.csv``, ``manifest.parquet`` or ``manifest.jsonl`` among the inputs is
    a manifest (:func:`~talkthemes.ingest.detect.is_manifest`). Large runs parse files
    in worker processes (``forkserver``), so a script calling this needs the usual
    ``if __name__ == "__main__":`` guard.

    Parameters
    ----------
    workspace : Workspace
    paths : sequence of Path
        Transcript files, tables and folders.
    manifests : sequence of Path
        Metadata tables keyed by transcript id or file name.
    update_metadata : bool
        Let manifests overwrite stored metadata values that differ (without it, such a
        change is rejected with its row, field, old and new value).
    progress : Progress, optional
        ``progress(done_files, total_files, current)``.
    batch_size : int
        Transcripts stored per transaction.
    workers : int, optional
        Processes reading and parsing files while this one stores them; default one per
        core for runs of at least :data:`PARALLEL_MIN_FILES` files, else none.

    Returns
    -------
    IngestReport
    """
    settings = workspace.settings().ingest
    store = workspace.store()
    try:
        run_id = store.start_ingest_run([str(p) for p in [*paths, *manifests]])
        report = IngestReport(run_id=run_id)

        walked: list[Path] = []
        for item in iter_files([Path(p) for p in paths], settings):
            if isinstance(item, Path):
                walked.append(item)
            elif isinstance(item, Reject):
                report.rejects.append(item)
                report.tally(item.format, "rejected")
            else:
                report.warnings.append(item)
        # a manifest given by name is never read as transcripts either, nor applied twice
        files, found = split_manifests(walked, given=manifests)
        read = [
            _apply_manifest(store, report, Path(m), settings, update_metadata)
            for m in [*manifests, *found]
        ]
        report.files = len(files)

        batcher = _Batcher(store, report, batch_size, reexport_rule(settings))
        done = 0
        for chunk, items in _read_files(files, settings, workers):
            for item in items:
                if isinstance(item, Transcript):
                    batcher.add(item)
                elif isinstance(item, Reject):
                    report.rejects.append(item)
                    report.tally(item.format, "rejected")
                else:
                    report.warnings.append(item)
            done += len(chunk)
            if progress is not None:
                progress(done, len(files), str(chunk[-1]))
        batcher.flush()
        for man, summary in read:
            missing, warning = unknown_ids(store, man)
            summary["unknown_ids"] = missing
            if warning is not None:
                report.warnings.append(warning)
        if report.rejects:
            store.add_rejects(run_id, report.rejects)
        settle_and_sync(workspace, store, report)
        store.finish_ingest_run(
            run_id,
            added=report.total("added"),
            unchanged=report.total("unchanged"),
            duplicate=report.total("duplicate"),
            rejected=len(report.rejects),
        )
        log.info("ingest run %d: %s", run_id, {o: report.total(o) for o in OUTCOMES})
        return report
    finally:
        store.close()


def settle_and_sync(workspace: Workspace, store: Store, report: IngestReport) -> None:
    """Settle the calls' languages and bring the language lanes up to date, into ``report``
    (docs/languages.md). Detection runs at several thousand calls a second, so it reports
    no progress of its own (the files' progress has ended just before)."""
    settled = settle_languages(workspace, store)
    report.warnings.extend(Warning_("metadata", m) for m in settled.messages())
    report.lanes = sync_lanes(workspace, store)
    report.languages = language_states(workspace, store)


def _apply_manifest(
    store: Store, report: IngestReport, path: Path, settings: IngestSettings, update: bool
) -> tuple[Manifest, dict[str, Any]]:
    """Read one manifest and store its values, adding the outcome to ``report``."""
    man = read_manifest(path, settings)
    report.manifest_rows += len(man.entries)
    applied = apply_manifest(store, man, update=update)
    report.metadata_changes.extend(applied.changes)
    for rej in [*man.rejects, *applied.rejects]:
        report.rejects.append(rej)
        report.tally("manifest", "rejected")
    report.warnings.extend([*man.warnings, *applied.warnings])
    summary: dict[str, Any] = {"source": str(path), "rows": len(man.entries), "unknown_ids": []}
    report.manifests.append(summary)
    return man, summary


PARALLEL_MIN_FILES = 400
_CHUNK_FILES = 100
#: Chunks of files read ahead per worker process while earlier ones are stored.
_AHEAD_PER_WORKER = 4
T = TypeVar("T")
R = TypeVar("R")


def _read_chunk(
    paths: list[Path], settings: IngestSettings
) -> list[Transcript | Reject | Warning_]:
    """Read and parse a chunk of files (in a worker process); hashes and the stored form of
    the turns are computed here too, so the storing process only writes."""
    items = [item for path in paths for item in read_file(path, settings)]
    for item in items:
        if isinstance(item, Transcript):
            item.content_hash()
            item.stored_form()
    return items


def watch_parent(pid: int, interval: float = 1.0) -> None:
    """Exit this (worker) process soon after process ``pid`` is gone.

    A killed ingest cannot shut its pool down, and pool workers wait on a queue whose other
    end they hold themselves, so without this they would wait forever.
    """

    def watch() -> None:
        while True:
            time.sleep(interval)
            if not _alive(pid):
                os._exit(1)

    threading.Thread(target=watch, name="talkthemes-parent-watch", daemon=True).start()


def _alive(pid: int) -> bool:
    """Whether process ``pid`` runs (a zombie, dead but not yet reaped, does not count)."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # alive, owned by someone else
        return True
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:  # no /proc (macOS): signal 0 is all we can ask
        return True
    return stat[stat.rfind(")") + 2 :][:1] != "Z"


def _read_files(
    files: list[Path], settings: IngestSettings, workers: int | None
) -> Iterator[tuple[list[Path], list[Transcript | Reject | Warning_]]]:
    """Yield ``(chunk of paths, items read from them)`` in file order.

    Parsing is CPU-bound pure Python, so large runs spread it over worker processes while
    the calling process keeps the store (SQLite has one writer). Results come back in order.
    """
    chunks = [files[i : i + _CHUNK_FILES] for i in range(0, len(files), _CHUNK_FILES)]
    n = (os.cpu_count() or 1) if workers is None else workers
    if n <= 1 or len(files) < PARALLEL_MIN_FILES:
        for chunk in chunks:
            yield chunk, _read_chunk(chunk, settings)
        return
    ctx = multiprocessing.get_context("spawn" if sys.platform == "darwin" else "forkserver")
    with ProcessPoolExecutor(
        max_workers=n, mp_context=ctx, initializer=watch_parent, initargs=(os.getpid(),)
    ) as pool:
        # A few chunks in flight per worker, not all of them: parsing outruns storing, and
        # results waiting to be stored would otherwise grow with the number of files.
        yield from bounded_map(
            pool, partial(_read_chunk, settings=settings), chunks, _AHEAD_PER_WORKER * n
        )


def bounded_map(
    pool: Executor, fn: Callable[[T], R], items: Iterable[T], ahead: int
) -> Iterator[tuple[T, R]]:
    """``(item, fn(item))`` in the order of ``items``, run on ``pool`` with at most
    ``ahead`` items submitted and not yet taken by the caller (so memory stays bounded when
    the caller is slower than the pool, unlike :meth:`Executor.map`)."""
    pending: collections.deque[tuple[T, Future[R]]] = collections.deque()
    todo = iter(items)
    for item in itertools.islice(todo, max(1, ahead)):
        pending.append((item, pool.submit(fn, item)))
    while pending:
        item, future = pending.popleft()
        result = future.result()
        for nxt in itertools.islice(todo, 1):
            pending.append((nxt, pool.submit(fn, nxt)))
        yield item, result


def write_rejects_csv(path: Path, rejects: Sequence[Reject]) -> None:
    """Write one row per rejected input: source, row, format, reason (RFC 4180 CSV).

    File names and reasons come from the inputs, so text cells that a spreadsheet would run
    as a formula are defused (:func:`talkthemes.text.csv_cell`, OWASP CSV injection).
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(["source", "row", "format", "reason"])
    for r in rejects:
        w.writerow(
            [csv_cell(r.source), "" if r.row is None else r.row, r.format, csv_cell(r.reason)]
        )
    atomic_write_text(path, buf.getvalue())
