"""WebVTT reader checked against examples of the W3C WebVTT specification.

Source: W3C, "WebVTT: The Web Video Text Tracks Format", W3C Candidate Recommendation
(2019 snapshot). The specification could not be fetched while writing these tests (no
network): every example below is **recalled from memory** and may differ from the
published text in small details (wording of the cue text, exact times). Section names are
given as remembered; their numbering may differ between snapshots. Each check states the
rule of the specification it relies on.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.vtt import parse_timestamp, read_vtt

SETTINGS = IngestSettings()


def read(tmp_path: Path, text: str) -> list:
    f = tmp_path / "spec.vtt"
    f.write_text(text, encoding="utf-8")
    return list(read_vtt(f, SETTINGS))


def transcript(items: list) -> Transcript:
    assert not [x for x in items if isinstance(x, Reject | Warning_)], items
    (t,) = [x for x in items if isinstance(x, Transcript)]
    return t


# Spec §1 "Introduction" (the interview example with voice spans). Recalled from memory;
# only the first cues and the overlapping exchange are reproduced.
INTERVIEW = """WEBVTT

00:11.000 --> 00:13.000
<v Roger Bingham>We are in New York City

00:13.000 --> 00:16.000
<v Roger Bingham>We're actually at the Lucern Hotel, just down the street

00:16.000 --> 00:18.000
<v Roger Bingham>from the American Museum of Natural History

00:30.000 --> 00:31.500 align:end size:50%
<v Roger Bingham>When we e-mailed—

00:30.500 --> 00:32.500 align:start size:50%
<v Neil deGrasse Tyson>Didn't we talk about enough in that conversation?

00:32.000 --> 00:35.500 align:end size:50%
<v Roger Bingham>No! No no no no; 'cos 'cos obviously 'cos

00:32.500 --> 00:33.500 align:start size:50%
<v Neil deGrasse Tyson><i>Laughs</i>
"""


def test_introduction_voice_spans(tmp_path):
    # Rule: "<v annotation>" is a voice span whose annotation names the speaker (spec: cue
    # text, "cue voice span"); "mm:ss.ttt" timestamps without hours are valid; the cue
    # settings "align:end size:50%" follow the end time on the timing line.
    t = transcript(read(tmp_path, INTERVIEW))
    assert [x.speaker for x in t.turns] == [
        "Roger Bingham",
        "Neil deGrasse Tyson",
        "Roger Bingham",
        "Neil deGrasse Tyson",
    ]
    first = t.turns[0]
    assert first.text == (
        "We are in New York City We're actually at the Lucern Hotel, just down the street "
        "from the American Museum of Natural History When we e-mailed—"
    )
    assert (first.start, first.end) == (11.0, 31.5)
    assert t.turns[3].text == "Laughs"  # <i> tag removed, its text kept
    assert {x.role for x in t.turns} == {"unknown"}


# Spec §1 "Introduction", styling example with classes on voice spans. Recalled from memory.
STYLED = """WEBVTT

00:00.000 --> 00:02.000
<v.first.loud Esme>It’s a blue apple tree!

00:02.000 --> 00:04.000
<v Mary>No way!

00:04.000 --> 00:06.000
<v Esme>Hee!</v> <i>laughter</i>

00:06.000 --> 00:08.000
<v.loud Mary>That’s awesome!
"""


def test_voice_span_with_classes(tmp_path):
    # Rule: a voice start tag may carry classes, "<v.first.loud Esme>"; the annotation after
    # the whitespace is the voice. "</v>" ends the span; text after it still belongs to the cue.
    t = transcript(read(tmp_path, STYLED))
    assert [(x.speaker, x.text) for x in t.turns] == [
        ("Esme", "It’s a blue apple tree!"),
        ("Mary", "No way!"),
        ("Esme", "Hee! laughter"),
        ("Mary", "That’s awesome!"),
    ]
    assert [(x.start, x.end) for x in t.turns] == [(0, 2), (2, 4), (4, 6), (6, 8)]


# Spec §1 "Introduction", example with comments (NOTE blocks), a header with text after
# "WEBVTT -", and numeric cue identifiers. Recalled from memory.
COMMENTS = """WEBVTT - Translation of that film I like

NOTE
This translation was done by Kyle so that
some friends can watch it with their parents.

1
00:02:15.000 --> 00:02:20.000
- Ta en kopp varmt te.
- Det är inte varmt.

2
00:02:20.000 --> 00:02:25.000
- Har en kopp te.
- Det smakar som te.

NOTE This last line may not translate well.

3
00:02:25.000 --> 00:02:30.000
- Ta en kopp
"""


def test_notes_header_text_and_identifiers(tmp_path):
    # Rules: the signature line is "WEBVTT" optionally followed by a space or tab and text;
    # "NOTE" followed by a space, tab or line break starts a comment block, which is not
    # cue text; a line before the timing line is the cue identifier, not text;
    # "hh:mm:ss.ttt" timestamps are valid.
    t = transcript(read(tmp_path, COMMENTS))
    assert len(t.turns) == 1  # no voices: one unknown speaker, cues merged
    text = t.turns[0].text
    assert text.startswith("- Ta en kopp varmt te. - Det är inte varmt.")
    assert text.endswith("- Ta en kopp")
    assert "Kyle" not in text and "translate well" not in text
    assert (t.turns[0].start, t.turns[0].end) == (135.0, 150.0)


# Spec §1 "Introduction" / §"Style blocks": a STYLE block before the first cue, a NOTE
# between style blocks. Recalled from memory.
STYLE = """WEBVTT

STYLE
::cue {
  background-image: linear-gradient(to bottom, dimgray, lightgray);
  color: papayawhip;
}
/* Style blocks cannot use blank lines nor "dash dash greater than" */

NOTE comment blocks can be used between style blocks.

STYLE
::cue(b) {
  color: peachpuff;
}

00:00:00.000 --> 00:00:10.000
- Hello <b>world</b>.

NOTE style blocks cannot appear after the first cue.
"""


def test_style_blocks_are_skipped(tmp_path):
    # Rule: a block starting with "STYLE" holds a CSS style sheet, not cue text.
    t = transcript(read(tmp_path, STYLE))
    assert t.text() == "- Hello world."


# Spec §"Regions" example: REGION definition blocks and cues placed in them with the
# "region:" cue setting. Recalled from memory.
REGIONS = """WEBVTT

REGION
id:fred
width:40%
lines:3
regionanchor:0%,100%
viewportanchor:10%,90%
scroll:up

REGION
id:bill
width:40%
lines:3
regionanchor:100%,100%
viewportanchor:90%,90%
scroll:up

00:00:00.000 --> 00:00:20.000 region:fred align:left
<v Fred>Hi, my name is Fred

00:00:02.500 --> 00:00:22.500 region:bill align:right
<v Bill>Hi, I’m Bill

00:00:05.000 --> 00:00:25.000 region:fred align:left
<v Fred>Would you like to get a coffee?
"""


def test_region_blocks_and_region_settings(tmp_path):
    # Rule: "REGION" blocks define regions (settings lines, not cue text); "region:fred
    # align:left" are cue settings after the end timestamp.
    t = transcript(read(tmp_path, REGIONS))
    assert [(x.speaker, x.text, x.start) for x in t.turns] == [
        ("Fred", "Hi, my name is Fred", 0.0),
        ("Bill", "Hi, I’m Bill", 2.5),
        ("Fred", "Would you like to get a coffee?", 5.0),
    ]
    assert "scroll" not in t.text()


def test_cue_settings_position_and_line(tmp_path):
    # Spec cue settings: "vertical", "line", "position", "size", "align", "region"; example
    # values such as "position:10%,line-left align:left size:35%" (recalled from memory).
    text = (
        "WEBVTT\n\n"
        "00:00:00.000 --> 00:00:04.000 position:10%,line-left align:left size:35%\n"
        "Where did he go?\n\n"
        "00:00:03.000 --> 00:00:06.500 position:90% align:right size:35% line:0\n"
        "I think he went down this lane.\n\n"
        "00:00:04.000 --> 00:00:06.500 position:45%,line-right align:center size:35% vertical:rl\n"
        "What are you waiting for?\n"
    )
    t = transcript(read(tmp_path, text))
    assert t.text() == "Where did he go? I think he went down this lane. What are you waiting for?"


def test_escapes_and_internal_tags(tmp_path):
    # Spec cue text: "&amp;", "&lt;", "&gt;", "&lrm;", "&rlm;" and "&nbsp;" character
    # references; class spans "<c.class>", "<i>", "<b>", "<u>", "<lang xx>", "<ruby>"/"<rt>"
    # and cue timestamps "<00:00:01.000>" are markup, not text.
    text = (
        "WEBVTT\n\n"
        "00:00.000 --> 00:05.000\n"
        "<c.yellow>Fish &amp; chips</c> &lt;3&nbsp;<lang en-GB>&lrm;yes&rlm;</lang>\n"
        "<00:00:01.000><u>one</u> <00:00:02.000><b>two</b>\n"
    )
    t = transcript(read(tmp_path, text))
    assert t.text() == "Fish & chips <3 yes one two"


@pytest.mark.parametrize(
    ("stamp", "seconds"),
    [
        # Spec "WebVTT timestamp": optional hours (two or more digits) and ":", then two-digit
        # minutes 00–59, ":", two-digit seconds 00–59, ".", three-digit fraction.
        ("00:11.000", 11.0),
        ("59:59.999", 3599.999),
        ("00:02:15.000", 135.0),
        ("100:00:00.000", 360000.0),
        ("00:60.000", None),
        ("60:00.000", None),
        ("00:01.5", None),
        ("00:01", None),
    ],
)
def test_timestamp_forms(stamp, seconds):
    assert parse_timestamp(stamp) == seconds


def test_signature_rules(tmp_path):
    # Spec file structure: optional U+FEFF byte order mark, then "WEBVTT", then a space or
    # tab and text, or a line terminator. "WEBVTTX" is not a valid signature.
    body = "\n\n00:01.000 --> 00:02.000\nhi\n"
    for header in ("\ufeffWEBVTT", "WEBVTT", "WEBVTT\tsub", "WEBVTT text"):
        assert transcript(read(tmp_path, header + body)).text() == "hi"
    items = read(tmp_path, "WEBVTTX" + body)
    assert any("WEBVTT" in w.message for w in items if isinstance(w, Warning_))
