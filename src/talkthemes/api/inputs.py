"""What :meth:`talkthemes.Workspace.assign` accepts, read into transcripts.

* **a list of texts** — one transcript each, its id its position in the list (``"0"``,
  ``"1"``, ...); ``Speaker: text`` lines inside a text are split into turns as in ``.txt``
  files;
* **a data frame** in either shape the table ingest reads (:mod:`talkthemes.ingest.tables`):
  one row per transcript (an id and a text column), or one row per turn (id, speaker, text,
  optionally a start time); columns are found by the same names and ``[ingest]`` settings
  as for a table file;
* **records** — a list of mappings ``{"id", "text" | "turns", "metadata"}``, one per
  transcript (:mod:`talkthemes.ingest.records`); a record without an id gets its position;
* **paths** — one :class:`~pathlib.Path` or a list of them: files and folders in any format
  ingest reads (a ``manifest.*`` at the top of a folder is skipped, as by ``assign``).

An empty list or frame gives no transcripts. Rows of an in-memory table are counted from 0,
as list positions and ``DataFrame.iloc`` count them, in messages and in the ids of rows
without one (``frame-3``).
"""

from __future__ import annotations

import os
from collections.abc import Iterator, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.errors import InputError
from talkthemes.ingest.records import read_records
from talkthemes.ingest.tables.files import table_from_rows
from talkthemes.ingest.tables.read import read_rows

from ._deferred import deferred

if TYPE_CHECKING:  # heavy (numpy, pandas, gensim): imported on first use, see _deferred.py
    import pandas as pd

    from talkthemes import assign as assign_mod
else:
    assign_mod = deferred("talkthemes.assign")

__all__ = ["read_inputs"]

Item = Transcript | Reject | Warning_


def _is_frame(data: Any) -> bool:
    # duck-typed so that reading a list of texts never imports pandas
    return hasattr(data, "columns") and hasattr(data, "itertuples") and hasattr(data, "notna")


def read_inputs(data: Any, settings: IngestSettings) -> Iterator[Item]:
    """The transcripts, rejects and warnings in ``data`` (see the module notes).

    Raises
    ------
    InputError
        When ``data`` is none of the accepted shapes (a single string, a mixed list, ...).
    """
    if isinstance(data, str):
        raise InputError(
            "assign: a single string is ambiguous: give [text] for one text, "
            "or Path(name) for a file or folder"
        )
    if isinstance(data, os.PathLike):
        return _paths([Path(data)], settings)
    if _is_frame(data):
        return _frame(data, settings) if len(data) else iter(())
    if not isinstance(data, Sequence):
        raise InputError(
            f"assign: cannot read a {type(data).__name__}: give a list of texts, "
            "a DataFrame, or paths"
        )
    items = list(data)
    if not items:
        return iter(())
    if all(isinstance(x, str) for x in items):
        return _texts(items, settings)
    if all(isinstance(x, os.PathLike) for x in items):
        return _paths([Path(x) for x in items], settings)
    if all(isinstance(x, Mapping) for x in items):
        return read_records(items, settings, require_id=False)
    kinds = sorted({type(x).__name__ for x in items})
    raise InputError(
        f"assign: a list of {' and '.join(kinds)}: give a list of texts (str), of records "
        "(dict) or of paths (pathlib.Path), not a mix"
    )


def _texts(texts: Sequence[str], settings: IngestSettings) -> Iterator[Item]:
    rows = ((str(i), text) for i, text in enumerate(texts))
    table = table_from_rows("texts", "texts", ["id", "text"], rows, first=0)
    return read_rows(table, settings, "texts")


def _frame(frame: pd.DataFrame, settings: IngestSettings) -> Iterator[Item]:
    clean = frame.astype(object).where(frame.notna(), None)  # pandas' NA and NaT as None
    rows = clean.itertuples(index=False, name=None)
    table = table_from_rows("frame", "frame", list(frame.columns), rows, first=0)
    return read_rows(table, settings, "frame")


def _paths(paths: list[Path], settings: IngestSettings) -> Iterator[Item]:
    return assign_mod.read_transcripts(paths, settings)
