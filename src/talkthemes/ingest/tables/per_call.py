"""Tables of one row per call: an id column and a text column.

The text may itself hold ``Speaker: text`` lines, which are split into turns as in ``.txt``
files; every other column becomes metadata (as strings). A row without an id gets
``<file stem>-<row>`` (with a warning when the table has an id column). An id already used
by an earlier row is another call under the same id: the later row is rejected (two calls
are never merged), unless it is an exact copy of the earlier row (skipped with a warning).
"""

from __future__ import annotations

from collections.abc import Iterator

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.tables.dates import date_column_values
from talkthemes.ingest.tables.files import RawTable
from talkthemes.ingest.txt import mapper_for, parse_turns

__all__ = ["read_per_call"]


def read_per_call(
    table: RawTable,
    settings: IngestSettings,
    stem: str,
    text_col: int,
    id_col: int | None,
    date_col: int | None,
) -> Iterator[Transcript | Reject | Warning_]:
    """Read a table of one row per call (see the module docstring for the rules).

    Parameters
    ----------
    table : RawTable
    settings : IngestSettings
        Speaker label lists (for ``Speaker: text`` lines in the text).
    stem : str
        The file name without extension (ids of rows without one).
    text_col, id_col, date_col : int or None
        The columns found (``text_col`` always).

    Yields
    ------
    Transcript, Reject or Warning_
    """
    mapper = mapper_for(settings)
    used = {text_col, id_col, date_col}
    meta_cols = [(k, c) for k, c in enumerate(table.columns) if k not in used]
    dates: dict[int, str] = {}
    if date_col is not None:
        dates, warnings = date_column_values(table, date_col, range(len(table.rows)))
        yield from warnings
    if id_col is None:
        yield Warning_(
            table.source,
            f"no transcript id column; ids are '{stem}-<row>'",
        )
    first_row: dict[str, int] = {}
    for r, row in enumerate(table.rows):
        n = table.numbers[r]
        text = row[text_col]
        if text is None:
            yield Reject(table.source, f"{table.where(n)}: empty text", table.format, row=n)
            continue
        tid = row[id_col].strip() if id_col is not None and row[id_col] is not None else ""
        if not tid:
            tid = f"{stem}-{n}"
            if id_col is not None:
                yield Warning_(
                    table.source, f"{table.where(n)}: no transcript id; using {tid!r}", row=n
                )
        if tid in first_row:
            yield _repeated_id(table, tid, first_row[tid], r)
            continue
        first_row[tid] = r
        turns = parse_turns(text, mapper)
        if not turns:
            yield Reject(table.source, f"{table.where(n)}: no transcript text", table.format, row=n)
            continue
        metadata = {c: row[k] for k, c in meta_cols if row[k] is not None}
        if r in dates:
            metadata["date"] = dates[r]
        yield Transcript(tid, turns, f"{table.source}:{table.unit} {n}", table.format, metadata)


def _repeated_id(table: RawTable, tid: str, first: int, r: int) -> Reject | Warning_:
    """A later row of a one-row-per-call table with an id already used: a copy of the
    first row is skipped with a warning; another call under the same id is rejected."""
    n, m = table.numbers[r], table.numbers[first]
    if table.rows[r] == table.rows[first]:
        return Warning_(
            table.source,
            f"{table.where(n)}: transcript id {tid!r} repeats {table.where(m)} exactly; "
            "the copy is skipped",
            row=n,
        )
    return Reject(
        table.source,
        f"{table.where(n)}: transcript id {tid!r} is already used by {table.where(m)} of this "
        "table, which holds one call per row; two calls under one id are never merged "
        "(give each call its own id)",
        table.format,
        row=n,
    )
