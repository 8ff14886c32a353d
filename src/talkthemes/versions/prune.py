"""Pruning versions: keep the newest ``[refresh] keep_versions`` (always the current one),
and remove the leftovers of interrupted runs."""

from __future__ import annotations

import logging
import re
import shutil

from talkthemes.workspace import Workspace

__all__ = ["prune_versions", "remove_leftovers"]

log = logging.getLogger(__name__)


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
        cur = None if current is None else current.n
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
