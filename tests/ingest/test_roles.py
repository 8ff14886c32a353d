"""Tests for talkthemes.ingest.roles: label recognition and role mapping."""

from __future__ import annotations

import pytest

from talkthemes.config import IngestSettings
from talkthemes.ingest.roles import RoleMapper, choose_speakers, split_label


@pytest.fixture
def mapper() -> RoleMapper:
    s = IngestSettings()
    return RoleMapper(s.agent_labels, s.customer_labels)


@pytest.mark.parametrize(
    ("label", "role"),
    [
        ("Agent", "agent"),
        ("Agent 2", "agent"),
        ("AGENT", "agent"),
        ("CUSTOMER:", "customer"),
        ("caller1", "customer"),
        ("Caller_2", "customer"),
        ("[Rep]", "agent"),
        ("Interviewer", "agent"),
        ("Respondent 14", "customer"),
        ("Agent (Sam)", "agent"),
        ("Maria", "unknown"),
        ("Speaker 1", "unknown"),
        ("", "unknown"),
        (None, "unknown"),
        ("unknown", "unknown"),
    ],
)
def test_default_labels(mapper, label, role):
    assert mapper.role(label) == role


def test_role_names_map_to_themselves_even_when_not_listed():
    m = RoleMapper(["host"], ["guest"])
    assert m.role("agent") == "agent"
    assert m.role("Customer") == "customer"
    assert m.role("Host 1") == "agent"
    assert m.role("rep") == "unknown"


def test_whole_label_match_allows_multi_word_entries():
    m = RoleMapper(["Sales Desk"], ["Account Holder"])
    assert m.role("sales desk") == "agent"
    assert m.role("Account Holder") == "customer"
    assert m.role("Sales") == "unknown"


def test_label_in_both_lists_is_agent():
    assert RoleMapper(["staff"], ["staff"]).role("Staff") == "agent"


def test_cache_gives_same_answer():
    m = RoleMapper(["agent"], ["caller"])
    assert [m.role("caller3") for _ in range(3)] == ["customer"] * 3


@pytest.mark.parametrize(
    ("line", "expected"),
    [
        ("Agent: hello there", ("Agent", "hello there")),
        ("Agent:", ("Agent", "")),
        ("  Customer 2 :  my bill", ("Customer 2", "my bill")),
        ("Dr. Okafor: take a seat", ("Dr. Okafor", "take a seat")),
        ("Note: the bill was high", ("Note", "the bill was high")),
        ("Ana María: hola", ("Ana María", "hola")),
        ("see https://example.org/help", None),
        ("https://example.org: here", None),
        ("10:30 is fine", None),
        ("the reason I called today is: my bill", None),  # 6 words
        ("A" * 41 + ": too long", None),
        ("A" * 40 + ": ok", ("A" * 40, "ok")),
        ("no colon here", None),
        ("Time:10", None),  # no space after the colon
    ],
)
def test_split_label(line, expected):
    assert split_label(line) == expected


def test_choose_speakers_needs_role_or_repeat(mapper):
    assert choose_speakers({"agent": 1, "note": 1}, mapper) == {"agent"}
    assert choose_speakers({"maria": 2, "note": 1}, mapper) == {"maria"}
    assert choose_speakers({"maria": 3, "tom": 2, "ps": 1}, mapper) == {"maria", "tom"}


def test_choose_speakers_falls_back_to_all_when_none_qualifies(mapper):
    assert choose_speakers({"maria": 1, "tom": 1}, mapper) == {"maria", "tom"}
