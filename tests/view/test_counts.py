"""Counts say how many transcripts were left out, and why."""

from __future__ import annotations

import json

from talkthemes.view.counts import CallCounts, excluded_reasons, reason_group


def test_reasons_are_grouped_as_a_reader_is_told() -> None:
    assert reason_group("6 tokens in the vocabulary, fewer than min_tokens = 20") == (
        "too short after preparation"
    )
    assert reason_group("only boilerplate sentences") == "only greetings and other set phrases"
    assert reason_group("something new 12") == "something new N"


def test_the_sentence_names_each_reason_with_its_count() -> None:
    counts = CallCounts(stored=1500, shown=1429, left_out={"too short after preparation": 71})
    assert counts.sentence() == (
        "1,429 of the 1,500 stored transcripts; 71 left out: 71 too short after preparation."
    )
    two = CallCounts(10, 6, {"ingested after this version was made": 3, "no words": 1})
    assert two.n_left_out == 4
    assert two.sentence().endswith("3 ingested after this version was made and 1 no words.")
    assert CallCounts(5, 5).sentence() == "All 5 stored transcripts."


def test_excluded_reasons_reads_the_versions_prep_json(tmp_path) -> None:
    (tmp_path / "prep.json").write_text(
        json.dumps({"excluded": [["a", "no words"], {"id": "b", "reason": "x"}, ["bad"]]})
    )
    assert excluded_reasons(tmp_path) == {"a": "no words", "b": "x"}
    assert excluded_reasons(tmp_path / "missing") == {}
