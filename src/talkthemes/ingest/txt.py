"""Plain-text transcripts: one transcript per ``.txt`` file.

Each line may start with a time and a speaker label::

    [00:01:05] Agent: Thanks for calling, how can I help?
    00:01:09 Customer: My bill is higher than usual.
    1:12.5 Customer: It went up last month.
    Agent (00:01:20): Let me have a look.
    I can see a late fee on the account.        <- continues the agent's turn

Rules
-----
* Time prefix: ``hh:mm:ss`` or ``mm:ss``, optional fractional seconds (``.`` or ``,``),
  optionally in ``[...]`` or ``(...)``, optionally followed by ``-``. A time may also follow
  the label in brackets (``Agent [00:01:20]:``). It becomes the turn's start in seconds. A
  line holding only a time gives the start of the next turn.
* Speaker label: see :mod:`talkthemes.ingest.roles` for what counts as a label (short
  prefix before ``:``; must be a known role or repeat within the file).
* A line without a label (or with a candidate label that does not count) continues the
  current turn; text before the first label is a turn of its own with no speaker.
  Blank lines are ignored.
* A file without any speaker label is a single turn with role ``unknown``.
* Turn text has whitespace runs collapsed to single spaces; case is kept. Turns left with
  no text are dropped; a file with no text at all is rejected.
* The transcript id is the file name without its extension.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterator
from pathlib import Path

from talkthemes.calls.model import Reject, Transcript, Turn, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.decode import load_text
from talkthemes.ingest.roles import (
    LABEL_MAX_WORDS,
    LABEL_PATTERN,
    RoleMapper,
    choose_speakers,
    split_label,
)

__all__ = ["mapper_for", "parse_clock", "parse_turns", "read_txt"]

_TS = r"(?:\d{1,3}:)?\d{1,2}:\d{2}(?:[.,]\d+)?"
_SP = r"[^\S\n]"  # whitespace other than a line break
# One line: optional time prefix, optional candidate label, then the rest.
_LINE = re.compile(
    rf"^{_SP}*"
    rf"(?:[\[(](?:(?P<ah>\d{{1,3}}):)?(?P<am>\d{{1,2}}):(?P<as>\d{{2}}(?:[.,]\d+)?)[\])]"
    rf"{_SP}*(?:[-–]{_SP}*)?"
    rf"|(?:(?P<bh>\d{{1,3}}):)?(?P<bm>\d{{1,2}}):(?P<bs>\d{{2}}(?:[.,]\d+)?)"
    rf"(?:{_SP}*[-–]{_SP}*|{_SP}+|$))?"
    rf"(?:(?P<label>{LABEL_PATTERN}){_SP}*:(?:{_SP}+|$))?"
    rf"(?P<body>[^\n]*)",
    re.M,
)
_LABEL_TS = re.compile(rf"(?P<label>[^\W\d_][^:\[\]()]{{0,39}}?)\s*[\[(](?P<ts>{_TS})[\])]\s*:")
_CLOCK = re.compile(r"(?:(\d+):)?(\d{1,2}):(\d{2}(?:[.,]\d+)?)")

_mapper_cache: dict[tuple[tuple[str, ...], tuple[str, ...]], RoleMapper] = {}


def mapper_for(settings: IngestSettings) -> RoleMapper:
    """The (cached) :class:`RoleMapper` for the label lists of ``settings``."""
    key = (tuple(settings.agent_labels), tuple(settings.customer_labels))
    mapper = _mapper_cache.get(key)
    if mapper is None:
        if len(_mapper_cache) > 16:
            _mapper_cache.clear()
        mapper = _mapper_cache[key] = RoleMapper(*key)
    return mapper


def parse_clock(value: str) -> float | None:
    """Seconds for ``hh:mm:ss``, ``mm:ss`` (optional fraction) or a plain number, else None.

    Examples
    --------
    >>> parse_clock("01:02:03.5"), parse_clock("2:05"), parse_clock("7.25"), parse_clock("x")
    (3723.5, 125.0, 7.25, None)
    """
    value = value.strip()
    try:  # plain seconds first: the common case in tables (float() never accepts a colon)
        seconds = float(value)
    except ValueError:
        pass
    else:
        return seconds if math.isfinite(seconds) else None
    m = _CLOCK.fullmatch(value)
    if m is None:
        return None
    hours = int(m.group(1)) if m.group(1) else 0
    return hours * 3600 + int(m.group(2)) * 60 + float(m.group(3).replace(",", "."))


def parse_turns(text: str, mapper: RoleMapper) -> list[Turn]:
    """Split transcript text into turns following the rules of this module.

    Parameters
    ----------
    text : str
        The transcript, lines separated by ``\\n``.
    mapper : RoleMapper
        Maps the labels found to roles.

    Returns
    -------
    list of Turn
        Possibly empty when the text holds nothing but whitespace and times.
    """
    # First pass: (time, candidate label, its case-folded key, text after it, whole text).
    lines: list[tuple[float | None, str | None, str, str, str]] = []
    counts: dict[str, int] = {}
    for m in _LINE.finditer(text):
        ah, am, as_, bh, bm, bs, label, body = m.groups()
        whole = body
        if am is None and bm is None:
            ts = None
            if label is None and (not body or body.isspace()):
                continue
        else:
            hours, minutes, seconds = (ah, am, as_) if am is not None else (bh, bm, bs)
            if "," in seconds:
                seconds = seconds.replace(",", ".")
            ts = (int(hours) * 3600 if hours else 0) + int(minutes) * 60 + float(seconds)
        if label is not None:
            whole = text[m.start("label") : m.end("body")]
            label = label.rstrip()
            if label.count(" ") >= LABEL_MAX_WORDS and len(label.split()) > LABEL_MAX_WORDS:
                label = None
        elif ts is None and ":" in body:
            mt = _LABEL_TS.match(body)  # "Agent (00:01:20): ..."
            if mt is not None:
                ts = parse_clock(mt.group("ts"))
                whole = body[: mt.start("ts") - 1].rstrip() + body[mt.end() - 1 :]
                split = split_label(whole)
                if split is not None:
                    label, body = split
        if label is None:
            lines.append((ts, None, "", body, whole))
            continue
        key = label.casefold()
        counts[key] = counts.get(key, 0) + 1
        lines.append((ts, label, key, body, whole))

    speakers = choose_speakers(counts, mapper) if counts else set()
    role_of: dict[str, str] = {}  # a transcript has few labels: map each once

    def role(label: str) -> str:
        found = role_of.get(label)
        if found is None:
            found = role_of[label] = mapper.role(label)
        return found

    def collapse(parts: list[str]) -> str:
        return " ".join((parts[0] if len(parts) == 1 else " ".join(parts)).split())

    turns: list[Turn] = []
    speaker = ""
    parts: list[str] = []
    start: float | None = None
    pending: float | None = None
    started = False
    for ts, label, key, body, whole in lines:
        if label is not None and key in speakers:
            if started:
                joined = collapse(parts)
                if joined:
                    turns.append(Turn(speaker, role(speaker), joined, start))
            speaker, parts, started = label, [body], True
            start = ts if ts is not None else pending
            pending = None
            continue
        if not whole or whole.isspace():  # a line holding only a time
            if ts is not None:
                pending = ts
            continue
        if not started:
            speaker, parts, started = "", [], True
            start = ts if ts is not None else pending
            pending = None
        parts.append(whole)
    if started:
        joined = collapse(parts)
        if joined:
            turns.append(Turn(speaker, role(speaker), joined, start))
    return turns


def read_txt(path: Path, settings: IngestSettings) -> Iterator[Transcript | Reject | Warning_]:
    """Read one ``.txt`` transcript.

    Parameters
    ----------
    path : Path
        The file; its name without extension becomes the transcript id.
    settings : IngestSettings
        Size limit, fallback encoding and speaker label lists.

    Yields
    ------
    Transcript, Reject or Warning_
        One Transcript, or one Reject, plus any decoding warnings.
    """
    text, notes = load_text(path, settings, "txt")
    yield from notes
    if text is None:
        return
    turns = parse_turns(text, mapper_for(settings))
    if not turns:
        yield Reject(str(path), "no transcript text (only times or empty labels)", "txt")
        return
    yield Transcript(path.stem, turns, str(path), "txt")
