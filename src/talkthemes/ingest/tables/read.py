"""Reading a table of calls: choosing its shape, then reading its rows.

See :mod:`talkthemes.ingest.tables` for the rules.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.tables.columns import (
    DATE_NAMES,
    ID_NAMES,
    SPEAKER_NAMES,
    SPEAKER_NAMES_STRONG,
    TEXT_NAMES,
    find_column,
    normalise_name,
)
from talkthemes.ingest.tables.files import RawTable, load_table
from talkthemes.ingest.tables.per_call import read_per_call
from talkthemes.ingest.tables.per_turn import read_per_turn

__all__ = ["PER_TURN_REPEAT_SHARE", "read_rows", "read_table"]

#: Share of a table's ids that must repeat for a table without a clear speaker column to be
#: read per turn; below it, a repeated id in a table of one row per call is an error.
PER_TURN_REPEAT_SHARE = 0.5


def _missing(table: RawTable, what: str, setting: str, configured: str) -> Reject:
    found = ", ".join(repr(c) for c in table.columns) or "none"
    if configured:
        reason = f"no column {configured!r} (setting [ingest] {setting}) for the {what}"
    else:
        reason = f"no {what} column found"
    return Reject(table.source, f"{reason}; columns found: {found}", table.format)


def read_table(path: Path, settings: IngestSettings) -> Iterator[Transcript | Reject | Warning_]:
    """Read the transcripts of a ``.csv``, ``.jsonl``/``.ndjson`` or ``.parquet`` table.

    See :mod:`talkthemes.ingest.tables` for the shapes, column detection and row rules.

    Parameters
    ----------
    path : Path
        The table.
    settings : IngestSettings
        Column names (empty = detect), size limit, fallback encoding, speaker labels.

    Yields
    ------
    Transcript, Reject or Warning_
    """
    table, notes = load_table(path, settings)
    yield from notes
    if table is not None:
        yield from read_rows(table, settings, path.stem)


def read_rows(
    table: RawTable, settings: IngestSettings, stem: str
) -> Iterator[Transcript | Reject | Warning_]:
    """Read the transcripts of a table already loaded (from a file, or held in memory).

    Parameters
    ----------
    table : RawTable
    settings : IngestSettings
    stem : str
        Name that ids of rows without one are made from (``<stem>-<row>``): the file name
        without its extension for files.

    Yields
    ------
    Transcript, Reject or Warning_
    """
    text_col = find_column(table.columns, settings.text_column, TEXT_NAMES)
    if text_col is None:
        yield _missing(table, "text", "text_column", settings.text_column)
        return
    id_col = find_column(table.columns, settings.id_column, ID_NAMES)
    if id_col is None and settings.id_column:
        yield _missing(table, "transcript id", "id_column", settings.id_column)
        return
    speaker_col = find_column(table.columns, settings.speaker_column, SPEAKER_NAMES)
    if speaker_col is None and settings.speaker_column:
        yield _missing(table, "speaker", "speaker_column", settings.speaker_column)
        return
    date_col = find_column(table.columns, settings.date_column, DATE_NAMES)
    if date_col is None and settings.date_column:
        yield Warning_(
            table.source,
            f"no column {settings.date_column!r} (setting [ingest] date_column); "
            "transcripts get no date",
        )
    if id_col is not None and id_col == text_col:
        id_col = None
    if not table.rows:
        yield Reject(table.source, "table has a header but no rows", table.format)
        return
    # A clearly named (or configured) speaker column, or a speaker column without ids, makes
    # a per-turn table; a loosely named one ("channel", "party", ...) needs repeated ids.
    per_turn = speaker_col is not None and (
        bool(settings.speaker_column)
        or id_col is None
        or normalise_name(table.columns[speaker_col]) in SPEAKER_NAMES_STRONG
    )
    if not per_turn and id_col is not None:
        per_turn, repeated = _ids_repeat(table, id_col)
        if per_turn:
            yield Warning_(
                table.source,
                f"transcript id {repeated!r} repeats; rows with the same id are read as the "
                "turns of one transcript",
            )
    if per_turn:
        yield from read_per_turn(table, settings, stem, text_col, id_col, speaker_col, date_col)
    else:
        yield from read_per_call(table, settings, stem, text_col, id_col, date_col)


def _ids_repeat(table: RawTable, id_col: int) -> tuple[bool, str]:
    """Whether repeated ids make this table per turn, and the first id that repeats.

    In a table of turns most ids repeat; in a table of calls an id that repeats is two
    calls under one id (see :data:`PER_TURN_REPEAT_SHARE`).
    """
    counts: dict[str, int] = {}
    first_repeat = ""
    for row in table.rows:
        tid = row[id_col]
        if tid is None:
            continue
        tid = tid.strip()
        n = counts.get(tid, 0) + 1
        counts[tid] = n
        if n == 2 and not first_repeat:
            first_repeat = tid
    if not first_repeat:
        return False, ""
    repeating = sum(1 for n in counts.values() if n > 1)
    return repeating >= PER_TURN_REPEAT_SHARE * len(counts), first_repeat
