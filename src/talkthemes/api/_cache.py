"""Loaded versions kept between calls, safe to share between threads.

A service answers many reads of the same version: loading its arrays, vocabulary and model
state once saves most of each request. What can change under a version number is read
fresh at every call: the labels (a ``label`` call), and the folder itself (a version is
written to a temporary folder and moved into place, so a new folder has a new inode).
"""

from __future__ import annotations

import dataclasses
import os
import threading
from collections import OrderedDict
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from talkthemes.workspace import WorkspaceDir

from ._deferred import deferred

if TYPE_CHECKING:  # heavy (numpy, pandas, gensim): imported on first use, see _deferred.py
    from talkthemes import assign as assign_mod
    from talkthemes.prepare import frozen
    from talkthemes.versions import load as versions_load
else:
    assign_mod = deferred("talkthemes.assign")
    frozen = deferred("talkthemes.prepare.frozen")
    versions_load = deferred("talkthemes.versions.load")

__all__ = ["Assigner", "VersionCache"]


@dataclass
class Assigner:
    """What assigning with one version needs, loaded once: the version, the frozen
    preparation of its training data, the model state, and a lock (the preparation and
    the model keep lazily built state, so one batch runs through them at a time)."""

    version: versions_load.Version
    applier: frozen.PrepApplier
    model: assign_mod.ShareModel
    lock: threading.Lock = dataclasses.field(default_factory=threading.Lock)


def _stamp(folder: WorkspaceDir, n: int) -> tuple[int, int] | None:
    """Identity of version ``n``'s folder on disk (None when it is not there)."""
    try:
        st = os.stat(folder.versions_dir / str(n) / "version.json")
    except OSError:
        return None
    return st.st_ino, st.st_mtime_ns


class VersionCache:
    """The last few versions loaded, by number (see the module notes).

    Parameters
    ----------
    keep : int
        Versions kept; the one used longest ago goes first.
    """

    def __init__(self, keep: int = 3) -> None:
        self._keep = keep
        self._lock = threading.Lock()
        self._items: OrderedDict[int, tuple[Any, dict[str, Any]]] = OrderedDict()

    def _entry(self, folder: WorkspaceDir, n: int) -> dict[str, Any]:
        stamp = _stamp(folder, n)
        with self._lock:
            hit = self._items.get(n)
            if hit is not None and hit[0] == stamp and stamp is not None:
                self._items.move_to_end(n)
                return hit[1]
        entry: dict[str, Any] = {"version": versions_load.load_version(folder, n)}
        with self._lock:
            self._items[n] = (stamp, entry)
            self._items.move_to_end(n)
            while len(self._items) > self._keep:
                self._items.popitem(last=False)
        return entry

    def version(self, folder: WorkspaceDir, n: int) -> versions_load.Version:
        """Version ``n`` with its labels as stored now.

        Raises
        ------
        NotReadyError
            When version ``n`` is not on disk.
        """
        cached = self._entry(folder, n)["version"]
        with folder.store() as store:
            themes = store.themes(n)
        if not themes:  # forgotten since it was loaded: load_version names the problem
            return versions_load.load_version(folder, n)
        return dataclasses.replace(cached, themes=themes)

    def assigner(self, folder: WorkspaceDir, n: int) -> Assigner:
        """The :class:`Assigner` of version ``n`` (labels as stored now)."""
        entry = self._entry(folder, n)
        with self._lock:
            assigner = entry.get("assigner")
        if assigner is None:
            v = entry["version"]
            assigner = Assigner(
                version=v,
                applier=frozen.PrepApplier(frozen.load_prep_spec(folder, v)),
                model=assign_mod.ShareModel.from_version(v),
            )
            with self._lock:
                assigner = entry.setdefault("assigner", assigner)
        return dataclasses.replace(assigner, version=self.version(folder, n))
