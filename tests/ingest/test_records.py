"""Transcripts given as records in memory: both shapes, roles, metadata, and a reject
naming the record and the reason for each rule of talkthemes.ingest.records."""

from __future__ import annotations

import pytest

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.records import read_records

SETTINGS = IngestSettings()


def read(records: list, **kwargs: object) -> list:
    return list(read_records(records, SETTINGS, **kwargs))


def test_a_text_is_split_into_turns_with_roles() -> None:
    (t,) = read([{"id": " c1 ", "text": "Agent: Hello.\nCaller: My bill went up."}])
    assert isinstance(t, Transcript) and t.tid == "c1" and t.format == "records"
    assert [(u.speaker, u.role, u.text) for u in t.turns] == [
        ("Agent", "agent", "Hello."),
        ("Caller", "customer", "My bill went up."),
    ]
    assert t.source == "records:record 0"


def test_turns_keep_times_and_a_given_role() -> None:
    turns = [
        {"speaker": "Maria", "text": "  hello   there ", "start": 1, "end": 2.5},
        {"speaker": "Maria", "role": "agent", "text": "how can I help"},
        {"text": "   "},  # an empty turn says nothing and is left out
    ]
    (t,) = read([{"id": "c2", "turns": turns}])
    assert [(u.role, u.text, u.start, u.end) for u in t.turns] == [
        ("unknown", "hello there", 1.0, 2.5),
        ("agent", "how can I help", None, None),
    ]


def test_metadata_is_kept_as_strings_and_the_date_read() -> None:
    meta = {"queue": "billing", "duration_s": 312, "vip": True, "score": 0.5, "date": "3 Nov 2026"}
    (t,) = read([{"id": "c3", "text": "hello", "metadata": meta}])
    assert t.metadata == {
        "queue": "billing", "duration_s": "312", "vip": "true", "score": "0.5",
        "date": "2026-11-03",
    }  # fmt: skip


def test_a_date_not_understood_is_left_out_with_a_warning() -> None:
    items = read([{"id": "c4", "text": "hello", "metadata": {"date": "someday"}}])
    warning, t = items
    assert isinstance(warning, Warning_) and "someday" in warning.message
    assert "date" not in t.metadata


def test_without_required_ids_a_record_is_named_by_its_position() -> None:
    a, b = read([{"text": "one"}, {"id": "x", "text": "two"}], require_id=False)
    assert (a.tid, b.tid) == ("0", "x")


@pytest.mark.parametrize(
    ("record", "reason"),
    [
        ("just a string", "not an object"),
        ({"id": "a", "text": "x", "colour": "red"}, "unknown key(s) 'colour'"),
        ({"text": "x"}, "no 'id'"),
        ({"id": 7, "text": "x"}, "'id' must be a string"),
        ({"id": "  ", "text": "x"}, "empty id"),
        ({"id": "a"}, "give either 'text' or 'turns'"),
        ({"id": "a", "text": "x", "turns": [{"text": "y"}]}, "not both"),
        ({"id": "a", "text": 5}, "'text' must be a string"),
        ({"id": "a", "text": "   \n  "}, "empty text"),
        ({"id": "a", "turns": [{"text": " "}]}, "empty text"),
        ({"id": "a", "turns": "hello"}, "must be a list of turns"),
        (
            {"id": "a", "turns": [{"text": "x", "start": "soon"}]},
            "turn 0: 'start' must be a number",
        ),
        ({"id": "a", "turns": [{"text": "x", "role": "boss"}]}, "'role' must be one of"),
        ({"id": "a", "turns": [{"text": "x", "mood": 1}]}, "turn 0: unknown key(s) 'mood'"),
        ({"id": "a", "text": "x", "metadata": ["q"]}, "'metadata' must be an object"),
        ({"id": "a", "text": "x", "metadata": {"q": [1]}}, "metadata 'q' must be"),
    ],
)
def test_each_rule_rejects_the_record_naming_it(record: object, reason: str) -> None:
    items = read([{"id": "good", "text": "kept"}, record])
    assert isinstance(items[0], Transcript)  # the good record is read all the same
    (reject,) = items[1:]
    assert isinstance(reject, Reject) and reject.row == 1
    assert reject.reason.startswith("record 1") and reason in reject.reason


def test_a_repeated_id_is_rejected_naming_both_records() -> None:
    first, second = read([{"id": "a", "text": "one"}, {"id": "a", "text": "two"}])
    assert isinstance(first, Transcript)
    assert isinstance(second, Reject) and "also record 0's" in second.reason
