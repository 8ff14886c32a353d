"""Tests for talkthemes.ingest.txt: plain-text transcripts."""

from __future__ import annotations

import codecs
from pathlib import Path

import pytest

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.roles import RoleMapper
from talkthemes.ingest.txt import parse_clock, parse_turns, read_txt

SETTINGS = IngestSettings()
MAPPER = RoleMapper(SETTINGS.agent_labels, SETTINGS.customer_labels)


def read(path: Path, settings: IngestSettings = SETTINGS) -> list:
    return list(read_txt(path, settings))


def one_transcript(items: list) -> Transcript:
    ts = [x for x in items if isinstance(x, Transcript)]
    assert len(ts) == 1, items
    return ts[0]


def test_labelled_turns_with_time_forms():
    text = (
        "[00:01:05] Agent: Thanks for calling, how can I help?\n"
        "00:01:09 Customer: My bill is   higher than usual.\n"
        "1:12.5 Customer: It went up last month.\n"
        "(01:15,25) - Agent: One moment.\n"
        "Agent (00:01:20): Let me have a look.\n"
        "Customer [1:00:02]: Sure.\n"
    )
    turns = parse_turns(text, MAPPER)
    assert [(t.speaker, t.role, t.start) for t in turns] == [
        ("Agent", "agent", 65.0),
        ("Customer", "customer", 69.0),
        ("Customer", "customer", 72.5),
        ("Agent", "agent", 75.25),
        ("Agent", "agent", 80.0),
        ("Customer", "customer", 3602.0),
    ]
    assert turns[1].text == "My bill is higher than usual."
    assert turns[4].text == "Let me have a look."
    assert all(t.end is None for t in turns)


def test_continuation_lines_and_ambiguous_note():
    text = (
        "Agent: Let me check.\n"
        "I can see a late fee.\n"
        "\n"
        "Customer: Why is that?\n"
        "Note: the bill was high last month too.\n"
        "Agent: It was a missed payment.\n"
    )
    turns = parse_turns(text, MAPPER)
    assert [t.speaker for t in turns] == ["Agent", "Customer", "Agent"]
    assert turns[0].text == "Let me check. I can see a late fee."
    assert turns[1].text == "Why is that? Note: the bill was high last month too."


def test_repeated_names_are_speakers_even_without_role():
    text = "Lena: hello\nOmar: hi Lena\nLena: how are you\nP.S.: nothing\nOmar: fine"
    turns = parse_turns(text, MAPPER)
    assert [t.speaker for t in turns] == ["Lena", "Omar", "Lena", "Omar"]
    assert turns[2].text == "how are you P.S.: nothing"
    assert {t.role for t in turns} == {"unknown"}


def test_single_line_speakers_all_count_when_none_repeats():
    turns = parse_turns("Lena: hello\nOmar: hi", MAPPER)
    assert [(t.speaker, t.text) for t in turns] == [("Lena", "hello"), ("Omar", "hi")]


def test_no_labels_is_one_unknown_turn_with_collapsed_whitespace():
    turns = parse_turns("  Hello   there\n\nSecond\tLINE keeps Case  \n", MAPPER)
    assert len(turns) == 1
    assert turns[0].speaker == "" and turns[0].role == "unknown"
    assert turns[0].text == "Hello there Second LINE keeps Case"


def test_text_before_first_label_is_its_own_turn():
    turns = parse_turns("Call recorded on Monday\nAgent: hello\nCustomer: hi", MAPPER)
    assert [(t.speaker, t.text) for t in turns] == [
        ("", "Call recorded on Monday"),
        ("Agent", "hello"),
        ("Customer", "hi"),
    ]


def test_time_only_line_starts_the_next_turn():
    turns = parse_turns("[00:00:30]\nAgent: hi\n00:45\nCustomer: hello", MAPPER)
    assert [t.start for t in turns] == [30.0, 45.0]


def test_empty_label_turns_are_dropped_and_label_alone_collects_next_lines():
    turns = parse_turns("Agent:\nCustomer:\nhello there\nAgent: bye", MAPPER)
    assert [(t.speaker, t.text) for t in turns] == [("Customer", "hello there"), ("Agent", "bye")]


def test_urls_and_clock_times_are_not_labels():
    turns = parse_turns(
        "Agent: see https://help.example/x at 10:30: ok\nCustomer: 10:30 works", MAPPER
    )
    assert turns[0].text == "see https://help.example/x at 10:30: ok"
    assert turns[1].text == "10:30 works"


@pytest.mark.parametrize(
    ("value", "seconds"),
    [
        ("01:02:03", 3723.0),
        ("1:02:03.5", 3723.5),
        ("02:03", 123.0),
        ("2:03,25", 123.25),
        ("12.5", 12.5),
        ("7", 7.0),
        ("abc", None),
        ("nan", None),
        ("inf", None),
    ],
)
def test_parse_clock(value, seconds):
    assert parse_clock(value) == seconds


def test_read_txt_id_source_format(tmp_path):
    f = tmp_path / "call-0001.txt"
    f.write_text("Agent: hello\nCustomer: my card was declined\n", encoding="utf-8")
    t = one_transcript(read(f))
    assert t.tid == "call-0001"
    assert t.source == str(f)
    assert t.format == "txt"
    assert t.metadata == {}
    assert [x.role for x in t.turns] == ["agent", "customer"]


@pytest.mark.parametrize("name", ["Café call 01.txt", "appel été №2.txt", "call.2024.03.txt"])
def test_unicode_spaces_and_dots_in_file_names(tmp_path, name):
    f = tmp_path / name
    f.write_text("Agent: hi\n", encoding="utf-8")
    t = one_transcript(read(f))
    assert t.tid == name[: -len(".txt")]


def test_crlf_cr_and_bom_give_same_turns(tmp_path):
    lines = ["Agent: hello", "there", "Customer: hi"]
    expected = None
    for k, (prefix, sep) in enumerate(
        [(b"", "\n"), (b"", "\r\n"), (b"", "\r"), (codecs.BOM_UTF8, "\r\n")]
    ):
        f = tmp_path / f"c{k}.txt"
        f.write_bytes(prefix + sep.join(lines).encode())
        t = one_transcript(read(f))
        got = [(x.speaker, x.text) for x in t.turns]
        expected = expected or got
        assert got == expected == [("Agent", "hello there"), ("Customer", "hi")]


def test_utf16_file(tmp_path):
    f = tmp_path / "u16.txt"
    f.write_bytes(codecs.BOM_UTF16_LE + "Agent: grüß dich\r\n".encode("utf-16-le"))
    t = one_transcript(read(f))
    assert t.turns[0].text == "grüß dich"


def test_cp1252_file_is_read_with_warning(tmp_path):
    f = tmp_path / "legacy.txt"
    f.write_bytes("Customer: the fee was €12 – too much".encode("cp1252"))
    items = read(f)
    t = one_transcript(items)
    assert t.turns[0].text == "the fee was €12 – too much"
    warnings = [x for x in items if isinstance(x, Warning_)]
    assert len(warnings) == 1 and "cp1252" in warnings[0].message
    assert warnings[0].source == str(f)


@pytest.mark.parametrize(
    ("content", "reason"),
    [
        (b"", "empty"),
        (b" \n\t\r\n ", "whitespace"),
        (b"\x7fELF\x02\x01\x01\x00\x00\x00", "looks binary"),
        (b"[00:00:01]\n00:02\nAgent:\n", "no transcript text"),
    ],
)
def test_rejects(tmp_path, content, reason):
    f = tmp_path / "bad.txt"
    f.write_bytes(content)
    items = read(f)
    assert not any(isinstance(x, Transcript) for x in items)
    rejects = [x for x in items if isinstance(x, Reject)]
    assert len(rejects) == 1
    assert reason in rejects[0].reason
    assert rejects[0].source == str(f) and rejects[0].format == "txt"


def test_oversize_file_rejected(tmp_path):
    f = tmp_path / "big.txt"
    f.write_text("Agent: " + "word " * 400, encoding="utf-8")
    items = read(f, IngestSettings(max_file_mb=0.001))
    assert len(items) == 1 and isinstance(items[0], Reject)
    assert "max_file_mb" in items[0].reason


def test_custom_label_lists_are_used(tmp_path):
    f = tmp_path / "interview.txt"
    f.write_text("Moderator: why?\nPanelist 3: because\n", encoding="utf-8")
    settings = IngestSettings(agent_labels=["moderator"], customer_labels=["panelist"])
    t = one_transcript(read(f, settings))
    assert [x.role for x in t.turns] == ["agent", "customer"]
