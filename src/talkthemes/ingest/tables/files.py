"""Reading table files into memory: CSV (RFC 4180), JSON Lines and Parquet.

Every cell becomes a string, or None when empty. Row numbers in messages are 1-based: data
rows after the header for CSV, lines for JSONL, rows for Parquet. A JSONL line that is not a
JSON object, or a CSV row with more fields than the header, is rejected; the other rows are
kept. CSV is read with Python's :mod:`csv` module; a header line without commas but with
tabs or semicolons selects that delimiter instead.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from talkthemes.calls.model import Reject, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.decode import load_text, max_bytes, oversize_reject

__all__ = ["TABLE_FORMATS", "RawTable", "load_table", "row_name", "table_from_rows"]

TABLE_FORMATS = {".csv": "csv", ".jsonl": "jsonl", ".ndjson": "jsonl", ".parquet": "parquet"}


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


def table_from_rows(
    source: str,
    fmt: str,
    columns: Sequence[Any],
    rows: Iterable[Sequence[Any]],
    *,
    first: int = 1,
) -> RawTable:
    """A table already in memory (a data frame's rows, say) as a :class:`RawTable`.

    Cells become strings as in Parquet files (None for missing, empty and NaN values);
    duplicate or empty column names are made unique as in files.

    Parameters
    ----------
    source : str
        What messages call the table.
    fmt : str
        The format named in rejects.
    columns : sequence
        Column names.
    rows : iterable of sequence
        The rows, aligned with ``columns``.
    first : int
        The number of the first row in messages (rows are numbered from it).
    """
    table = RawTable(source, fmt, _unique_columns(columns))
    for number, row in enumerate(rows, start=first):
        table.rows.append([_cell(v) for v in row])
        table.numbers.append(number)
    return table


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
