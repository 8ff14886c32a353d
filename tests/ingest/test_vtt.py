"""Tests for talkthemes.ingest.vtt: WebVTT files (invented examples)."""

from __future__ import annotations

import codecs
from pathlib import Path

import pytest

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.vtt import cue_text, parse_timestamp, read_vtt

SETTINGS = IngestSettings()


def read(tmp_path: Path, text: str, name: str = "call.vtt", *, raw: bytes | None = None) -> list:
    f = tmp_path / name
    f.write_bytes(raw if raw is not None else text.encode("utf-8"))
    return list(read_vtt(f, SETTINGS))


def only(items: list, kind: type) -> list:
    return [x for x in items if isinstance(x, kind)]


def transcript(items: list) -> Transcript:
    ts = only(items, Transcript)
    assert len(ts) == 1, items
    return ts[0]


BASIC = """WEBVTT

1
00:00:01.000 --> 00:00:04.000
<v Agent>Thanks for calling, this is Sam.

2
00:00:04.500 --> 00:00:06.000 align:start position:10%
<v Agent>How can I help?

3
00:00:06.000 --> 00:00:09.250
<v Customer>My internet keeps
dropping every evening.
"""


def test_basic_voices_merge_and_times(tmp_path):
    items = read(tmp_path, BASIC)
    assert not only(items, Warning_) and not only(items, Reject)
    t = transcript(items)
    assert t.tid == "call" and t.format == "vtt" and t.source.endswith("call.vtt")
    assert [(x.speaker, x.role, x.text, x.start, x.end) for x in t.turns] == [
        ("Agent", "agent", "Thanks for calling, this is Sam. How can I help?", 1.0, 6.0),
        ("Customer", "customer", "My internet keeps dropping every evening.", 6.0, 9.25),
    ]


@pytest.mark.parametrize("header", ["WEBVTT", "WEBVTT - call 17", "WEBVTT\tcall 17"])
def test_header_variants(tmp_path, header):
    items = read(tmp_path, BASIC.replace("WEBVTT", header, 1))
    assert not only(items, Warning_)
    assert len(transcript(items).turns) == 2


def test_bom_and_crlf(tmp_path):
    raw = codecs.BOM_UTF8 + BASIC.replace("\n", "\r\n").encode()
    items = read(tmp_path, "", raw=raw)
    assert not only(items, Warning_)
    assert transcript(items).turns[1].text == "My internet keeps dropping every evening."


def test_header_metadata_lines_are_skipped(tmp_path):
    text = "WEBVTT\nKind: captions\nLanguage: en\n\n00:01.000 --> 00:02.000\nhello\n"
    t = transcript(read(tmp_path, text))
    assert t.text() == "hello"


def test_cue_right_after_header_without_blank_line(tmp_path):
    text = "WEBVTT\n00:01.000 --> 00:02.000\nhello\n\n00:02.000 --> 00:03.000\nagain\n"
    t = transcript(read(tmp_path, text))
    assert t.turns[0].text == "hello again"


def test_missing_header_keeps_cues_with_warning(tmp_path):
    items = read(tmp_path, BASIC.replace("WEBVTT\n", "", 1))
    warnings = only(items, Warning_)
    assert len(warnings) == 1 and "WEBVTT" in warnings[0].message
    assert len(transcript(items).turns) == 2


def test_header_must_be_followed_by_space_or_tab(tmp_path):
    items = read(tmp_path, BASIC.replace("WEBVTT", "WEBVTTX", 1))
    assert any("WEBVTT" in w.message for w in only(items, Warning_))
    assert only(items, Transcript)


def test_no_header_no_cues_is_rejected(tmp_path):
    items = read(tmp_path, "just some words\nand more\n")
    rejects = only(items, Reject)
    assert len(rejects) == 1 and "not WebVTT" in rejects[0].reason
    assert not only(items, Transcript)


def test_header_but_no_cues_is_rejected(tmp_path):
    items = read(tmp_path, "WEBVTT\n\nNOTE nothing here yet\n")
    rejects = only(items, Reject)
    assert len(rejects) == 1 and "no cues" in rejects[0].reason


def test_broken_timing_line_skips_that_cue_with_line_number(tmp_path):
    text = (
        "WEBVTT\n\n"
        "00:01.000 --> 00:02.000\n<v Agent>first\n\n"
        "00:02.000 -> 00:03.000\n<v Agent>lost\n\n"  # line 6, no proper arrow: stray text
        "00:0x.000 --> 00:04.000\n<v Agent>broken\n\n"  # line 9
        "00:04.000 --> 00:61.000\n<v Agent>bad seconds\n\n"  # line 12
        "00:05.000 --> 00:06.000\n<v Customer>last\n"
    )
    items = read(tmp_path, text)
    warnings = only(items, Warning_)
    assert [w.row for w in warnings] == [6, 9, 12]
    assert "line 9" in warnings[1].message and "timing" in warnings[1].message
    assert "line 12" in warnings[2].message
    t = transcript(items)
    assert [(x.speaker, x.text) for x in t.turns] == [("Agent", "first"), ("Customer", "last")]


def test_note_style_region_blocks_are_skipped(tmp_path):
    text = (
        "WEBVTT\n\n"
        "STYLE\n::cue { color: yellow }\n\n"
        "REGION\nid:left\nwidth:40%\n\n"
        "NOTE recorded on the second line\n\n"
        "NOTE\nmulti line\ncomment\n\n"
        "00:01.000 --> 00:02.000 region:left\n<v Rep>hello\n\n"
        "NOTE a note between cues\n\n"
        "00:02.000 --> 00:03.000\n<v Caller>hi\n"
    )
    items = read(tmp_path, text)
    assert not only(items, Warning_)
    t = transcript(items)
    assert t.text() == "hello\nhi"
    assert [x.role for x in t.turns] == ["agent", "customer"]


def test_tags_entities_and_ruby(tmp_path):
    text = (
        "WEBVTT\n\n"
        "00:01.000 --> 00:03.000\n"
        "<v.loud.first Agent 2><c.yellow>Fees</c> &amp; <i>charges</i>&nbsp;&lt;3 "
        "<b>bold</b> <u>under</u> <lang fr>merci</lang> <00:00:02.000>later "
        "<ruby>漢<rt>かん</rt>字<rt>じ</rt></ruby>&lrm;</v>\n"
    )
    t = transcript(read(tmp_path, text))
    assert t.turns[0].speaker == "Agent 2" and t.turns[0].role == "agent"
    assert t.turns[0].text == "Fees & charges <3 bold under merci later 漢字"


def test_several_voices_in_one_cue(tmp_path):
    text = "WEBVTT\n\n00:01.000 --> 00:03.000\n<v Agent>Hello?</v>\n<v Customer>Hi, yes.</v>\n"
    t = transcript(read(tmp_path, text))
    assert [(x.speaker, x.text, x.start, x.end) for x in t.turns] == [
        ("Agent", "Hello?", 1.0, 3.0),
        ("Customer", "Hi, yes.", 1.0, 3.0),
    ]


def test_cues_without_voice_merge_into_unknown_turn(tmp_path):
    text = "WEBVTT\n\n00:01.000 --> 00:02.000\nhello\n\n00:02.000 --> 00:03.000\nworld\n"
    t = transcript(read(tmp_path, text))
    assert [(x.speaker, x.role, x.text, x.start, x.end) for x in t.turns] == [
        ("", "unknown", "hello world", 1.0, 3.0)
    ]


def test_name_colon_labels_inside_cues(tmp_path):
    text = (
        "WEBVTT\n\n"
        "00:01.000 --> 00:02.000\nAgent: hello\n\n"
        "00:02.000 --> 00:03.000\nCustomer: my router\n\n"
        "00:03.000 --> 00:04.000\nModel: TX-200 blinks red\n"
    )
    t = transcript(read(tmp_path, text))
    assert [(x.speaker, x.text) for x in t.turns] == [
        ("Agent", "hello"),
        ("Customer", "my router Model: TX-200 blinks red"),
    ]


def test_cue_identifiers_are_not_text(tmp_path):
    text = "WEBVTT\n\nintro-1\n00:01.000 --> 00:02.000\nhello\n\n42\n00:02.000 --> 00:03.000\nbye\n"
    assert transcript(read(tmp_path, text)).text() == "hello bye"


def test_long_hours_timestamp(tmp_path):
    text = "WEBVTT\n\n123:00:00.000 --> 123:00:01.500\nlate\n"
    t = transcript(read(tmp_path, text))
    assert (t.turns[0].start, t.turns[0].end) == (442800.0, 442801.5)


@pytest.mark.parametrize(
    ("value", "seconds"),
    [
        ("00:00.000", 0.0),
        ("01:02.345", 62.345),
        ("01:02:03.004", 3723.004),
        ("1:02:03.004", 3723.004),
        ("00:60.000", None),
        ("60:00.000", None),
        ("1:02.000", None),
        ("00:01.00", None),
        ("00:01,000", None),
    ],
)
def test_parse_timestamp(value, seconds):
    assert parse_timestamp(value) == seconds


def test_cue_text_pieces():
    assert cue_text("before <v A>one</v> <v.x B>two") == [
        (None, "before"),
        ("A", "one"),
        ("B", "two"),
    ]
    assert cue_text("<v>no name</v>") == [(None, "no name")]
    assert cue_text("<i></i>") == []


@pytest.mark.parametrize("content", [b"", b"   \n\n", b"WEBVTT\x00\x00\x01\x02\x03"])
def test_empty_and_binary_vtt_rejected(tmp_path, content):
    items = read(tmp_path, "", raw=content)
    assert len(only(items, Reject)) == 1 and not only(items, Transcript)


def test_cue_ending_before_it_starts_keeps_its_words_and_cues_are_ordered(tmp_path):
    items = read(
        tmp_path,
        "WEBVTT\n\n"
        "1\n00:00:01.000 --> 00:00:03.000\n<v Agent>Good morning, how can I help?\n\n"
        "2\n00:00:09.000 --> 00:00:07.500\n<v Customer>my parcel never arrived\n\n"
        "3\n00:00:04.000 --> 00:00:06.000\n<v Customer>I ordered a kettle\n",
    )
    t = transcript(items)
    assert [(x.speaker, x.text, x.start, x.end) for x in t.turns] == [
        ("Agent", "Good morning, how can I help?", 1.0, 3.0),
        ("Customer", "I ordered a kettle my parcel never arrived", 4.0, 9.0),
    ]
    backwards, late = only(items, Warning_)
    assert backwards.row == 8 and backwards.source.endswith("call.vtt")
    assert backwards.message.startswith("line 8: cue 2 ends (00:00:07.500) before it starts")
    assert "(00:00:09.000)" in backwards.message and "words are kept" in backwards.message
    assert late.row == 12 and "cue 3 starts (00:00:04.000) before a cue above it" in late.message


def test_cues_in_order_get_no_ordering_warning(tmp_path):
    items = read(tmp_path, BASIC)
    assert not [w for w in only(items, Warning_) if "order" in w.message]
