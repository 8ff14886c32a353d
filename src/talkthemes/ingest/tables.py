"""Tables of transcripts: ``.csv``, ``.jsonl`` and ``.parquet``.

Two shapes are read:

* **per transcript** — one row per transcript: an id column and a text column. The text may
  itself hold ``Speaker: text`` lines, which are split into turns as in ``.txt`` files.
  Every other column becomes metadata (as strings).
* **per turn** — one row per turn: transcript id, speaker (or role), text and optionally
  a start (and end) time. Rows are grouped by id even when they are not contiguous;
  transcripts appear in the order their id first appears; turns keep their row order,
  or are sorted by start time when every turn of that transcript has one. Columns whose
  value is the same on every row of a transcript become its metadata; the date is the
  earliest date on its rows.

A table is read **per turn** when an id repeats, or when it has a speaker column that is
configured or named ``speaker``, ``speaker_label``, ``speaker_name``, ``speaker_role`` or
``role``, or when it has a speaker column but no id column. Other speaker-like names
(``channel``, ``party``, ``side``, ...) are common metadata of per-transcript tables, so
they count only when ids repeat. Otherwise the table is read per transcript. A per-turn
table without an id column is one transcript named after the file (with a warning).

Columns are the configured ones (``IngestSettings.id_column`` etc.) or, when those are
empty, the first of a list of common names (compared case-insensitively, with spaces and
dashes read as underscores): see ``ID_NAMES``, ``TEXT_NAMES``, ``SPEAKER_NAMES``,
``ROLE_NAMES``, ``START_NAMES``, ``END_NAMES`` and ``DATE_NAMES``. The date column's
value is stored as metadata ``date``, normalised to ISO 8601 (:func:`normalise_date`).

Row numbers in messages are 1-based: data rows after the header for CSV, lines for JSONL,
rows for Parquet. Bad rows are rejected one by one; the rest of the table is kept:

* no text column → one reject for the table, naming the columns found;
* empty text → reject for that row;
* per-transcript row without an id → id ``<file stem>-<row>`` (with a warning when the
  table has an id column; silently when it has none);
* per-turn row without an id → reject for that row;
* per-turn table without a speaker column (ids repeat) → each row's text is split into
  turns like a ``.txt`` file, so ``Name: text`` lines still give speakers;
* JSONL line that is not a JSON object → reject naming the line; the other lines are kept;
* CSV row with more fields than the header → reject for that row.

CSV follows RFC 4180 (quoted fields may hold commas, doubled quotes and line breaks) via
Python's :mod:`csv` module; a header line without commas but with tabs or semicolons
selects that delimiter instead.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import math
import re
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from talkthemes.config import IngestSettings
from talkthemes.ingest.decode import load_text, max_bytes, oversize_reject
from talkthemes.ingest.model import Reject, Transcript, Turn, Warning_
from talkthemes.ingest.txt import mapper_for, parse_clock, parse_turns

__all__ = [
    "DATE_NAMES",
    "END_NAMES",
    "ID_NAMES",
    "ROLE_NAMES",
    "SPEAKER_NAMES",
    "SPEAKER_NAMES_STRONG",
    "START_NAMES",
    "TABLE_FORMATS",
    "TEXT_NAMES",
    "RawTable",
    "date_column_values",
    "date_order",
    "find_column",
    "load_table",
    "normalise_date",
    "read_table",
    "row_name",
]

TABLE_FORMATS = {".csv": "csv", ".jsonl": "jsonl", ".ndjson": "jsonl", ".parquet": "parquet"}

ID_NAMES = (
    "transcript_id", "call_id", "conversation_id", "interview_id", "session_id", "contact_id",
    "interaction_id", "recording_id", "document_id", "doc_id", "call", "conversation", "id",
    "file_name", "filename", "file",
)  # fmt: skip
TEXT_NAMES = (
    "text", "transcript", "transcript_text", "transcription", "utterance", "utterance_text",
    "turn_text", "segment_text", "content", "message", "body", "sentence",
)  # fmt: skip
SPEAKER_NAMES = (
    "speaker", "speaker_label", "speaker_name", "speaker_role", "role", "party",
    "participant", "participant_role", "channel", "side", "who",
)  # fmt: skip
#: Speaker column names that make a table per-turn by themselves; the other names of
#: SPEAKER_NAMES ("channel", "party", ...) also occur in per-transcript tables, so they make a
#: table per-turn only when transcript ids repeat.
SPEAKER_NAMES_STRONG = ("speaker", "speaker_label", "speaker_name", "speaker_role", "role")
ROLE_NAMES = ("role", "speaker_role", "participant_role", "party")
START_NAMES = (
    "start", "start_time", "starttime", "start_sec", "start_secs", "start_seconds", "start_s",
    "offset", "begin", "begin_time", "time", "timestamp",
)  # fmt: skip
END_NAMES = ("end", "end_time", "endtime", "end_sec", "end_seconds", "end_s", "stop", "stop_time")
DATE_NAMES = (
    "date", "call_date", "calldate", "conversation_date", "interview_date", "session_date",
    "contact_date", "start_date", "datetime", "date_time", "call_datetime", "call_start",
    "started_at", "created_at", "created", "day",
)  # fmt: skip

_NON_WORD = re.compile(r"[^0-9a-z]+")


@dataclass(slots=True)
class RawTable:
    """A table read into memory with every cell as a string (or None when empty).

    Attributes
    ----------
    source : str
        The file.
    format : str
        ``csv``, ``jsonl`` or ``parquet``.
    columns : list of str
        Column names in file order.
    rows : list of list of (str or None)
        One list per data row, aligned with ``columns``.
    numbers : list of int
        The 1-based row number (CSV data row, JSONL line, Parquet row) of each row.
    """

    source: str
    format: str
    columns: list[str]
    rows: list[list[str | None]] = field(default_factory=list)
    numbers: list[int] = field(default_factory=list)

    @property
    def unit(self) -> str:
        """What a row number counts: ``line`` for JSONL, ``row`` otherwise."""
        return "line" if self.format == "jsonl" else "row"

    def where(self, number: int) -> str:
        """How a row is named in messages, e.g. ``row 3 (data rows after the header)``."""
        return row_name(self.format, number)


def row_name(fmt: str, number: int) -> str:
    """How row ``number`` of a ``fmt`` table is named in messages.

    Examples
    --------
    >>> row_name("csv", 3), row_name("jsonl", 3), row_name("parquet", 3)
    ('row 3 (counting data rows after the header)', 'line 3', 'row 3')
    """
    if fmt == "csv":
        return f"row {number} (counting data rows after the header)"
    if fmt == "jsonl":
        return f"line {number}"
    return f"row {number}"


def _norm(name: str) -> str:
    return _NON_WORD.sub("_", name.casefold()).strip("_")


def find_column(columns: Sequence[str], configured: str, candidates: Sequence[str]) -> int | None:
    """Index of the configured column, or of the first candidate name present.

    Names are compared exactly first, then case-insensitively with spaces and dashes read
    as underscores.

    Parameters
    ----------
    columns : sequence of str
        The table's column names.
    configured : str
        The configured name; empty means "detect from ``candidates``".
    candidates : sequence of str
        Common names, in order of preference (already normalised).

    Returns
    -------
    int or None
        None when the configured column, or every candidate, is missing.
    """
    if configured:
        if configured in columns:
            return columns.index(configured)
        want = _norm(configured)
        for k, col in enumerate(columns):
            if _norm(col) == want:
                return k
        return None
    normed = {}
    for k, col in enumerate(columns):
        normed.setdefault(_norm(col), k)
    for name in candidates:
        if name in normed:
            return normed[name]
    return None


def _cell(value: Any) -> str | None:
    """A cell value as a string; None for missing, empty and NaN values."""
    if value is None:
        return None
    if isinstance(value, str):
        return value if value.strip() else None
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        if not math.isfinite(value):
            return None
        return str(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, dt.datetime | dt.date | dt.time):
        return value.isoformat()
    if isinstance(value, dt.timedelta):
        return repr(value.total_seconds())
    if isinstance(value, bytes):
        return value.decode("utf-8", errors="replace") or None
    if isinstance(value, dict | list | tuple):
        return json.dumps(value, ensure_ascii=False, default=str)
    return str(value)


# --- dates --------------------------------------------------------------------------------

_ISO_DATE = re.compile(r"\d{4}-\d{2}-\d{2}")
_HAS_TIME = re.compile(r"\d{1,2}:\d{2}")
_NUMERIC_DATE = re.compile(
    r"(\d{1,4})([/.\-])(\d{1,2})\2(\d{1,4})"
    r"(?:[ T,]+(\d{1,2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,6}))?)?\s*([AaPp][Mm])?)?"
)
_NAMED_FORMATS = (
    "%d %B %Y", "%d %b %Y", "%B %d, %Y", "%b %d, %Y", "%B %d %Y", "%b %d %Y",
    "%d-%b-%Y", "%a, %d %b %Y %H:%M:%S", "%a %d %b %Y",
)  # fmt: skip


def date_order(values: Sequence[str | None]) -> tuple[str, bool]:
    """Day/month order for numeric dates such as ``03/04/2024`` in one column.

    Parameters
    ----------
    values : sequence of str or None
        The column's values.

    Returns
    -------
    order : str
        ``"dmy"`` when some value has a first part over 12, else ``"mdy"``.
    ambiguous : bool
        True when some value needed the order but no value settled it (both parts ≤ 12
        everywhere), so ``"mdy"`` is an assumption worth a warning.
    """
    needs = dmy = mdy = False
    for v in values:
        if not v:
            continue
        m = _NUMERIC_DATE.match(v.strip())
        if m is None or len(m.group(1)) == 4 or m.group(2) == ".":
            continue
        needs = True
        a, b = int(m.group(1)), int(m.group(3))
        dmy |= a > 12
        mdy |= b > 12
    if dmy and not mdy:
        return "dmy", False
    return "mdy", needs and not mdy and not dmy


def _year(text: str) -> int:
    year = int(text)
    return year + 2000 if len(text) <= 2 else year


def normalise_date(value: str, order: str = "mdy") -> str | None:
    """A date (or date and time) as ISO 8601, or None when it cannot be read.

    Accepted: ISO 8601 dates and date-times (``2024-03-01``, ``2024-03-01T10:15:00Z``,
    ``2024-03-01 10:15``); numeric dates ``2024/03/01``, ``01.03.2024`` (dots: day first),
    ``03/01/2024`` (slashes or dashes: order given by ``order``, from :func:`date_order`),
    each optionally followed by ``hh:mm[:ss] [am|pm]``; English month names
    (``1 March 2024``, ``Mar 1, 2024``).

    Parameters
    ----------
    value : str
        The value as written.
    order : {"mdy", "dmy"}
        How to read numeric dates whose year comes last and whose separator is ``/``
        or ``-``.

    Returns
    -------
    str or None
        ``YYYY-MM-DD`` when only a date is given; the full ISO date-time (with its offset,
        when one is given) when a time is given.

    Examples
    --------
    >>> normalise_date("2024-03-01"), normalise_date("01.03.2024 14:05")
    ('2024-03-01', '2024-03-01T14:05:00')
    >>> normalise_date("03/01/2024"), normalise_date("03/01/2024", "dmy")
    ('2024-03-01', '2024-01-03')
    """
    v = value.strip()
    if not v:
        return None
    if _ISO_DATE.match(v):
        try:
            parsed = dt.datetime.fromisoformat(v[:-1] + "+00:00" if v.endswith("Z") else v)
        except ValueError:
            return None
        return parsed.isoformat() if _HAS_TIME.search(v) else parsed.date().isoformat()
    m = _NUMERIC_DATE.fullmatch(v)
    if m is not None:
        a, sep, b, c = m.group(1), m.group(2), m.group(3), m.group(4)
        try:
            if len(a) == 4:
                day = dt.date(int(a), int(b), int(c))
            elif sep == "." or order == "dmy":
                day = dt.date(_year(c), int(b), int(a))
            else:
                day = dt.date(_year(c), int(a), int(b))
            if m.group(5) is None:
                return day.isoformat()
            hour = int(m.group(5))
            ampm = (m.group(9) or "").lower()
            if ampm:
                if not 1 <= hour <= 12:
                    return None
                hour = hour % 12 + (12 if ampm == "pm" else 0)
            frac = m.group(8) or ""
            moment = dt.datetime(
                day.year, day.month, day.day, hour, int(m.group(6)), int(m.group(7) or 0),
                int(frac.ljust(6, "0")) if frac else 0,
            )  # fmt: skip
            return moment.isoformat()
        except ValueError:
            return None
    for fmt in _NAMED_FORMATS:
        try:
            parsed = dt.datetime.strptime(v, fmt)
        except ValueError:
            continue
        return parsed.isoformat() if "%H" in fmt else parsed.date().isoformat()
    return None


# --- loading ------------------------------------------------------------------------------


def _load_csv(
    path: Path, settings: IngestSettings
) -> tuple[RawTable | None, list[Reject | Warning_]]:
    source = str(path)
    text, notes = load_text(path, settings, "csv")
    if text is None:
        return None, notes
    newline = text.find("\n")
    first = text if newline < 0 else text[:newline]
    delimiter = ","
    if "," not in first:
        if "\t" in first:
            delimiter = "\t"
        elif ";" in first:
            delimiter = ";"
    previous_limit = csv.field_size_limit()
    # A field may hold a whole transcript: allow anything up to the file size limit.
    csv.field_size_limit(max(previous_limit, min(max_bytes(settings) + 1, 2**31 - 1)))
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    try:
        header = next(reader, None)
        if header is None:
            notes.append(Reject(source, "no header row", "csv"))
            return None, notes
        columns = _unique_columns(header)
        width = len(columns)
        table = RawTable(source, "csv", columns)
        number = 0
        for row in reader:
            if not row or (len(row) == 1 and not row[0].strip()):
                continue
            number += 1
            if len(row) > width:
                extra = row[width:]
                if any(x.strip() for x in extra):
                    notes.append(
                        Reject(
                            source,
                            f"{table.where(number)}: {len(row)} fields but the header has "
                            f"{width} (an unquoted comma in a field?)",
                            "csv",
                            row=number,
                        )
                    )
                    continue
                row = row[:width]
            cells: list[str | None] = [c if c and not c.isspace() else None for c in row]
            if len(cells) < width:
                cells.extend([None] * (width - len(cells)))
            table.rows.append(cells)
            table.numbers.append(number)
    except csv.Error as exc:
        notes.append(
            Reject(source, f"not readable as CSV near line {reader.line_num}: {exc}", "csv")
        )
        return None, notes
    finally:
        csv.field_size_limit(previous_limit)
    return table, notes


def _unique_columns(names: Sequence[Any]) -> list[str]:
    columns: list[str] = []
    seen: set[str] = set()
    for k, raw in enumerate(names):
        name = str(raw).strip() if raw is not None else ""
        name = name or f"column_{k + 1}"
        base, n = name, 2
        while name in seen:
            name, n = f"{base}_{n}", n + 1
        seen.add(name)
        columns.append(name)
    return columns


def _load_jsonl(
    path: Path, settings: IngestSettings
) -> tuple[RawTable | None, list[Reject | Warning_]]:
    source = str(path)
    text, notes = load_text(path, settings, "jsonl")
    if text is None:
        return None, notes
    records: list[tuple[int, dict[str, Any]]] = []
    order: dict[str, None] = {}
    loads = json.loads
    for number, line in enumerate(text.split("\n"), start=1):
        if not line or line.isspace():
            continue
        try:
            obj = loads(line)
        except ValueError as exc:
            notes.append(
                Reject(source, f"line {number}: not valid JSON ({exc.msg})", "jsonl", row=number)
            )
            continue
        if not isinstance(obj, dict):
            notes.append(
                Reject(
                    source,
                    f"line {number}: a JSON {type(obj).__name__}, not an object",
                    "jsonl",
                    row=number,
                )
            )
            continue
        for key in obj:
            if key not in order:
                order[key] = None
        records.append((number, obj))
    columns = list(order)
    table = RawTable(source, "jsonl", columns)
    for number, obj in records:
        table.rows.append([_cell(obj.get(c)) for c in columns])
        table.numbers.append(number)
    return table, notes


def _load_parquet(
    path: Path, settings: IngestSettings
) -> tuple[RawTable | None, list[Reject | Warning_]]:
    source = str(path)
    try:
        size = path.stat().st_size
    except OSError as exc:
        return None, [Reject(source, f"cannot be read: {exc.strerror or exc}", "parquet")]
    if size > max_bytes(settings):
        return None, [oversize_reject(path, size, settings, "parquet")]
    if size == 0:
        return None, [Reject(source, "empty file (0 bytes)", "parquet")]
    import pyarrow.parquet as pq  # heavy import, only when a Parquet file is read

    try:
        data = pq.read_table(path)
    except Exception as exc:  # pyarrow raises several types for corrupt files
        return None, [Reject(source, f"not a readable Parquet file: {exc}", "parquet")]
    columns = _unique_columns(data.column_names)
    cols = [[_cell(v) for v in data.column(k).to_pylist()] for k in range(data.num_columns)]
    table = RawTable(source, "parquet", columns)
    table.rows = [list(r) for r in zip(*cols, strict=True)] if cols else []
    table.numbers = list(range(1, len(table.rows) + 1))
    return table, []


_LOADERS = {"csv": _load_csv, "jsonl": _load_jsonl, "parquet": _load_parquet}


def load_table(
    path: Path, settings: IngestSettings
) -> tuple[RawTable | None, list[Reject | Warning_]]:
    """Read a ``.csv``, ``.jsonl``/``.ndjson`` or ``.parquet`` file into a :class:`RawTable`.

    Parameters
    ----------
    path : Path
        The file; the format follows its extension.
    settings : IngestSettings
        Size limit and fallback encoding.

    Returns
    -------
    table : RawTable or None
        None when the whole file was rejected.
    notes : list of Reject or Warning_
        File-level and row-level rejects (corrupt JSONL lines, ragged CSV rows) and warnings.
    """
    fmt = TABLE_FORMATS.get(path.suffix.lower())
    if fmt is None:
        return None, [Reject(str(path), f"not a table format: {path.suffix!r}", "table")]
    return _LOADERS[fmt](path, settings)


# --- reading transcripts ------------------------------------------------------------------


def _missing(table: RawTable, what: str, setting: str, configured: str) -> Reject:
    found = ", ".join(repr(c) for c in table.columns) or "none"
    if configured:
        reason = f"no column {configured!r} (setting [ingest] {setting}) for the {what}"
    else:
        reason = f"no {what} column found"
    return Reject(table.source, f"{reason}; columns found: {found}", table.format)


def date_column_values(
    table: RawTable, col: int, rows: Sequence[int]
) -> tuple[dict[int, str], list[Warning_]]:
    """Normalise the dates of one column over some rows.

    Parameters
    ----------
    table : RawTable
    col : int
        The date column.
    rows : sequence of int
        Row indices to read (the day/month order is decided over these rows).

    Returns
    -------
    dates : dict of int to str
        ISO dates by row index, for the values that could be read.
    warnings : list of Warning_
        One per unreadable value (with its row), plus one when day/month order was assumed.
    """
    values = [table.rows[r][col] for r in rows]
    order, ambiguous = date_order(values)
    name = table.columns[col]
    warnings: list[Warning_] = []
    if ambiguous:
        warnings.append(
            Warning_(
                table.source,
                f"column {name!r}: numeric dates with day and month both ≤ 12 only; "
                "read as month/day/year",
            )
        )
    out: dict[int, str] = {}
    for r, v in zip(rows, values, strict=True):
        if v is None:
            continue
        iso = normalise_date(v, order)
        if iso is None:
            n = table.numbers[r]
            warnings.append(
                Warning_(
                    table.source,
                    f"{table.where(n)}: date {v!r} in column {name!r} not understood; left out",
                    row=n,
                )
            )
        else:
            out[r] = iso
    return out, warnings


def read_table(path: Path, settings: IngestSettings) -> Iterator[Transcript | Reject | Warning_]:
    """Read the transcripts of a ``.csv``, ``.jsonl``/``.ndjson`` or ``.parquet`` table.

    See the module docstring for the shapes, column detection and row rules.

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
    if table is None:
        return
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
        or _norm(table.columns[speaker_col]) in SPEAKER_NAMES_STRONG
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
        yield from _per_turn(table, settings, path.stem, text_col, id_col, speaker_col, date_col)
    else:
        yield from _per_transcript(table, settings, path.stem, text_col, id_col, date_col)


#: Share of a table's ids that must repeat for a table without a clear speaker column to be
#: read per turn; below it, a repeated id in a table of one row per call is an error.
PER_TURN_REPEAT_SHARE = 0.5


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


def _per_transcript(
    table: RawTable,
    settings: IngestSettings,
    stem: str,
    text_col: int,
    id_col: int | None,
    date_col: int | None,
) -> Iterator[Transcript | Reject | Warning_]:
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


def _per_turn(
    table: RawTable,
    settings: IngestSettings,
    stem: str,
    text_col: int,
    id_col: int | None,
    speaker_col: int | None,
    date_col: int | None,
) -> Iterator[Transcript | Reject | Warning_]:
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
