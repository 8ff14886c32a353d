"""Manifest tables: metadata for transcripts, keyed by transcript id or file name.

A manifest is a ``.csv``, ``.jsonl``/``.ndjson`` or ``.parquet`` table with one key column
and any number of metadata columns (date, queue, site, duration, ...).

* Key column: ``IngestSettings.manifest_key_column``, else ``id_column``, else the first of
  ``KEY_NAMES`` present (case-insensitive). Without one the manifest is rejected, naming
  the columns found.
* Keys are transcript ids. A key ending in a known extension (a transcript format, or a
  common audio or caption extension such as ``.wav``) is a file name: its folders and
  extension are dropped, so ``calls/2024/c-001.wav`` and ``c-001.txt`` both key ``c-001``.
* Values are strings; empty cells are left out. The date column (``date_column``, else
  detected as in tables) is stored as ``date``, normalised to ISO 8601 (``YYYY-MM-DD``, or
  a full date-time when a time is given); a value that cannot be read gets a warning with
  its row and is left out.
* A row without a key is rejected; a key seen again replaces the earlier row's values
  (with a warning).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

from talkthemes.calls.model import Reject, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.detect import FORMATS
from talkthemes.ingest.tables.columns import DATE_NAMES, find_column
from talkthemes.ingest.tables.dates import date_column_values
from talkthemes.ingest.tables.files import load_table, row_name

__all__ = ["KEY_NAMES", "Manifest", "manifest_key", "read_manifest"]

KEY_NAMES = (
    "transcript_id", "call_id", "conversation_id", "interview_id", "session_id", "contact_id",
    "interaction_id", "recording_id", "document_id", "doc_id", "id", "call", "conversation",
    "transcript", "file_name", "filename", "file", "file_path", "filepath", "path",
    "recording", "audio_file", "name", "source",
)  # fmt: skip

_FILE_EXTENSIONS = frozenset(
    {
        *FORMATS,
        ".json", ".srt", ".wav", ".mp3", ".flac", ".m4a", ".ogg", ".opus", ".aac", ".wma",
        ".mp4", ".webm",
    }
)  # fmt: skip
_SEPARATORS = re.compile(r"[/\\]")


@dataclass(slots=True)
class Manifest:
    """Metadata per transcript read from a manifest table.

    Attributes
    ----------
    entries : dict of str to dict of str to str
        Transcript id → metadata.
    rejects : list of Reject
        The whole file (then ``entries`` is empty) or single rows.
    warnings : list of Warning_
    key_column : str
        The column the keys came from ("" when none was found).
    source : str
        The manifest file.
    rows : dict of str to int
        Transcript id → number of the row its values came from (as in messages).
    format : str
        ``csv``, ``jsonl`` or ``parquet`` (how row numbers are named).
    """

    entries: dict[str, dict[str, str]] = field(default_factory=dict)
    rejects: list[Reject] = field(default_factory=list)
    warnings: list[Warning_] = field(default_factory=list)
    key_column: str = ""
    source: str = ""
    rows: dict[str, int] = field(default_factory=dict)
    format: str = "csv"

    def get(self, tid: str) -> dict[str, str] | None:
        """The metadata of one transcript, or None."""
        return self.entries.get(tid)

    def where(self, tid: str) -> str:
        """How the row of ``tid`` is named in messages (``row 3 (counting ...)``)."""
        return row_name(self.format, self.rows[tid])


def manifest_key(value: str) -> str:
    """The transcript id a manifest key stands for.

    Examples
    --------
    >>> manifest_key(" c-001 "), manifest_key("calls/2024/c-001.WAV"), manifest_key("v1.2")
    ('c-001', 'c-001', 'v1.2')
    """
    key = value.strip()
    dot = key.rfind(".")
    if dot > 0 and key[dot:].lower() in _FILE_EXTENSIONS:
        key = _SEPARATORS.split(key[:dot])[-1]
    return key


def read_manifest(path: Path, settings: IngestSettings) -> Manifest:
    """Read a manifest table.

    Parameters
    ----------
    path : Path
        A ``.csv``, ``.jsonl``/``.ndjson`` or ``.parquet`` file.
    settings : IngestSettings
        Key and date column names (empty = detect), size limit, fallback encoding.

    Returns
    -------
    Manifest
    """
    out = Manifest(source=str(path))
    table, notes = load_table(path, settings)
    for note in notes:
        (out.rejects if isinstance(note, Reject) else out.warnings).append(note)
    if table is None:
        return out
    configured = settings.manifest_key_column
    key_col = find_column(table.columns, configured, KEY_NAMES)
    if key_col is None and not configured and settings.id_column:
        key_col = find_column(table.columns, settings.id_column, ())
    if key_col is None:
        found = ", ".join(repr(c) for c in table.columns) or "none"
        what = (
            f"no column {configured!r} (setting [ingest] manifest_key_column)"
            if configured
            else "no transcript id or file name column found"
        )
        out.rejects.append(Reject(table.source, f"{what}; columns found: {found}", table.format))
        return out
    out.key_column = table.columns[key_col]
    out.format = table.format
    date_col = find_column(table.columns, settings.date_column, DATE_NAMES)
    if date_col == key_col:
        date_col = None
    dates: dict[int, str] = {}
    if date_col is not None:
        dates, warnings = date_column_values(table, date_col, range(len(table.rows)))
        out.warnings.extend(warnings)
    meta_cols = [(k, c) for k, c in enumerate(table.columns) if k not in (key_col, date_col)]
    first_row: dict[str, int] = {}
    for r, row in enumerate(table.rows):
        n = table.numbers[r]
        raw = row[key_col]
        key = manifest_key(raw) if raw is not None else ""
        if not key:
            out.rejects.append(
                Reject(
                    table.source,
                    f"{table.where(n)}: no value in key column {out.key_column!r}",
                    table.format,
                    row=n,
                )
            )
            continue
        if key in first_row:
            out.warnings.append(
                Warning_(
                    table.source,
                    f"{table.where(n)}: key {key!r} already given at "
                    f"{table.where(first_row[key])}; this row's values are used",
                    row=n,
                )
            )
        first_row[key] = n
        out.rows[key] = n
        meta = {c: row[k] for k, c in meta_cols if row[k] is not None}
        if r in dates:
            meta["date"] = dates[r]
        out.entries[key] = meta
    return out
