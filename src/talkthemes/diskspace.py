"""Room on disk for a large write: checked before it starts, explained when it runs out.

A write that would not fit is refused before anything is written, with how much room it
needs and how much is free; a disk that fills up during the write (another process took
the room, or the estimate was short) gives the same message. Either way the write's
temporary files are removed by its atomic writer and what was current stays current.
"""

from __future__ import annotations

import contextlib
import errno
import shutil
from collections.abc import Iterator
from pathlib import Path

from talkthemes.errors import DiskFullError

__all__ = ["check_room", "human_bytes", "room_for"]

#: Kept free beyond a write's own size: the store's journal and small files around it.
MARGIN = 16 * 2**20

_FULL = {errno.ENOSPC, errno.EDQUOT}


def human_bytes(n: float) -> str:
    """``1536`` → ``"1.5 KB"`` (binary multiples, one decimal)."""
    for unit in ("bytes", "KB", "MB", "GB"):
        if abs(n) < 1024 or unit == "GB":
            return f"{n:.0f} {unit}" if unit == "bytes" else f"{n:.1f} {unit}"
        n /= 1024
    raise AssertionError  # pragma: no cover - the loop returns


def _existing(folder: Path) -> Path:
    """``folder`` or its nearest existing parent (the disk it will be on)."""
    folder = Path(folder).absolute()
    while not folder.exists() and folder != folder.parent:
        folder = folder.parent
    return folder


def _message(what: str, folder: Path, needed: int, free: int) -> str:
    return (
        f"not enough disk space to {what} in {folder}: it needs about {human_bytes(needed)} "
        f"and {human_bytes(free)} is free; nothing was changed, what was current stays "
        "current. Free some space (or remove old versions) and run the command again."
    )


def check_room(folder: Path, needed: int, what: str) -> None:
    """Refuse a write of about ``needed`` bytes into ``folder`` that would not fit.

    Raises
    ------
    DiskFullError
        When the disk holding ``folder`` has less than ``needed`` plus :data:`MARGIN` free.
    """
    where = _existing(folder)
    free = shutil.disk_usage(where).free
    if free < needed + MARGIN:
        raise DiskFullError(
            _message(what, Path(folder), needed + MARGIN, free),
            folder=str(folder),
            needed=needed + MARGIN,
            free=free,
        )


@contextlib.contextmanager
def room_for(folder: Path, needed: int, what: str) -> Iterator[None]:
    """Check the room first (:func:`check_room`), then turn a disk that fills up during the
    block (``ENOSPC``, ``EDQUOT``) into a :class:`DiskFullError` saying what was needed."""
    check_room(folder, needed, what)
    try:
        yield
    except OSError as exc:
        if exc.errno not in _FULL:
            raise
        free = shutil.disk_usage(_existing(folder)).free
        raise DiskFullError(
            _message(what, Path(folder), needed + MARGIN, free),
            folder=str(folder),
            needed=needed + MARGIN,
            free=free,
        ) from exc
