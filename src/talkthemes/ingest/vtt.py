"""WebVTT subtitle files (W3C "WebVTT: The Web Video Text Tracks Format") as transcripts.

What is read
------------
* The header: ``WEBVTT`` on the first line (after an optional byte-order mark), alone or
  followed by a space or tab and any text; header lines up to the first blank line are
  skipped. A file without the header is still read for cues, with a warning; a file
  without cues is rejected.
* ``NOTE``, ``STYLE`` and ``REGION`` blocks are skipped.
* A cue is an optional identifier line, a timing line ``start --> end [settings]`` and
  payload lines up to a blank line. Timestamps are ``mm:ss.ttt`` or ``hh:mm:ss.ttt``
  (hours may have one digit here, which the spec does not allow but some tools write).
  Cue settings (``align:start position:10%`` ...) are ignored. A timing line that cannot be
  read skips that cue with a warning naming the line; so does a text block with no
  timing line.
* Speakers come from voice spans ``<v Name>`` / ``<v.class Name>``; a cue may hold several.
  A cue without a voice span may name its speaker as ``Name: text``, under the same label
  rule as ``.txt`` files (:mod:`talkthemes.ingest.roles`); in a file that uses such labels,
  a cue with neither continues the current turn. Otherwise a cue without a voice has no
  speaker (role ``unknown``).
* Every other tag (``<c>``, ``<i>``, ``<b>``, ``<u>``, ``<lang>``, ``<ruby>``, timestamps
  such as ``<00:00:01.000>``) is removed, keeping its text, except ruby annotations
  (``<rt>...</rt>``), which are dropped. Character references (``&amp;``, ``&lt;``,
  ``&gt;``, ``&nbsp;``, ``&lrm;``, ...) are decoded; direction marks are then removed.
* A cue that ends before it starts keeps its words: it is warned about (line, cue number,
  both times) and its end is read as its start. Cues are put in start-time order (the
  spec requires it; a file that breaks it gets one warning naming the first cue out of
  order); cues with the same start keep the file's order.
* Consecutive cues of the same speaker (compared exactly, including the empty speaker of
  cues without one) are merged into one turn that starts at the first cue's start and
  ends at the last cue's end.
* The transcript id is the file name without its extension.
"""

from __future__ import annotations

import html
import re
from collections.abc import Iterator
from pathlib import Path

from talkthemes.calls.model import Reject, Transcript, Turn, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.decode import load_text
from talkthemes.ingest.roles import choose_speakers, split_label
from talkthemes.ingest.txt import mapper_for

__all__ = ["cue_text", "parse_timestamp", "parse_vtt", "read_vtt"]

_HEADER = re.compile(r"WEBVTT(?:[ \t].*)?")
_TS = r"(?:\d+:)?\d{2}:\d{2}\.\d{3}"
_TIMING = re.compile(rf"\s*({_TS})[ \t]*-->[ \t]*({_TS})(?:[ \t]+.*)?\s*")
_TIMESTAMP = re.compile(r"(?:(\d+):)?(\d{2}):(\d{2})\.(\d{3})")
_VOICE = re.compile(r"<v(?:\.[^\s>]*)?(?:[ \t\n]+([^>]*))?>")
_RUBY_TEXT = re.compile(r"<rt\b[^>]*>.*?(?:</rt>|(?=</ruby>)|$)", re.S)
_TAG = re.compile(r"<[^>\n]*>")
_DIRECTION = dict.fromkeys(map(ord, "\u200e\u200f\u200b\u2060\u202a\u202b\u202c\u202d\u202e"))
_BLOCK_WORDS = ("NOTE", "STYLE", "REGION")


def parse_timestamp(value: str) -> float | None:
    """Seconds for a WebVTT timestamp ``[hh:]mm:ss.ttt``, None when malformed.

    Minutes and seconds must be below 60.

    Examples
    --------
    >>> parse_timestamp("01:02:03.500"), parse_timestamp("02:03.250"), parse_timestamp("1:2.3")
    (3723.5, 123.25, None)
    """
    m = _TIMESTAMP.fullmatch(value)
    if m is None:
        return None
    minutes, seconds = int(m.group(2)), int(m.group(3))
    if minutes > 59 or seconds > 59:
        return None
    hours = int(m.group(1)) if m.group(1) else 0
    return hours * 3600 + minutes * 60 + seconds + int(m.group(4)) / 1000


def _plain(text: str) -> str:
    if "<" in text:  # tags (and ruby text) only exist with a "<"
        text = _TAG.sub("", _RUBY_TEXT.sub("", text))
    if "&" in text:
        text = html.unescape(text)
    if not text.isascii():  # the direction marks are all outside ASCII
        text = text.translate(_DIRECTION)
    return " ".join(text.split())


def cue_text(payload: str) -> list[tuple[str | None, str]]:
    """Split a cue payload into ``(voice, text)`` pieces with tags and references resolved.

    Parameters
    ----------
    payload : str
        The cue's text lines joined by ``\\n``.

    Returns
    -------
    list of (str or None, str)
        The voice name of each piece (None for text outside any voice span) and its
        plain text with whitespace collapsed; pieces without text are left out.

    Examples
    --------
    >>> cue_text("<v.loud Mary>That&rsquo;s <i>awesome</i>!</v>")
    [('Mary', 'That’s awesome!')]
    """
    pieces: list[tuple[str | None, str]] = []
    voice: str | None = None
    pos = 0
    for m in _VOICE.finditer(payload):
        text = _plain(payload[pos : m.start()])
        if text:
            pieces.append((voice, text))
        name = _plain(m.group(1) or "")
        voice = name or None
        pos = m.end()
    text = _plain(payload[pos:])
    if text:
        pieces.append((voice, text))
    return pieces


def _block_end(lines: list[str], i: int) -> int:
    while i < len(lines) and lines[i].strip():
        i += 1
    return i


def _is_block_word(line: str) -> bool:
    for word in _BLOCK_WORDS:
        if line.startswith(word) and (len(line) == len(word) or line[len(word)] in " \t"):
            return True
    return False


def parse_vtt(
    text: str, source: str
) -> tuple[list[tuple[float, float, str | None, str]], list[Warning_], bool]:
    """Read the cues of a WebVTT document.

    Parameters
    ----------
    text : str
        The decoded file, ``\\n`` line endings.
    source : str
        The file name for warnings.

    Returns
    -------
    cues : list of (start, end, voice, text)
        One entry per voice piece of every readable cue, in start-time order (file order
        among equal starts); ``voice`` is None when the piece has no voice span. A cue
        that ends before it starts gets its start as its end.
    warnings : list of Warning_
        Missing header, malformed timing lines, stray text blocks, cues that end before
        they start, cues out of start-time order (each with its line and cue number).
    has_header : bool
        Whether the file starts with a valid ``WEBVTT`` line.
    """
    lines = text.split("\n")
    warnings: list[Warning_] = []
    cues: list[tuple[float, float, str | None, str]] = []
    late: list[tuple[int, int, str]] = []  # (cue number, line, start) of cues out of order
    number = 0
    latest = 0.0
    i = 0
    has_header = bool(lines) and _HEADER.fullmatch(lines[0]) is not None
    if has_header:
        i = 1
        # Header lines run to the first blank line, unless a cue starts without one.
        while i < len(lines) and lines[i].strip() and "-->" not in lines[i]:
            i += 1
        if i < len(lines) and "-->" in lines[i] and i > 1:
            i -= 1  # the line before the timing line is the cue identifier
    n = len(lines)
    while i < n:
        line = lines[i]
        if not line.strip():
            i += 1
            continue
        if _is_block_word(line):
            i = _block_end(lines, i)
            continue
        if "-->" in line:
            timing = i
        elif i + 1 < n and "-->" in lines[i + 1]:
            timing = i + 1
        else:
            end = _block_end(lines, i)
            warnings.append(
                Warning_(
                    source,
                    f"line {i + 1}: text block without a cue timing line "
                    f"({line.strip()[:40]!r}); skipped",
                    row=i + 1,
                )
            )
            i = end
            continue
        number += 1  # cues counted in file order, unreadable ones too
        m = _TIMING.fullmatch(lines[timing])
        start = parse_timestamp(m.group(1)) if m else None
        stop = parse_timestamp(m.group(2)) if m else None
        if start is None or stop is None:
            warnings.append(
                Warning_(
                    source,
                    f"line {timing + 1}: malformed cue timing line "
                    f"{lines[timing].strip()[:60]!r}; cue skipped",
                    row=timing + 1,
                )
            )
            i = _block_end(lines, timing + 1)
            continue
        if stop < start:
            warnings.append(
                Warning_(
                    source,
                    f"line {timing + 1}: cue {number} ends ({m.group(2)}) before it starts "
                    f"({m.group(1)}); its end is read as its start and its words are kept",
                    row=timing + 1,
                )
            )
            stop = start
        if start < latest:
            late.append((number, timing + 1, m.group(1)))
        latest = max(latest, start)
        j = timing + 1
        while j < n and lines[j].strip() and "-->" not in lines[j]:
            j += 1
        for voice, piece in cue_text("\n".join(lines[timing + 1 : j])):
            cues.append((start, stop, voice, piece))
        i = j
    if late:
        first_number, first_line, first_start = late[0]
        warnings.append(
            Warning_(
                source,
                f"line {first_line}: cue {first_number} starts ({first_start}) before a cue "
                f"above it ({len(late)} such cue(s)); cues are put in start-time order",
                row=first_line,
            )
        )
        cues.sort(key=lambda cue: cue[0])  # stable: file order among equal starts
    if not has_header:
        first = next((k for k, ln in enumerate(lines) if ln.strip()), 0)
        warnings.insert(
            0,
            Warning_(
                source,
                f"line {first + 1}: missing 'WEBVTT' header; cues read anyway",
                row=first + 1,
            ),
        )
    return cues, warnings, has_header


def read_vtt(path: Path, settings: IngestSettings) -> Iterator[Transcript | Reject | Warning_]:
    """Read one ``.vtt`` file as a transcript.

    Parameters
    ----------
    path : Path
        The file; its name without extension becomes the transcript id.
    settings : IngestSettings
        Size limit, fallback encoding and speaker label lists.

    Yields
    ------
    Transcript, Reject or Warning_
        One Transcript or one Reject, and any warnings.
    """
    source = str(path)
    text, notes = load_text(path, settings, "vtt")
    yield from notes
    if text is None:
        return
    cues, warnings, has_header = parse_vtt(text, source)
    if not cues:
        if has_header:
            yield from warnings
            yield Reject(source, "no cues with text (no readable 'start --> end' timing)", "vtt")
        else:
            yield from warnings[1:]
            yield Reject(source, "not WebVTT: no 'WEBVTT' header and no readable cues", "vtt")
        return
    yield from warnings
    mapper = mapper_for(settings)

    # Cues without a voice span may carry a "Name: text" label.
    labelled: list[tuple[float, float, str | None, str, tuple[str, str] | None]] = []
    counts: dict[str, int] = {}
    for start, stop, voice, piece in cues:
        split = split_label(piece) if voice is None and ":" in piece else None
        if split is not None:
            key = split[0].casefold()
            counts[key] = counts.get(key, 0) + 1
        labelled.append((start, stop, voice, piece, split))
    speakers = choose_speakers(counts, mapper) if counts else set()

    turns: list[Turn] = []
    cur: str | None = None
    parts: list[str] = []
    t0 = t1 = 0.0
    for start, stop, voice, piece, split in labelled:
        speaker = voice or ""
        if split is not None and split[0].casefold() in speakers:
            speaker, piece = split
            if not piece.strip():
                continue
        elif voice is None and speakers and cur is not None:
            speaker = cur  # unlabelled cue in a labelled file: the turn goes on
        if speaker != cur:
            if parts:
                turns.append(Turn(cur or "", mapper.role(cur), " ".join(parts), t0, t1))
            cur, parts, t0, t1 = speaker, [], start, stop
        parts.append(piece)
        t1 = max(t1, stop)
    if parts:
        turns.append(Turn(cur or "", mapper.role(cur), " ".join(parts), t0, t1))
    yield Transcript(path.stem, turns, source, "vtt")
