"""Tables of one row per turn: call id, speaker (or role), text and optional times.

Rows are grouped by id even when they are not contiguous; calls appear in the order their
id first appears; turns keep their row order, or are sorted by start time when every turn
of that call has one. Columns whose value is the same on every row of a call become its
metadata; the date is the earliest date on its rows. A row without an id is rejected. Without
a speaker column, each row's text is split into turns like a ``.txt`` file, so
``Name: text`` lines still give speakers. A table without an id column is one call named
after the file (with a warning).
"""

from __future__ import annotations

from collections.abc import Iterator

from talkthemes.calls.model import Reject, Transcript, Turn, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.tables.columns import END_NAMES, ROLE_NAMES, START_NAMES, find_column
from talkthemes.ingest.tables.dates import date_column_values
from talkthemes.ingest.tables.files import RawTable
from talkthemes.ingest.txt import mapper_for, parse_clock, parse_turns

__all__ = ["read_per_turn"]


def read_per_turn(
    table: RawTable,
    settings: IngestSettings,
    stem: str,
    text_col: int,
    id_col: int | None,
    speaker_col: int | None,
    date_col: int | None,
) -> Iterator[Transcript | Reject | Warning_]:
    """Read a table of one row per turn (see the module docstring for the rules).

    Parameters
    ----------
    table : RawTable
    settings : IngestSettings
        Start column name (empty = detect) and speaker label lists.
    stem : str
        The file name without extension (the id when there is no id column).
    text_col, id_col, speaker_col, date_col : int or None
        The columns found (``text_col`` always).

    Yields
    ------
    Transcript, Reject or Warning_
    """
    mapper = mapper_for(settings)
    cols = table.columns
    role_col = find_column(cols, "", ROLE_NAMES)
    if role_col == speaker_col:
        role_col = None
    start_col = find_column(cols, settings.start_column, START_NAMES)
    if start_col is None and settings.start_column:
        yield Warning_(
            table.source,
            f"no column {settings.start_column!r} (setting [ingest] start_column); "
            "turns get no start time",
        )
    end_col = find_column(cols, "", END_NAMES)
    used = {text_col, id_col, speaker_col, role_col, start_col, end_col, date_col}
    meta_cols = [(k, c) for k, c in enumerate(cols) if k not in used]
    if id_col is None:
        yield Warning_(
            table.source,
            f"per-turn table without a transcript id column; read as one transcript {stem!r}",
        )

    groups: dict[str, list[int]] = {}
    for r, row in enumerate(table.rows):
        n = table.numbers[r]
        if row[text_col] is None:
            yield Reject(table.source, f"{table.where(n)}: empty text", table.format, row=n)
            continue
        if id_col is None:
            tid = stem
        else:
            raw = row[id_col]
            tid = raw.strip() if raw is not None else ""
            if not tid:
                yield Reject(
                    table.source, f"{table.where(n)}: no transcript id", table.format, row=n
                )
                continue
        groups.setdefault(tid, []).append(r)

    all_rows = [r for rs in groups.values() for r in rs]
    dates: dict[int, str] = {}
    if date_col is not None:
        dates, warnings = date_column_values(table, date_col, all_rows)
        yield from warnings

    bad_times = 0
    first_bad: int | None = None
    for tid, rows in groups.items():
        turns: list[Turn] = []
        for r in rows:
            row = table.rows[r]
            speaker = (row[speaker_col] or "").strip() if speaker_col is not None else ""
            role_label = row[role_col] if role_col is not None else None
            role = mapper.role(role_label.strip() if role_label else speaker)
            start = end = None
            for col, is_start in ((start_col, True), (end_col, False)):
                if col is None or row[col] is None:
                    continue
                seconds = parse_clock(row[col])
                if seconds is None:
                    bad_times += 1
                    first_bad = first_bad or table.numbers[r]
                elif is_start:
                    start = seconds
                else:
                    end = seconds
            if speaker_col is None:  # no speaker column: the text may hold "Name: ..." lines
                parsed = parse_turns(row[text_col] or "", mapper)
                if parsed and (start is not None or end is not None):
                    first = parsed[0]
                    parsed[0] = Turn(first.speaker, first.role, first.text, start, end)
                turns.extend(parsed)
                continue
            text = " ".join((row[text_col] or "").split())
            turns.append(Turn(speaker, role, text, start, end))
        if start_col is not None and all(t.start is not None for t in turns):
            turns.sort(key=lambda t: t.start)  # type: ignore[arg-type,return-value]
        metadata: dict[str, str] = {}
        for k, name in meta_cols:
            values = {table.rows[r][k] for r in rows} - {None}
            if len(values) == 1:
                metadata[name] = values.pop()
        days = [dates[r] for r in rows if r in dates]
        if days:
            metadata["date"] = min(days)
        numbers = [table.numbers[r] for r in rows]
        lo, hi = min(numbers), max(numbers)
        where = f"{table.unit} {lo}" if lo == hi else f"{table.unit}s {lo}-{hi}"
        yield Transcript(tid, turns, f"{table.source}:{where}", table.format, metadata)
    if bad_times:
        yield Warning_(
            table.source,
            f"{bad_times} start/end time value(s) not read as seconds or [hh:]mm:ss "
            f"(first at {table.where(first_bad or 0)}); those turns have no time",
            row=first_bad,
        )
