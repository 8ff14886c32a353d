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

A table is read **per turn** when it has a speaker column that is configured or named
``speaker``, ``speaker_label``, ``speaker_name``, ``speaker_role`` or ``role``, or a speaker
column but no id column, or when most ids repeat (at least ``PER_TURN_REPEAT_SHARE``, half,
of its distinct ids are on more than one row). Other speaker-like names (``channel``,
``party``, ``side``, ...) are common metadata of per-transcript tables, so they count only
when ids repeat. Otherwise the table is read per transcript, and an id that repeats there
is two calls under one id: the later row is rejected naming both rows (an exact copy of an
earlier row is skipped with a warning). A per-turn table without an id column is one
transcript named after the file (with a warning).

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
* per-transcript row with an id an earlier row has → reject for that row (a copy of the
  earlier row: warning, skipped);
* per-turn row without an id → reject for that row;
* per-turn table without a speaker column (most ids repeat) → each row's text is split into
  turns like a ``.txt`` file, so ``Name: text`` lines still give speakers;
* JSONL line that is not a JSON object → reject naming the line; the other lines are kept;
* CSV row with more fields than the header → reject for that row.

CSV follows RFC 4180 (quoted fields may hold commas, doubled quotes and line breaks) via
Python's :mod:`csv` module; a header line without commas but with tabs or semicolons
selects that delimiter instead.

Modules: :mod:`~.files` reads the files, :mod:`~.columns` finds the columns,
:mod:`~.dates` reads dates, :mod:`~.read` picks the shape, :mod:`~.per_call` and
:mod:`~.per_turn` turn rows into transcripts.
"""
