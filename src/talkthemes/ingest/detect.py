"""Finding input files and handing each to the reader for its format.

Walking rules (:func:`iter_files`)
----------------------------------
* A path given that does not exist (or is a broken symbolic link) is rejected.
* A file given by name is read when its extension is a known format (``FORMATS``,
  compared case-insensitively) and rejected otherwise.
* A folder is walked recursively, entries sorted by name, depth first, so runs are
  deterministic.
* Inside folders, hidden entries (names starting with ``.``, e.g. ``.DS_Store`` or
  ``.git``), office lock files (``~$...``), ``Thumbs.db``, ``desktop.ini`` and
  ``__MACOSX`` are ignored silently. Files with other unknown extensions are skipped with
  one warning per extension and walked path ("skipped 3 files with extension '.wav'").
* Symbolic links are followed when ``follow_symlinks`` is set (the default; otherwise each
  is skipped with a warning). Every folder is identified by ``(st_dev, st_ino)`` of its
  real target: a link back to a folder on the current path is a loop and is skipped with
  a warning; a folder reached a second time by another route is skipped with a warning; a
  file reached twice is yielded once. The walk never hangs on loops.
* A folder that cannot be listed is rejected; the walk goes on.
* File size is checked by the readers (so a reader called directly checks it too).
* A file named ``manifest.csv``, ``manifest.parquet`` or ``manifest.jsonl`` is a manifest,
  not a transcript table, and so is a file given as a manifest (:func:`is_manifest`, the
  one rule of ingest, refresh and assign; :func:`split_manifests`).
"""

from __future__ import annotations

import logging
import os
import stat
from collections.abc import Callable, Collection, Iterable, Iterator, Sequence
from pathlib import Path

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.errors import ConfigError
from talkthemes.ingest.decode import check_fallback
from talkthemes.ingest.tables.read import read_table
from talkthemes.ingest.txt import read_txt
from talkthemes.ingest.vtt import read_vtt

__all__ = [
    "FORMATS",
    "MANIFEST_NAMES",
    "READERS",
    "is_ignored",
    "is_manifest",
    "is_manifest_name",
    "iter_files",
    "read_file",
    "read_inputs",
    "resolved",
    "split_manifests",
]

logger = logging.getLogger(__name__)

#: File extension (lower case) → format name.
FORMATS: dict[str, str] = {
    ".txt": "txt",
    ".vtt": "vtt",
    ".csv": "csv",
    ".jsonl": "jsonl",
    ".ndjson": "jsonl",
    ".parquet": "parquet",
}

Reader = Callable[[Path, IngestSettings], Iterator[Transcript | Reject | Warning_]]

#: Format name → reader.
READERS: dict[str, Reader] = {
    "txt": read_txt,
    "vtt": read_vtt,
    "csv": read_table,
    "jsonl": read_table,
    "parquet": read_table,
}

_IGNORED_NAMES = frozenset({"thumbs.db", "desktop.ini", "__macosx"})

#: File names (compared case-insensitively) that are a folder's manifest, never transcripts.
MANIFEST_NAMES = ("manifest.csv", "manifest.parquet", "manifest.jsonl")


def is_ignored(name: str) -> bool:
    """Whether a folder entry is ignored silently (hidden, lock or system file)."""
    return name.startswith((".", "~$")) or name.casefold() in _IGNORED_NAMES


def _listing(path: str) -> list[os.DirEntry[str]]:
    with os.scandir(path) as it:
        return sorted(it, key=lambda e: e.name)


def _walk(
    root: Path,
    root_key: tuple[int, int],
    settings: IngestSettings,
    seen_dirs: set[tuple[int, int]],
    seen_files: set[tuple[int, int]],
) -> Iterator[Path | Reject | Warning_]:
    skipped: dict[str, list[str]] = {}
    try:
        first = _listing(str(root))
    except OSError as exc:
        yield Reject(str(root), f"cannot list folder: {exc.strerror or exc}", "folder")
        return
    stack: list[tuple[Iterator[os.DirEntry[str]], tuple[tuple[int, int], ...]]] = [
        (iter(first), (root_key,))
    ]
    while stack:
        entries, ancestors = stack[-1]
        entry = next(entries, None)
        if entry is None:
            stack.pop()
            continue
        if is_ignored(entry.name):
            continue
        path = entry.path
        try:
            is_link = entry.is_symlink()
            plain_file = not is_link and entry.is_file(follow_symlinks=False)
        except OSError:
            is_link = plain_file = False
        if plain_file:
            # Fast path without a stat call: type and inode come from the folder listing,
            # and a regular file lives on its folder's device.
            ext = os.path.splitext(entry.name)[1].lower()
            if ext not in FORMATS:
                skipped.setdefault(ext, []).append(path)
                continue
            key = (ancestors[-1][0], entry.inode())
            if key in seen_files:
                logger.debug("%s: already listed through another path", path)
                continue
            seen_files.add(key)
            yield Path(path)
            continue
        if is_link and not settings.follow_symlinks:
            yield Warning_(path, "symbolic link not followed (setting [ingest] follow_symlinks)")
            continue
        try:
            st = os.stat(path)
        except OSError as exc:
            what = "broken symbolic link" if is_link else "cannot be read"
            yield Warning_(path, f"{what} ({exc.strerror or exc}); skipped")
            continue
        key = (st.st_dev, st.st_ino)
        if stat.S_ISDIR(st.st_mode):
            if key in ancestors:
                yield Warning_(
                    path, "symbolic link loop (points back to a folder above it); skipped"
                )
                continue
            if key in seen_dirs:
                yield Warning_(path, "folder already read through another path; skipped")
                continue
            seen_dirs.add(key)
            try:
                listing = _listing(path)
            except OSError as exc:
                yield Reject(path, f"cannot list folder: {exc.strerror or exc}", "folder")
                continue
            stack.append((iter(listing), (*ancestors, key)))
        elif stat.S_ISREG(st.st_mode):
            ext = os.path.splitext(entry.name)[1].lower()
            if ext not in FORMATS:
                skipped.setdefault(ext, []).append(path)
                continue
            if key in seen_files:
                logger.debug("%s: already listed through another path", path)
                continue
            seen_files.add(key)
            yield Path(path)
        else:
            yield Warning_(path, "not a regular file or folder; skipped")
    for ext in sorted(skipped):
        paths = skipped[ext]
        what = f"extension {ext!r}" if ext else "no extension"
        yield Warning_(
            str(root),
            f"skipped {len(paths)} file(s) with {what} (not a transcript format), e.g. {paths[0]}",
        )


def iter_files(
    paths: Sequence[Path | str], settings: IngestSettings
) -> Iterator[Path | Reject | Warning_]:
    """Every input file under the given paths, in a deterministic order.

    Parameters
    ----------
    paths : sequence of Path or str
        Files and folders, as given on the command line.
    settings : IngestSettings
        ``follow_symlinks``.

    Yields
    ------
    Path, Reject or Warning_
        Files to read (each once), rejects for unusable paths, warnings for skipped entries.
        See the module docstring for the rules.
    """
    seen_dirs: set[tuple[int, int]] = set()
    seen_files: set[tuple[int, int]] = set()
    for given in paths:
        path = Path(given)
        try:
            st = path.stat()
        except FileNotFoundError:
            reason = "broken symbolic link" if path.is_symlink() else "does not exist"
            yield Reject(str(path), reason, FORMATS.get(path.suffix.lower(), "unknown"))
            continue
        except OSError as exc:
            yield Reject(
                str(path),
                f"cannot be read: {exc.strerror or exc}",
                FORMATS.get(path.suffix.lower(), "unknown"),
            )
            continue
        key = (st.st_dev, st.st_ino)
        if stat.S_ISDIR(st.st_mode):
            if key in seen_dirs:
                continue
            seen_dirs.add(key)
            yield from _walk(path, key, settings, seen_dirs, seen_files)
        elif stat.S_ISREG(st.st_mode):
            fmt = FORMATS.get(path.suffix.lower())
            if fmt is None:
                known = ", ".join(sorted(FORMATS))
                yield Reject(
                    str(path), f"unknown format {path.suffix!r} (read: {known})", "unknown"
                )
                continue
            if key in seen_files:
                continue
            seen_files.add(key)
            yield path
        else:
            yield Reject(str(path), "not a regular file or folder", "unknown")


def is_manifest_name(path: Path | str) -> bool:
    """Whether a file's name makes it a manifest (:data:`MANIFEST_NAMES`, any case)."""
    return Path(path).name.casefold() in MANIFEST_NAMES


def resolved(paths: Iterable[Path | str]) -> frozenset[Path]:
    """The real paths of files given as manifests, the form :func:`is_manifest` compares."""
    return frozenset(Path(p).resolve() for p in paths)


def is_manifest(path: Path, given: Collection[Path] = frozenset()) -> bool:
    """Whether an input file holds metadata for the calls rather than transcripts.

    The one rule of ingest, refresh and assign: a file named ``manifest.csv``,
    ``manifest.parquet`` or ``manifest.jsonl`` (any case) among the inputs — given by name,
    or met at any depth while walking a folder — is a manifest, and so is a file given as a
    manifest (``--manifest``), wherever it is met. Neither is ever read as transcripts.

    Parameters
    ----------
    path : Path
        An input file, e.g. one :func:`iter_files` yields.
    given : collection of Path
        The files given as manifests, as :func:`resolved` returns them.

    Returns
    -------
    bool
    """
    return is_manifest_name(path) or (bool(given) and path.resolve() in given)


def split_manifests(
    files: Iterable[Path], given: Iterable[Path | str] = ()
) -> tuple[list[Path], list[Path]]:
    """Split input files into transcript files and the manifests found among them.

    Parameters
    ----------
    files : iterable of Path
        Input files, e.g. the paths :func:`iter_files` yields.
    given : iterable of Path
        Files given as manifests: left out of both lists (the caller applies them), so a
        manifest both given and met in a folder is applied once.

    Returns
    -------
    transcripts : list of Path
        The files that are not a manifest (:func:`is_manifest`).
    manifests : list of Path
        The files named as a manifest and not given as one.

    Both lists keep the order of ``files``.
    """
    known = resolved(given)
    transcripts: list[Path] = []
    manifests: list[Path] = []
    for f in files:
        if bool(known) and f.resolve() in known:
            continue  # given as a manifest: the caller applies it
        (manifests if is_manifest_name(f) else transcripts).append(f)
    return transcripts, manifests


def read_file(path: Path, settings: IngestSettings) -> Iterator[Transcript | Reject | Warning_]:
    """Read one input file with the reader for its extension, never raising for the file.

    A reader that fails unexpectedly yields a Reject for the file (anything it yielded
    before failing is kept); the traceback is logged at debug level.

    Parameters
    ----------
    path : Path
        A file whose extension is in ``FORMATS``.
    settings : IngestSettings
        Passed to the reader.

    Yields
    ------
    Transcript, Reject or Warning_

    Raises
    ------
    ConfigError
        When the settings themselves are unusable (e.g. an unknown ``encoding_fallback``).
    """
    fmt = FORMATS.get(path.suffix.lower())
    if fmt is None:
        known = ", ".join(sorted(FORMATS))
        yield Reject(str(path), f"unknown format {path.suffix!r} (read: {known})", "unknown")
        return
    try:
        yield from READERS[fmt](path, settings)
    except ConfigError:
        raise
    except Exception as exc:
        logger.debug("%s: reader failed", path, exc_info=True)
        yield Reject(str(path), f"could not be read ({type(exc).__name__}: {exc})", fmt)


def read_inputs(
    paths: Sequence[Path | str], settings: IngestSettings
) -> Iterator[Transcript | Reject | Warning_]:
    """Walk the given paths and read every input file with the reader for its format.

    Combines :func:`iter_files` and :func:`read_file`: one file failing never stops the walk.

    Parameters
    ----------
    paths : sequence of Path or str
        Files and folders.
    settings : IngestSettings
        Passed to :func:`iter_files` and every reader.

    Yields
    ------
    Transcript, Reject or Warning_

    Raises
    ------
    ConfigError
        When ``encoding_fallback`` names no known codec (checked before any file is read).
    """
    check_fallback(settings.encoding_fallback)
    for item in iter_files(paths, settings):
        if isinstance(item, Path):
            yield from read_file(item, settings)
        else:
            yield item
