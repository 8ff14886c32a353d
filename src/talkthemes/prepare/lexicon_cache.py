"""What the chain derives from a language's large lemma tables, kept on disk between runs.

The Spanish, German and Portuguese lookup tables of ``spacy-lookups-data`` hold 355,000 to
825,000 forms; finding their contested headwords (:class:`~.headwords.Headwords`) and the
words the names step takes as ordinary (:func:`~.lexicon.lemma_table_words`) walks every
form in Python, 1–2 seconds a run. Both depend only on the table files, so they are written
once as JSON (never pickle) in the cache folder and read back on the next run:

- the folder is ``$TALKTHEMES_CACHE_DIR``, else ``$XDG_CACHE_HOME/talkthemes``, else
  ``~/.cache/talkthemes``, sub-folder ``lexicon``;
- a file's name holds a SHA-256 digest of the table files it was derived from and of
  :data:`FORMAT`: a changed table (another ``spacy-lookups-data``) gives another name, so
  the scan runs again, and the files of older tables of that language are removed;
- a file that cannot be read or does not have the expected shape is built again (with a
  warning), and a folder that cannot be written only costs the scan.
"""

from __future__ import annotations

import hashlib
import json
import logging
import os
from collections.abc import Callable, Sequence
from functools import cache
from pathlib import Path
from typing import Any, TypeVar

from talkthemes.prepare.lexicon import lookup_tables

__all__ = ["FORMAT", "cache_folder", "cached", "table_digest"]

logger = logging.getLogger(__name__)

#: Bumped when what is cached, or how it is derived, changes.
FORMAT = "1"

T = TypeVar("T")


def cache_folder() -> Path:
    """Where the derived tables are kept (see the module notes)."""
    root = os.environ.get("TALKTHEMES_CACHE_DIR")
    if not root:
        xdg = os.environ.get("XDG_CACHE_HOME")
        root = str(Path(xdg) / "talkthemes") if xdg else str(Path.home() / ".cache" / "talkthemes")
    return Path(root) / "lexicon"


def _file_digest(path: Any) -> str:
    path = Path(str(path))
    if not path.exists():  # spaCy's loader falls back to the gzipped file
        path = path.with_name(path.name + ".gz")
    return _bytes_digest(str(path), path.stat().st_mtime_ns, path.stat().st_size)


@cache
def _bytes_digest(path: str, mtime: int, size: int) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def table_digest(lang: str, tables: Sequence[str]) -> str:
    """SHA-256 of the named ``spacy-lookups-data`` tables of a language (those it ships)."""
    shipped = lookup_tables().get(lang, {})
    doc = {name: _file_digest(shipped[name]) if name in shipped else "" for name in tables}
    doc["format"] = FORMAT
    return hashlib.sha256(json.dumps(doc, sort_keys=True).encode("ascii")).hexdigest()


def cached(
    kind: str,
    lang: str,
    tables: Sequence[str],
    build: Callable[[], T],
    dump: Callable[[T], Any],
    load: Callable[[Any], T],
) -> T:
    """``build()``, or what an earlier run stored for the same table files.

    Parameters
    ----------
    kind : str
        What is derived (part of the file name).
    lang : str
    tables : sequence of str
        The ``spacy-lookups-data`` tables it is derived from (``lemma_lookup`` ...).
    build : callable
        Derives it from the tables.
    dump, load : callable
        To and from JSON values; ``load`` raises ``TypeError``, ``ValueError`` or
        ``KeyError`` when the value does not have the expected shape.

    Returns
    -------
    The derived value.
    """
    try:
        digest = table_digest(lang, tables)
    except OSError as exc:  # a table file gone: nothing to key the cache on
        logger.warning("cannot read the %s tables to cache %s: %s", lang, kind, exc)
        return build()
    folder = cache_folder()
    path = folder / f"{lang}-{kind}-{digest[:24]}.json"
    try:
        return load(json.loads(path.read_text(encoding="utf-8")))
    except FileNotFoundError:
        pass
    except (OSError, TypeError, ValueError, KeyError) as exc:
        logger.warning("%s: unreadable (%s); building it again", path, exc)
    value = build()
    try:
        folder.mkdir(parents=True, exist_ok=True)
        tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
        tmp.write_text(json.dumps(dump(value), ensure_ascii=False), encoding="utf-8")
        os.replace(tmp, path)
        for old in folder.glob(f"{lang}-{kind}-*.json"):
            if old != path:
                old.unlink(missing_ok=True)
    except OSError as exc:
        logger.warning("cannot write %s: %s", path, exc)
    return value
