"""Which column is which: common names for ids, text, speakers, times and dates.

Columns are the configured ones (``IngestSettings.id_column`` etc.) or, when those are
empty, the first of a list of common names (compared case-insensitively, with spaces and
dashes read as underscores).
"""

from __future__ import annotations

import re
from collections.abc import Sequence

__all__ = [
    "DATE_NAMES",
    "END_NAMES",
    "ID_NAMES",
    "ROLE_NAMES",
    "SPEAKER_NAMES",
    "SPEAKER_NAMES_STRONG",
    "START_NAMES",
    "TEXT_NAMES",
    "find_column",
    "normalise_name",
]

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


def normalise_name(name: str) -> str:
    """A column name as compared with the lists: case-folded, non-alphanumerics as ``_``."""
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
        want = normalise_name(configured)
        for k, col in enumerate(columns):
            if normalise_name(col) == want:
                return k
        return None
    normed = {}
    for k, col in enumerate(columns):
        normed.setdefault(normalise_name(col), k)
    for name in candidates:
        if name in normed:
            return normed[name]
    return None
