"""Rendering a demo call as a ``.txt`` transcript or as WebVTT."""

from __future__ import annotations

import re

from talkthemes.demo.records import DemoCall

__all__ = ["render_txt", "render_vtt"]

_SENTENCE_END = re.compile(r"(?<=[.?!])\s+")


def _clock(seconds: float, millis: bool = False) -> str:
    # %-formatting: about twice as fast as f-strings with format specs in this hot path
    ms = int(seconds * 1000 + 0.5)
    s = ms // 1000
    if millis:
        return "%02d:%02d:%02d.%03d" % (s // 3600, s // 60 % 60, s % 60, ms % 1000)  # noqa: UP031
    return "%02d:%02d:%02d" % (s // 3600, s // 60 % 60, s % 60)  # noqa: UP031


def _turn_ends(call: DemoCall) -> list[float]:
    ends = []
    for i, turn in enumerate(call.turns):
        end = turn.start + max(0.8, (turn.text.count(" ") + 1) / call.words_per_second)
        if i + 1 < len(call.turns):
            end = min(end, max(turn.start + 0.1, call.turns[i + 1].start - 0.05))
        ends.append(round(end, 3))
    return ends


def render_txt(call: DemoCall) -> str:
    """Render a call as a speaker-labelled text transcript (``Speaker: text`` lines).

    Follows ``call.style``: optional ``[hh:mm:ss]`` or bare ``hh:mm:ss`` prefixes, and long
    turns wrapped onto unlabelled continuation lines.
    """
    style, lines = call.style, []
    for turn in call.turns:
        prefix = ""
        if style.timestamps == "bracket":
            prefix = f"[{_clock(turn.start)}] "
        elif style.timestamps == "plain":
            prefix = f"{_clock(turn.start)} "
        words = turn.text.split(" ")
        if style.wrap and len(words) > 45:
            chunks = [" ".join(words[i : i + 30]) for i in range(0, len(words), 30)]
        else:
            chunks = [turn.text]
        lines.append(f"{prefix}{turn.speaker}: {chunks[0]}")
        lines.extend(chunks[1:])
    return "\n".join(lines) + "\n"


def _cues(text: str) -> list[str]:
    """Split a long turn into caption-sized cues (about 20 words, at sentence ends if possible)."""
    if text.count(" ") < 20:
        return [text]
    cues: list[str] = []
    size = 0
    for sentence in _SENTENCE_END.split(text):
        words = sentence.split(" ")
        for i in range(0, len(words), 16):
            piece = words[i : i + 16]
            if cues and size + len(piece) <= 20:
                cues[-1] += " " + " ".join(piece)
                size += len(piece)
            else:
                cues.append(" ".join(piece))
                size = len(piece)
    return cues


def render_vtt(call: DemoCall) -> str:
    """Render a call as W3C WebVTT with ``<v Speaker>`` voice spans, one or more cues a turn.

    Follows ``call.style``: cue numbers, ``</v>`` closing tags, typographic apostrophes and
    a ``NOTE`` block. Text is escaped (``&``, ``<``, ``>``).
    """
    style = call.style
    out = ["WEBVTT", ""]
    if style.note:
        out += [f"NOTE {call.call_id}, exported for quality review", ""]
    close = "</v>" if style.close_voice else ""
    number = 0
    for turn, end in zip(call.turns, _turn_ends(call), strict=True):
        text = turn.text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
        if style.curly:
            text = text.replace("'", "\u2019")
        pieces = _cues(text)
        per_word = (end - turn.start) / (text.count(" ") + 1)
        t, t_text = turn.start, _clock(turn.start, True)
        for piece in pieces:
            t += per_word * (piece.count(" ") + 1)
            end_text = _clock(t, True)
            number += 1
            if style.cue_ids:
                out.append(str(number))
            out += [f"{t_text} --> {end_text}", f"<v {turn.speaker}>{piece}{close}", ""]
            t_text = end_text
    return "\n".join(out)
