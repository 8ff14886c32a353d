"""The per-transcript phase on worker processes.

With ``[prepare] n_process`` > 1 each batch of transcripts goes to a process pool (started
once per run); results come back in order. Workers start from a clean ``forkserver`` process
(no threads of the caller are copied), which imports the chain once; the processor with its
tables is sent to each worker once (a spaCy pipeline is loaded again in each worker, by
name, rather than sent). Callers from a script need the usual
``if __name__ == "__main__":`` guard.

This pool is the only place the chain starts processes: a spaCy pipeline runs with
``nlp.pipe(n_process=1)`` inside the workers, never with spaCy's own processes. Each worker
watches the process that started the pool and exits within about a second once it is gone,
so a ``prepare`` (or the prepare step of a refresh) killed with SIGKILL leaves no worker
behind holding the terminal or a pipe (``tests/prepare/test_workers.py``).
"""

from __future__ import annotations

import multiprocessing
import os
from collections import deque
from collections.abc import Iterable, Iterator, Sequence
from concurrent.futures import Future, ProcessPoolExecutor
from typing import Any

from talkthemes.ingest.run import watch_parent
from talkthemes.prepare.collect import BatchResult
from talkthemes.prepare.pipeline import SpacyLemmatizer

__all__ = ["Batch", "map_batches", "resolve_processes", "start_workers"]

#: One batch from the store: ``(transcript id, [(role, text, speaker), ...])`` per
#: transcript (``(role, text)`` turns are read too: no speaker labels then).
Batch = Sequence[tuple[str, Sequence[tuple[str, ...]]]]


def resolve_processes(n_process: int) -> int:
    """The number of worker processes for ``[prepare] n_process`` (0 = one per core)."""
    if n_process > 0:
        return n_process
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not Linux
        return max(1, os.cpu_count() or 1)


# -- the per-transcript phase, serial or on a process pool ----------------------------------
_WORKER: Any = None


def _init_worker(processor: Any, parent: int) -> None:
    global _WORKER
    watch_parent(parent)
    _WORKER = processor


def _work(batch: Batch) -> BatchResult:
    assert _WORKER is not None
    return _WORKER.process(batch)


#: What the forkserver imports before forking a worker: the chain, and the compiled scans
#: loaded and their tables built (:mod:`talkthemes.prepare.warm`), so that no worker pays
#: for them.
_PRELOAD = ["talkthemes.prepare.chain", "talkthemes.prepare.warm"]


def _context() -> Any:
    if "forkserver" in multiprocessing.get_all_start_methods():
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(_PRELOAD)
        return ctx
    return multiprocessing.get_context("spawn")  # pragma: no cover - not Linux


def start_workers(n_process: int) -> None:
    """Start the process the workers will fork from, ahead of the pool.

    Its imports (about half a second) then overlap with the caller's own start (loading
    the language's resources). Does nothing for one process or where workers are not
    forked from a server.
    """
    if n_process > 1 and "forkserver" in multiprocessing.get_all_start_methods():
        from multiprocessing import forkserver

        _context()
        forkserver.ensure_running()


def map_batches(processor: Any, batches: Iterable[Batch], n_process: int) -> Iterator[BatchResult]:
    """Run ``processor.process`` over the batches, in order; on ``n_process`` workers when
    more than one."""
    encoder = processor.encoder
    if n_process <= 1 or (isinstance(encoder, SpacyLemmatizer) and not encoder.source):
        for batch in batches:
            yield processor.process(batch)
        return
    pool = ProcessPoolExecutor(
        max_workers=n_process,
        mp_context=_context(),
        initializer=_init_worker,
        initargs=(processor, os.getpid()),
    )
    pending: deque[Future[BatchResult]] = deque()
    try:
        for batch in batches:
            pending.append(pool.submit(_work, list(batch)))
            if len(pending) >= 2 * n_process:
                yield pending.popleft().result()
        while pending:
            yield pending.popleft().result()
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
