"""Counts say how many transcripts were left out, and why."""

from __future__ import annotations

import json

import pytest

from talkthemes.view.counts import CallCounts, excluded_reasons, reason_group


def test_reasons_are_grouped_as_a_reader_is_told() -> None:
    assert reason_group("6 tokens in the vocabulary, fewer than min_tokens = 20") == (
        "too short after preparation"
    )
    assert reason_group("only boilerplate sentences") == "only greetings and other set phrases"
    assert reason_group("something new 12") == "something new N"


def test_the_sentence_names_each_reason_with_its_count() -> None:
    counts = CallCounts(stored=1500, shown=1429, unthemed={"too short after preparation": 71})
    assert counts.n_unthemed == 71 and counts.n_left_out == 0
    assert counts.sentence() == (
        "Of the 1,500 stored transcripts: 1,429 in the themes, "
        "71 unthemed (71 too short after preparation)."
    )
    two = CallCounts(10, 6, {"too short after preparation": 2, "no words": 1},
                     {"ingested after this version was made": 1})  # fmt: skip
    assert two.n_unthemed == 3 and two.n_left_out == 1
    assert two.sentence() == (
        "Of the 10 stored transcripts: 6 in the themes, 3 unthemed (2 too short after "
        "preparation and 1 no words), 1 ingested after this version was made."
    )
    assert CallCounts(5, 5).sentence() == "All 5 stored transcripts are in the themes."


def test_excluded_reasons_reads_the_versions_prep_json(tmp_path) -> None:
    (tmp_path / "prep.json").write_text(
        json.dumps({"excluded": [["a", "no words"], {"id": "b", "reason": "x"}, ["bad"]]})
    )
    assert excluded_reasons(tmp_path) == {"a": "no words", "b": "x"}
    assert excluded_reasons(tmp_path / "missing") == {}


def test_the_unthemed_group_counts_what_the_prep_excluded(tmp_path) -> None:
    from talkthemes.versions.unthemed import unthemed_group

    excluded = [["h1", "3 tokens in the vocabulary, fewer than min_tokens = 8"],
                ["h2", "only boilerplate sentences"],
                ["h3", "2 tokens in the vocabulary, fewer than min_tokens = 8"],
                ["a", "no words"]]  # fmt: skip
    (tmp_path / "prep.json").write_text(json.dumps({"excluded": excluded}))
    group = unthemed_group(tmp_path, ["a", "b", "c", "d", "e", "f", "g"])  # "a" is themed
    assert group.count == 3 and group.themed == 7
    assert group.share == pytest.approx(0.3)
    assert group.by_reason == {
        "too short after preparation": 2,
        "only greetings and other set phrases": 1,
    }
    assert list(group.reasons) == ["h1", "h2", "h3"]
    assert group.to_json() == {"count": 3, "share": 0.3, "by_reason": group.by_reason}
    assert group.sentence() == (
        "Unthemed: 3 transcripts (30.0%), too short after preparation (2), "
        "only greetings and other set phrases (1)."
    )
    empty = unthemed_group(tmp_path / "missing", ["a"])
    assert empty.count == 0 and empty.share == 0.0 and empty.sentence() == "Unthemed: none."
