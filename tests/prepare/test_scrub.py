"""Scrub: personal data and redaction marks are removed and counted by kind."""

from __future__ import annotations

import pytest

from talkthemes.prepare.scrub import SCRUB_KINDS, scrub


@pytest.mark.parametrize(
    ("text", "kind", "left"),
    [
        ("write to jane.quill+bills@mail.example.co.uk today", "email", "write to today"),
        ("see https://www.example.org/help?id=7. thanks", "url", "see . thanks"),
        ("go to www.brindle-utilities.com now", "url", "go to now"),
        ("it is on example.com/billing somewhere", "url", "it is on somewhere"),
        ("card 4111 1111 1111 1111 please", "card", "card please"),
        ("card 4111-1111-1111-1111", "card", "card"),
        ("ring (555) 010-4477 after six", "phone", "ring after six"),
        ("ring +44 20 7946 0000 now", "phone", "ring now"),
        ("ring 555.010.4477", "phone", "ring"),
        ("account 88812345 is", "number", "account is"),
        ("card 4111 1111 1111 1112 failed", "number", "card failed"),  # fails Luhn
        ("my name is [REDACTED] ok", "tag", "my name is ok"),
        ("hi <name> and {PII}", "tag", "hi and"),
        ("the code *** and XXXX", "tag", "the code and"),
    ],
)
def test_each_kind(text: str, kind: str, left: str):
    counts: dict[str, int] = {}
    clean, removed = scrub(text, counts)
    assert " ".join(clean.split()) == left
    assert counts == {kind: counts[kind]} and counts[kind] >= 1
    assert removed >= 1


@pytest.mark.parametrize(
    "text",
    [
        "I paid 25.00 on the 3rd, about 1,250 in 2024",  # short numbers stay (filter drops them)
        "we have 2 kids (really) and a boxx",  # brackets and x's inside words are not marks
        "order ab12345 and 12345ab",  # digits glued to letters are left for the filter
        "nothing to see here",
        "",
    ],
)
def test_leaves_ordinary_text_alone(text: str):
    counts: dict[str, int] = {}
    assert scrub(text, counts) == (text, 0)
    assert counts == {}


def test_counts_accumulate_and_words_removed():
    counts: dict[str, int] = {}
    text = "mail a.b@c.com or d.e@f.org, card 5555 5555 5555 4444, call 555-010-4477"
    clean, removed = scrub(text, counts)
    assert counts == {"email": 2, "card": 1, "phone": 1}
    assert removed == 4 + 4 + 4 + 3  # a b c com, d e f org, 4 groups, 3 groups
    assert "@" not in clean and "5555" not in clean
    assert set(counts) <= set(SCRUB_KINDS)


def test_without_counts_dict():
    assert scrub("call 555-010-4477")[0].strip() == "call"
