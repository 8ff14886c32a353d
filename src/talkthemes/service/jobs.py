"""Background jobs: a refresh runs in its own process while the service keeps answering.

``POST /v1/refresh`` starts :func:`_refresh_worker` in a fresh process (``spawn``): it
takes the workspace lock, runs :meth:`talkthemes.Workspace.refresh` and reports its
progress and result through a pipe, which a thread of the service reads into the
:class:`Job`. Reads never wait for it: they answer from the current version until the
refresh makes the new one current, in one transaction (its own process also keeps the
refresh's CPU work from slowing the service's threads). Only one refresh runs at a time.

A job is ``running`` once its process holds the workspace lock, ``done`` with the
refresh's result, or ``failed`` with an error (``workspace_busy`` when another writer
held the lock; ``interrupted`` when the process ended without a word — killed, or the
service shut down). A refresh that did not finish leaves the previous version current.
Jobs are kept in memory (the last ``[service] jobs_kept``): a restarted service knows
none; the workspace's refresh log (``GET /v1/versions``, ``talkthemes status``) keeps
what happened.
"""

from __future__ import annotations

import contextlib
import dataclasses
import datetime as dt
import logging
import multiprocessing
import secrets
import threading
from collections import OrderedDict
from dataclasses import dataclass, field
from multiprocessing.connection import Connection
from pathlib import Path
from typing import Any

from talkthemes.errors import TalkthemesError, WorkspaceBusyError

__all__ = ["Job", "Jobs"]

log = logging.getLogger(__name__)

#: Seconds a shutting-down service gives a running refresh before stopping it.
STOP_SECONDS = 5.0

_CODES = {
    "WorkspaceBusyError": "workspace_busy",
    "NotReadyError": "not_ready",
    "InputError": "invalid_input",
    "ConfigError": "invalid_input",
    "StoreError": "store_unavailable",
}


def _now() -> str:
    return dt.datetime.now().astimezone().isoformat(timespec="seconds")


@dataclass
class Job:
    """A background job and where it stands.

    Attributes
    ----------
    id : str
    kind : str
        ``refresh``.
    state : str
        ``starting``, ``running``, ``done`` or ``failed``.
    options : dict
        What it was asked to do.
    created_at, started_at, finished_at : str or None
    progress : dict
        ``done``, ``total`` and ``step`` of the last report.
    result : dict or None
        The refresh's JSON result when ``done``.
    error : dict or None
        ``code`` and ``message`` when ``failed``.
    """

    id: str
    kind: str
    options: dict[str, Any]
    state: str = "starting"
    created_at: str = field(default_factory=_now)
    started_at: str | None = None
    finished_at: str | None = None
    progress: dict[str, Any] = field(
        default_factory=lambda: {"done": 0, "total": 0, "step": "starting"}
    )
    result: dict[str, Any] | None = None
    error: dict[str, str] | None = None

    @property
    def finished(self) -> bool:
        """True once ``done`` or ``failed``."""
        return self.state in ("done", "failed")

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready copy of the job."""
        return {
            "job_id": self.id,
            "kind": self.kind,
            "state": self.state,
            "options": dict(self.options),
            "created_at": self.created_at,
            "started_at": self.started_at,
            "finished_at": self.finished_at,
            "progress": dict(self.progress),
            "result": self.result,
            "error": None if self.error is None else dict(self.error),
        }


def _refresh_worker(root: str, options: dict[str, Any], conn: Connection) -> None:
    """Run one refresh (in the job's own process) and report through ``conn``."""
    # Imported here: this function is the whole of the job's process.
    import talkthemes as tt

    def send(*message: Any) -> None:
        # the service may have gone away: the refresh goes on quietly
        with contextlib.suppress(BrokenPipeError, OSError):
            conn.send(message)

    try:
        ws = tt.Workspace.open(root)
        with ws.hold("refresh (service job)"):
            send("running", _now())
            result = ws.refresh(
                progress=lambda done, total, what: send("progress", done, total, str(what)),
                **options,
            )
        send("done", _now(), result.to_json())
    except TalkthemesError as exc:
        send("failed", _now(), _CODES.get(type(exc).__name__, "failed"), str(exc))
    except BaseException as exc:
        send("failed", _now(), "internal_error", f"{type(exc).__name__}: {exc}")
        raise
    finally:
        conn.close()


class Jobs:
    """The service's background jobs (see the module notes).

    Parameters
    ----------
    root : Path
        The workspace folder.
    keep : int
        Finished jobs remembered.
    """

    def __init__(self, root: Path, keep: int = 100) -> None:
        self.root = Path(root)
        self.keep = keep
        self._lock = threading.Lock()
        self._jobs: OrderedDict[str, Job] = OrderedDict()
        self._processes: dict[str, multiprocessing.process.BaseProcess] = {}
        self._context = multiprocessing.get_context("spawn")

    def get(self, job_id: str) -> Job | None:
        """A copy of job ``job_id`` as it stands, or None."""
        with self._lock:
            job = self._jobs.get(job_id)
            return None if job is None else dataclasses.replace(job)

    def start_refresh(self, options: dict[str, Any]) -> Job:
        """Start a refresh job with ``options`` for :meth:`talkthemes.Workspace.refresh`.

        Raises
        ------
        WorkspaceBusyError
            When a refresh job of this service has not finished.
        """
        with self._lock:
            busy = next((j for j in self._jobs.values() if not j.finished), None)
            if busy is not None:
                raise WorkspaceBusyError(
                    f"refresh job {busy.id} is {busy.state}: follow it at /v1/jobs/{busy.id}"
                )
            job = Job(id=secrets.token_hex(8), kind="refresh", options=dict(options))
            receiver, sender = self._context.Pipe(duplex=False)
            process = self._context.Process(
                target=_refresh_worker,
                args=(str(self.root), dict(options), sender),
                name=f"talkthemes-refresh-{job.id}",
                daemon=True,
            )
            process.start()
            sender.close()
            self._jobs[job.id] = job
            self._processes[job.id] = process
            self._forget_old()
        threading.Thread(
            target=self._follow, args=(job, process, receiver), name=f"follow-{job.id}", daemon=True
        ).start()
        log.info("refresh job %s started (pid %s)", job.id, process.pid)
        return dataclasses.replace(job)

    def _follow(
        self, job: Job, process: multiprocessing.process.BaseProcess, conn: Connection
    ) -> None:
        """Read the job's reports until its process ends."""
        while True:
            try:
                message = conn.recv()
            except (EOFError, OSError):
                break
            with self._lock:
                self._apply(job, message)
        conn.close()
        process.join()
        with self._lock:
            self._processes.pop(job.id, None)
            if not job.finished:
                job.state, job.finished_at = "failed", _now()
                job.error = {
                    "code": "interrupted",
                    "message": f"the refresh stopped before it finished (exit code "
                    f"{process.exitcode}); the previous version is still current",
                }
        log.info("refresh job %s %s", job.id, job.state)

    @staticmethod
    def _apply(job: Job, message: tuple[Any, ...]) -> None:
        kind = message[0]
        if kind == "running":
            job.state, job.started_at = "running", message[1]
        elif kind == "progress":
            job.progress = {"done": message[1], "total": message[2], "step": message[3]}
        elif kind == "done":
            job.state, job.finished_at, job.result = "done", message[1], message[2]
            job.progress = {**job.progress, "done": job.progress.get("total", 0)}
        elif kind == "failed":
            job.state, job.finished_at = "failed", message[1]
            job.error = {"code": message[2], "message": message[3]}

    def _forget_old(self) -> None:
        finished = [k for k, j in self._jobs.items() if j.finished]
        for key in finished[: max(0, len(self._jobs) - self.keep)]:
            del self._jobs[key]

    def shutdown(self, seconds: float = STOP_SECONDS) -> None:
        """Stop running jobs: each gets ``seconds`` to end, then is terminated (a refresh
        stopped so leaves the previous version current)."""
        with self._lock:
            processes = list(self._processes.values())
        for process in processes:
            if process.is_alive():
                log.warning(
                    "stopping refresh process %s (the service is shutting down)", process.pid
                )
                process.terminate()
        for process in processes:
            process.join(seconds)
            if process.is_alive():
                process.kill()
                process.join(1)
