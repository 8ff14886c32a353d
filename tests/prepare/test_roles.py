"""Roles: which turns are kept."""

from __future__ import annotations

import pytest

from talkthemes.prepare.roles import select_turns

TURNS = [("agent", "a1"), ("customer", "c1"), ("unknown", "u1"), ("agent", "a2")]


def test_all_keeps_everything():
    assert select_turns(TURNS, "all") == (["a1", "c1", "u1", "a2"], [])


def test_customer_keeps_unknown_turns_too():
    assert select_turns(TURNS, "customer") == (["c1", "u1"], ["a1", "a2"])


def test_agent():
    assert select_turns(TURNS, "agent") == (["a1", "u1", "a2"], ["c1"])


def test_bad_value():
    with pytest.raises(ValueError, match="roles must be one of"):
        select_turns(TURNS, "caller")
