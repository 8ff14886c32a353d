"""What every part of :class:`talkthemes.Workspace` shares: the folder, the settings, and the
writer lock, taken once per thread however deeply the methods call each other."""

from __future__ import annotations

import contextlib
import os
import threading
import warnings
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Any

from talkthemes.config import Settings
from talkthemes.workspace import WorkspaceDir

from ._cache import VersionCache

__all__ = ["OnWait", "PathsLike", "WorkspaceBase", "as_paths"]

#: Called once with the busy message when a writer starts waiting for the lock.
OnWait = Callable[[str], None]

#: One path, or several.
PathsLike = str | os.PathLike[str] | Sequence[str | os.PathLike[str]]

#: Attributes of the folder class that code written against it before this API may still
#: read on a :class:`~talkthemes.Workspace` (see :meth:`WorkspaceBase.__getattr__`).
_FOLDER_ATTRIBUTES = frozenset(
    {
        "db_path",
        "exists",
        "init",
        "lock",
        "lock_path",
        "prepared_dir",
        "require",
        "settings_path",
        "store",
        "sweeps_dir",
        "versions_dir",
    }
)


def as_paths(paths: PathsLike) -> list[Path]:
    """One path or a sequence of paths as a list of :class:`~pathlib.Path`."""
    if isinstance(paths, str | os.PathLike):
        return [Path(paths)]
    return [Path(p) for p in paths]


class WorkspaceBase:
    """The folder, the settings and the writer lock of a :class:`~talkthemes.Workspace`.

    Parameters
    ----------
    folder : WorkspaceDir
        The workspace folder (it must exist; :meth:`~talkthemes.Workspace.open` checks).
    created : bool
        True when :meth:`~talkthemes.Workspace.create` made it in this call.
    """

    def __init__(self, folder: WorkspaceDir, *, created: bool = False) -> None:
        self._dir = folder
        self.created = created
        self._local = threading.local()  # per thread: does this object hold the lock?
        self._versions = VersionCache()

    def __repr__(self) -> str:
        return f"{type(self).__name__}({str(self._dir.root)!r})"

    @property
    def root(self) -> Path:
        """The workspace folder."""
        return self._dir.root

    @property
    def folder(self) -> WorkspaceDir:
        """The layer under this API: the folder's paths, store and lock.

        Domain functions (``talkthemes.sweep.run.run_sweep`` and the like) take it; a
        caller of those holds the lock itself (:meth:`hold`).
        """
        return self._dir

    def settings(self) -> Settings:
        """The settings in ``talkthemes.toml`` (read again at each call; defaults for
        anything missing)."""
        return self._dir.settings()

    # -- the writer lock ---------------------------------------------------------------
    @contextlib.contextmanager
    def hold(
        self, command: str = "python", *, wait: bool = False, on_wait: OnWait | None = None
    ) -> Iterator[None]:
        """Hold the workspace's writer lock for a block of several writes.

        Every method that writes takes the lock itself; hold it around several of them
        when no other writer may slip in between (a script that ingests, prepares and
        publishes in one go). Inside the block, this object's writer methods called from
        the same thread use the lock already held.

        Parameters
        ----------
        command : str
            Shown to another writer that finds the workspace busy.
        wait : bool
            Wait for another writer to finish instead of raising.
        on_wait : callable, optional
            ``on_wait(message)``, once, when waiting starts.

        Raises
        ------
        WorkspaceBusyError
            When another writer holds the lock and ``wait`` is false.
        """
        if getattr(self._local, "held", False):
            yield
            return
        with self._dir.lock(command, wait=wait, on_wait=on_wait):
            self._local.held = True
            try:
                yield
            finally:
                self._local.held = False

    # -- for code written against the folder class -------------------------------------
    def __getattr__(self, name: str) -> Any:
        """The folder's own attributes (``store``, ``versions_dir``, ...), with a warning.

        Code written before this API passed the folder class where a workspace was
        expected; this keeps such code working for the merge of this round. Use
        :attr:`folder` instead; this forwarding will be removed.
        """
        if name in _FOLDER_ATTRIBUTES:
            warnings.warn(
                f"Workspace.{name} is the folder's: use Workspace.folder.{name}",
                DeprecationWarning,
                stacklevel=2,
            )
            return getattr(self._dir, name)
        raise AttributeError(f"{type(self).__name__!r} object has no attribute {name!r}")
