"""Transcripts given as records in memory: what a program sends rather than a file.

A record is a mapping in one of the two shapes the table ingest reads
(:mod:`talkthemes.ingest.tables`), one record per transcript:

* ``{"id": "c-1", "text": "Agent: hello\\nCustomer: my bill ...", "metadata": {...}}`` —
  the text, whose ``Speaker: text`` lines are split into turns as in ``.txt`` files;
* ``{"id": "c-2", "turns": [{"speaker": "Agent", "text": "hello", "start": 0.0}, ...],
  "metadata": {...}}`` — the turns, each with ``text`` and optionally ``speaker``,
  ``role`` (``agent``, ``customer``, ``unknown``; else read from the speaker label through
  the ``[ingest]`` label lists), ``start`` and ``end`` (seconds).

``metadata`` (optional) maps field names to strings, numbers or booleans, kept as strings;
a ``date`` field is normalised to ISO 8601 as a table's date column is (a value that
cannot be read is left out, with a warning). Records are counted from 0 in messages, as
list positions are. A record that cannot be used is rejected with the reason and its
position; the others are read:

* not a mapping, an unknown key, an id or text that is not a string → rejected;
* both ``text`` and ``turns``, or neither → rejected;
* a text, or every turn, empty or only whitespace → rejected (``empty text``);
* an empty id, or none where ids are required → rejected (without ``require_id``, the id
  is the record's position: ``"0"``, ``"1"``, ...);
* an id an earlier record has → rejected, naming both (two calls are never merged).
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from typing import Any

from talkthemes.calls.model import ROLES, Reject, Transcript, Turn, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.tables.dates import normalise_date
from talkthemes.ingest.txt import mapper_for, parse_turns

__all__ = ["RECORD_FORMAT", "RECORD_KEYS", "TURN_KEYS", "read_records"]

#: The format named in counts and rejects for transcripts given as records.
RECORD_FORMAT = "records"
#: The keys a record may have, and those of a turn.
RECORD_KEYS = frozenset({"id", "text", "turns", "metadata"})
TURN_KEYS = frozenset({"speaker", "role", "text", "start", "end"})

Item = Transcript | Reject | Warning_


class _BadRecordError(Exception):
    """A record that cannot be used (the message is the reason)."""


def _number(value: Any, what: str) -> float | None:
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise _BadRecordError(f"{what} must be a number of seconds")
    return float(value)


def _turns(raw: Any, settings: IngestSettings) -> list[Turn]:
    if not isinstance(raw, Sequence) or isinstance(raw, str):
        raise _BadRecordError("'turns' must be a list of turns")
    mapper = mapper_for(settings)
    turns = []
    for j, turn in enumerate(raw):
        where = f"turn {j}"
        if not isinstance(turn, Mapping):
            raise _BadRecordError(f"{where} is not an object")
        unknown = sorted(set(turn) - TURN_KEYS)
        if unknown:
            raise _BadRecordError(f"{where}: unknown key(s) {', '.join(map(repr, unknown))}")
        text, speaker, role = turn.get("text"), turn.get("speaker") or "", turn.get("role")
        if not isinstance(text, str):
            raise _BadRecordError(f"{where}: 'text' must be a string")
        if not isinstance(speaker, str):
            raise _BadRecordError(f"{where}: 'speaker' must be a string")
        if role is not None and role not in ROLES:
            raise _BadRecordError(f"{where}: 'role' must be one of {', '.join(ROLES)}")
        text = " ".join(text.split())
        if not text:
            continue  # an empty turn says nothing; a record of only empty turns is empty
        speaker = speaker.strip()
        start = _number(turn.get("start"), f"{where}: 'start'")
        end = _number(turn.get("end"), f"{where}: 'end'")
        turns.append(Turn(speaker, role or mapper.role(speaker), text, start, end))
    return turns


def _metadata(raw: Any, source: str, where: str) -> tuple[dict[str, str], list[Warning_]]:
    if raw is None:
        return {}, []
    if not isinstance(raw, Mapping):
        raise _BadRecordError("'metadata' must be an object of fields")
    out: dict[str, str] = {}
    warnings = []
    for key, value in raw.items():
        if not isinstance(key, str) or not key.strip():
            raise _BadRecordError("a metadata field name must be a non-empty string")
        if value is None:
            continue
        if not isinstance(value, str | int | float | bool):
            raise _BadRecordError(f"metadata {key!r} must be a string, a number or a boolean")
        text = str(value).lower() if isinstance(value, bool) else str(value)
        if key == "date":
            iso = normalise_date(text)
            if iso is None:
                why = f"{where}: date {text!r} not understood; left out"
                warnings.append(Warning_(source, why))
                continue
            text = iso
        out[key.strip()] = text
    return out, warnings


def read_records(
    records: Sequence[Any],
    settings: IngestSettings,
    *,
    source: str = RECORD_FORMAT,
    require_id: bool = True,
) -> Iterator[Item]:
    """The transcripts, rejects and warnings of records in memory (see the module notes).

    Parameters
    ----------
    records : sequence
        One mapping per transcript.
    settings : IngestSettings
        The speaker label lists that map speakers to roles.
    source : str
        What messages call the records (each transcript's source is
        ``<source>:record <i>``).
    require_id : bool
        Reject a record without an id (else its id is its position).

    Yields
    ------
    Transcript, Reject or Warning_
        In record order; a reject's ``row`` is the record's position.
    """
    seen: dict[str, int] = {}
    for i, record in enumerate(records):
        where = f"record {i}"
        try:
            if not isinstance(record, Mapping):
                raise _BadRecordError("not an object with an id and a text or turns")
            unknown = sorted(set(record) - RECORD_KEYS)
            if unknown:
                raise _BadRecordError(
                    f"unknown key(s) {', '.join(map(repr, unknown))} "
                    f"(a record has {', '.join(sorted(RECORD_KEYS))})"
                )
            tid = record.get("id")
            if tid is None and not require_id:
                tid = str(i)
            if not isinstance(tid, str):
                raise _BadRecordError("'id' must be a string" if tid is not None else "no 'id'")
            tid = tid.strip()
            if not tid:
                raise _BadRecordError("empty id")
            has_text, has_turns = record.get("text") is not None, record.get("turns") is not None
            if has_text == has_turns:
                both = ", not both" if has_text else ""
                raise _BadRecordError(f"give either 'text' or 'turns'{both}")
            if has_text:
                if not isinstance(record["text"], str):
                    raise _BadRecordError("'text' must be a string")
                turns = parse_turns(record["text"], mapper_for(settings))
            else:
                turns = _turns(record["turns"], settings)
            if not turns:
                raise _BadRecordError("empty text")
            metadata, warnings = _metadata(record.get("metadata"), source, where)
            if tid in seen:
                raise _BadRecordError(
                    f"id {tid!r} is also record {seen[tid]}'s; two calls under one id are "
                    "never merged (give each call its own id)"
                )
        except _BadRecordError as bad:
            named = record.get("id") if isinstance(record, Mapping) else None
            label = f" (id {named!r})" if isinstance(named, str) and named.strip() else ""
            yield Reject(source, f"{where}{label}: {bad}", RECORD_FORMAT, row=i)
            continue
        seen[tid] = i
        yield from warnings
        yield Transcript(tid, turns, f"{source}:{where}", RECORD_FORMAT, metadata)
