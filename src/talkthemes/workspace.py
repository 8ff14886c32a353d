"""The workspace folder: its paths, the single-writer lock and atomic writes.

A workspace holds ``talkthemes.toml``, the SQLite store and the artifacts of every stage
(see docs/operations.md, "Backing up a workspace"). Commands that change it (ingest,
prepare, sweep, publish, refresh) hold the lock for their whole run, so there is one writer
at a time; readers never lock.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import fcntl
import json
import os
import shutil
import tempfile
import time
from collections.abc import Callable, Iterator
from pathlib import Path

from talkthemes.config import SETTINGS_FILE, Settings, load_settings, render_settings
from talkthemes.errors import InputError, NotReadyError, WorkspaceBusyError
from talkthemes.store import Store

__all__ = [
    "DEFAULT_WORKSPACE",
    "Workspace",
    "WorkspaceDir",
    "atomic_dir",
    "atomic_write_bytes",
    "atomic_write_text",
    "resolve_workspace",
]

DEFAULT_WORKSPACE = "talkthemes-work"
ENV_VAR = "TALKTHEMES_WORKSPACE"
DB_FILE = "talkthemes.db"
LOCK_FILE = ".lock"


def resolve_workspace(path: str | Path | None) -> Path:
    """Return the workspace folder: ``path``, else ``$TALKTHEMES_WORKSPACE``, else the default."""
    if path:
        return Path(path).expanduser()
    env = os.environ.get(ENV_VAR)
    if env:
        return Path(env).expanduser()
    return Path(DEFAULT_WORKSPACE)


def atomic_write_bytes(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` so that readers see the old file or the new one, never half.

    The bytes go to a temporary file in the same folder, are flushed to disk, and the
    temporary file is moved over ``path`` with :func:`os.replace`.
    """
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def atomic_write_text(path: Path, text: str) -> None:
    """Text version of :func:`atomic_write_bytes` (UTF-8)."""
    atomic_write_bytes(path, text.encode("utf-8"))


@contextlib.contextmanager
def atomic_dir(final: Path) -> Iterator[Path]:
    """Build a folder under a temporary name and move it to ``final`` only on success.

    Yields the temporary folder to fill. If the block raises, the temporary folder is
    removed and ``final`` is untouched. An existing ``final`` is replaced as a whole.
    """
    final.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(dir=final.parent, prefix=f".{final.name}.", suffix=".tmp"))
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o777 & ~umask)  # mkdtemp makes 0700; a workspace folder is shared
    try:
        yield tmp
        if final.exists():
            old = final.with_name(f".{final.name}.old-{os.getpid()}")
            os.replace(final, old)
            os.replace(tmp, final)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, final)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


class Workspace:
    """A workspace folder: its paths, settings file, store and writer lock.

    This is the layer under the public API: domain functions take it. Scripts and notebooks
    use :class:`talkthemes.Workspace`, which wraps it and takes the lock for them.

    Parameters
    ----------
    root : path-like
        The folder. It need not exist until :meth:`init` is called.
    """

    def __init__(self, root: str | Path) -> None:
        self.root = Path(root)

    # -- paths -----------------------------------------------------------------
    @property
    def settings_path(self) -> Path:
        return self.root / SETTINGS_FILE

    @property
    def db_path(self) -> Path:
        return self.root / DB_FILE

    @property
    def lock_path(self) -> Path:
        return self.root / LOCK_FILE

    @property
    def prepared_dir(self) -> Path:
        return self.root / "prepared"

    @property
    def sweeps_dir(self) -> Path:
        return self.root / "sweeps"

    @property
    def versions_dir(self) -> Path:
        return self.root / "versions"

    def exists(self) -> bool:
        """True when the folder holds a workspace (its settings file or store)."""
        return self.settings_path.exists() or self.db_path.exists()

    # -- lifecycle -------------------------------------------------------------
    def init(self) -> bool:
        """Create the folder, a commented settings file and an empty store.

        Returns
        -------
        bool
            True when something was created, False when the workspace already existed
            (nothing is overwritten).
        """
        if self.root.exists() and not self.root.is_dir():
            raise InputError(f"{self.root}: exists and is not a folder")
        created = False
        self.root.mkdir(parents=True, exist_ok=True)
        if not self.settings_path.exists():
            atomic_write_text(self.settings_path, render_settings())
            created = True
        if not self.db_path.exists():
            created = True
        Store.open(self.db_path).close()
        return created

    def require(self) -> None:
        """Raise :class:`NotReadyError` unless the workspace exists."""
        if not self.exists():
            raise NotReadyError(
                f"no workspace at {self.root}: run 'talkthemes init {self.root}' first"
            )

    def settings(self) -> Settings:
        """Load ``talkthemes.toml`` (defaults for anything missing)."""
        return load_settings(self.settings_path)

    def store(self):  # -> Store (imported lazily to keep import time low)
        """Open the store (creating or migrating it as needed)."""
        self.require()
        return Store.open(self.db_path)

    # -- lock ------------------------------------------------------------------
    @contextlib.contextmanager
    def lock(
        self,
        command: str,
        *,
        wait: bool = False,
        poll_seconds: float = 0.5,
        on_wait: Callable[[str], None] | None = None,
    ) -> Iterator[None]:
        """Hold the workspace's single-writer lock for the duration of the block.

        The lock is an advisory ``flock`` on ``.lock``; the operating system releases it
        when the holder exits, even when it is killed, so a crash never leaves a stale lock.

        Parameters
        ----------
        command : str
            Name of the command taking the lock; shown to a second writer.
        wait : bool
            Wait for the lock instead of failing when it is held.
        on_wait : callable, optional
            Called once with the busy message when waiting starts.

        Raises
        ------
        WorkspaceBusyError
            When the lock is held and ``wait`` is false.
        """
        self.root.mkdir(parents=True, exist_ok=True)
        fd = os.open(self.lock_path, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            told = False
            while True:
                try:
                    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                    break
                except BlockingIOError:
                    message = self._busy_message(fd)
                    if not wait:
                        raise WorkspaceBusyError(message + " (use --wait to wait for it)") from None
                    if on_wait is not None and not told:
                        on_wait(message)
                        told = True
                    time.sleep(poll_seconds)
            info = {
                "command": command,
                "pid": os.getpid(),
                "since": dt.datetime.now().astimezone().isoformat(timespec="seconds"),
            }
            os.ftruncate(fd, 0)
            os.pwrite(fd, json.dumps(info).encode(), 0)
            try:
                yield
            finally:
                os.ftruncate(fd, 0)
                fcntl.flock(fd, fcntl.LOCK_UN)
        finally:
            os.close(fd)

    @staticmethod
    def _busy_message(fd: int) -> str:
        try:
            raw = os.pread(fd, 4096, 0)
            info = json.loads(raw.decode() or "{}")
        except (OSError, ValueError):
            info = {}
        command = info.get("command", "another command")
        since = info.get("since", "an unknown time")
        pid = info.get("pid")
        who = f" (pid {pid})" if pid else ""
        return f"workspace busy: {command} since {since}{who}"


#: The folder class's name once the public API (``talkthemes.Workspace``) is merged everywhere;
#: transitional: the API package already uses it, the rest of the code follows after the merge.
WorkspaceDir = Workspace
