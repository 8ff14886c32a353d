"""The exception hierarchy of talkthemes.

Every error a user can cause derives from one root, so the CLI can turn it into a
one-line message and an exit code instead of a traceback::

    TalkthemesError
    ├── ConfigError       settings file or option invalid           (exit 2)
    ├── InputError        an input file or argument cannot be used  (exit 2)
    ├── NotReadyError     an earlier stage has not been run yet     (exit 2)
    ├── WorkspaceBusyError another command holds the workspace lock (exit 2)
    ├── StoreError        the store is unreadable or inconsistent   (exit 1)
    └── DiskFullError     the disk has too little room for a write  (exit 1)
"""

from __future__ import annotations

__all__ = [
    "ConfigError",
    "DiskFullError",
    "InputError",
    "NotReadyError",
    "StoreError",
    "TalkthemesError",
    "WorkspaceBusyError",
]


class TalkthemesError(Exception):
    """Root of every error talkthemes raises on purpose."""

    exit_code: int = 1


class ConfigError(TalkthemesError):
    """A setting or command-line option is invalid."""

    exit_code = 2


class InputError(TalkthemesError):
    """An input (file, folder, argument) cannot be used as given."""

    exit_code = 2


class NotReadyError(TalkthemesError):
    """A stage was asked for before the stage it builds on has run."""

    exit_code = 2


class WorkspaceBusyError(TalkthemesError):
    """Another command holds the workspace lock."""

    exit_code = 2


class StoreError(TalkthemesError):
    """The store cannot be opened, migrated or read consistently."""

    exit_code = 1


class DiskFullError(TalkthemesError):
    """A write needs more room than its disk has; nothing stored was changed.

    Attributes
    ----------
    folder : str
        Where the write went.
    needed : int
        Bytes the write needs (an estimate when the disk filled up during the write).
    free : int
        Bytes free on that disk when it was checked.
    """

    exit_code = 1

    def __init__(self, message: str, *, folder: str, needed: int, free: int) -> None:
        super().__init__(message)
        self.folder = folder
        self.needed = needed
        self.free = free
