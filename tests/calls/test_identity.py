"""Tests for talkthemes.calls.identity: when the same text is a likely re-export."""

from __future__ import annotations

import pytest

from talkthemes.calls.identity import (
    KEPT,
    SAME_TEXT,
    SKIPPED,
    ReexportRule,
    metadata_conflicts,
)


@pytest.mark.parametrize(
    ("new", "old", "conflicts"),
    [
        ({"date": "2026-01-05"}, {"date": "2026-01-05T10:00:00"}, []),  # the same day
        ({"date": "2026-01-05"}, {"date": "2026-01-06"}, [("date", "2026-01-05", "2026-01-06")]),
        ({"call_duration": "61"}, {"call_duration": "60.4"}, []),  # rounding of a second
        ({"duration_s": "61"}, {"duration_s": "75"}, [("duration_s", "61", "75")]),
        ({"Agent ID": "a7 "}, {"Agent ID": "A7"}, []),  # case and spaces
        ({"agent_id": "a7"}, {"agent_id": "a9"}, [("agent_id", "a7", "a9")]),
        ({"queue": "billing"}, {"queue": "moves"}, []),  # not a field that tells calls apart
        ({"date": "2026-01-05"}, {}, []),  # only fields both calls have count
        ({"agentur": "x"}, {"agentur": "y"}, []),  # a word of the name, not a prefix
    ],
)
def test_metadata_conflicts(new, old, conflicts) -> None:
    assert metadata_conflicts(new, old, ["date", "duration", "agent"]) == conflicts


def test_judge_needs_a_long_text_and_no_conflict() -> None:
    rule = ReexportRule(min_words=25)
    assert rule.judge(24, {}, {}) == (SAME_TEXT, "short text (24 words < 25)")
    assert rule.judge(25, {}, {}) == (SKIPPED, "likely re-export")
    kind, why = rule.judge(100, {"date": "2026-01-05"}, {"date": "2026-02-05"})
    assert kind == SAME_TEXT and why == "metadata differs: date '2026-01-05' vs '2026-02-05'"
    assert ReexportRule(action="keep").judge(30, {}, {})[0] == KEPT
    assert ReexportRule(fields=()).judge(30, {"date": "1"}, {"date": "2"})[0] == SKIPPED
