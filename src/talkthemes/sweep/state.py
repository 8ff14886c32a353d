"""Where the sweeps stand: running, done, or interrupted and waiting to be re-run.

A sweep's record is ``running`` while its process works, ``done`` once every cell is in and
scored, ``incomplete`` when some cells failed, and ``interrupted`` when its process stopped
before the end: an error or Ctrl-C marks it so at once; a process killed outright (SIGKILL,
power loss) cannot, so its record still says ``running`` — it is read as ``interrupted``
when the process recorded with it is gone, and written so by the next sweep (which holds the
workspace lock, so no other sweep can be running then).

Re-running the same grid resumes the same record (only the missing cells are fitted) and
marks it ``done``; a sweep that is not finished is listed by :func:`unfinished_sweeps` until
then, or until a later sweep of the same cells on the same prep finished.
"""

from __future__ import annotations

import os
import socket
from typing import Any

from talkthemes.store.records import SweepRecord
from talkthemes.workspace import Workspace

__all__ = ["UNFINISHED", "effective_status", "run_info", "sweep_overview", "unfinished_sweeps"]

#: Statuses of a sweep that a re-run finishes.
UNFINISHED = ("interrupted", "incomplete")


def run_info() -> dict[str, Any]:
    """What identifies the process running a sweep: its pid and host."""
    return {"pid": os.getpid(), "host": socket.gethostname()}


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # exists, owned by someone else
        return True
    return True


def effective_status(record: SweepRecord) -> str:
    """A sweep record's status, with ``running`` read as ``interrupted`` when the process
    recorded with it is gone (a record from another host is taken at its word)."""
    status = record.status
    if status != "running":
        return status
    pid, host = record.run_pid, record.run_host
    if pid is None:
        return "interrupted"  # written before sweeps recorded their process: not this run's
    if host and host != socket.gethostname():
        return status
    return "running" if _alive(pid) else "interrupted"


def _cells_key(record: SweepRecord) -> tuple[Any, ...]:
    return (record.prep_hash, record.k, record.families, record.seeds)


def _rerun_command(record: SweepRecord) -> str:
    k = ",".join(str(x) for x in record.k)
    families = ",".join(record.families)
    return f"talkthemes sweep --k {k} --family {families} --seeds {record.seeds}"


def unfinished_sweeps(ws: Workspace) -> list[dict[str, Any]]:
    """Sweeps of the current prep that stopped before the end and were not finished since.

    Returns
    -------
    list of dict
        Oldest first: ``id``, ``status`` (``interrupted`` or ``incomplete``), ``created_at``,
        ``cells_done``, ``cells_total`` and ``rerun`` (the command that finishes it).
    """
    return sweep_overview(ws)["unfinished"]


def sweep_overview(ws: Workspace) -> dict[str, Any]:
    """The latest sweep with its effective status, and the unfinished sweeps.

    Returns
    -------
    dict
        ``latest``: ``id``, ``status``, ``created_at`` (None without sweeps); ``unfinished``:
        see :func:`unfinished_sweeps`.
    """
    with ws.store() as store:
        prep = store.current_prep()
        records = [r for r in map(store.get_sweep, sorted(store.sweep_ids())) if r is not None]
        done_cells = {r.id: len(store.cells(r.id)) for r in records}
    latest = None
    if records:
        last = records[-1]
        latest = {"id": last.id, "status": effective_status(last), "created_at": last.created_at}
    finished = {_cells_key(r): r.id for r in records if r.status == "done"}
    unfinished = []
    for r in records:
        status = effective_status(r)
        if status not in UNFINISHED or prep is None or r.prep_hash != prep.hash:
            continue
        if finished.get(_cells_key(r), -1) > r.id:
            continue  # the same cells finished in a later sweep
        total = len(r.k) * len(r.families) * int(r.seeds or 0)
        unfinished.append(
            {
                "id": r.id,
                "status": status,
                "created_at": r.created_at,
                "cells_done": done_cells[r.id],
                "cells_total": total,
                "rerun": _rerun_command(r),
            }
        )
    return {"latest": latest, "unfinished": unfinished}
