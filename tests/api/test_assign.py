"""``Workspace.assign``: texts, frames in both table shapes, and paths give the same shares
as the file-based assign; a text made of one theme's words is led by that theme."""

from __future__ import annotations

import logging
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import talkthemes as tt

#: Each caller says it several times over: a transcript needs ``[prepare] min_tokens`` (20)
#: words the version knows to get a lead theme (fewer: the unthemed group).
CALLS = {
    "a1": "Agent: Thanks for calling.\nCustomer: "
    + " ".join(["My smart meter display shows no reading, the meter reading is blank."] * 5),
    "b2": "Customer: "
    + " ".join(["The direct debit took two payments this month and I want a refund."] * 5),
    "c3": "Customer: "
    + " ".join(["There is a gas leak smell near the boiler, please send an engineer."] * 5),
}


def _turns(calls: dict[str, str]) -> pd.DataFrame:
    rows = []
    for tid, text in calls.items():
        for line in text.split("\n"):
            speaker, said = line.split(": ", 1)
            rows.append({"call_id": tid, "speaker": speaker, "text": said})
    return pd.DataFrame(rows)


def test_texts_frames_and_files_give_the_same_shares(
    published: tt.Workspace, tmp_path: Path
) -> None:
    per_call = pd.DataFrame({"call_id": list(CALLS), "text": list(CALLS.values())})
    from_frame = published.assign(per_call)
    from_turns = published.assign(_turns(CALLS))
    from_texts = published.assign(list(CALLS.values()))
    per_call.to_csv(tmp_path / "calls.csv", index=False)
    from_path = published.assign(tmp_path / "calls.csv")
    written = published.assign_files([tmp_path / "calls.csv"], out=tmp_path / "out.parquet")
    from_file = pd.read_parquet(written.out)

    assert from_frame["transcript_id"].tolist() == list(CALLS)
    assert from_frame["lead_theme_id"].notna().all()  # long enough to carry a theme
    assert from_texts["transcript_id"].tolist() == ["0", "1", "2"]  # positions
    share_cols = [c for c in from_frame.columns if c.startswith("share_")]
    assert len(share_cols) == published.version().k
    for other in (from_turns, from_texts, from_path, from_file):
        assert np.allclose(other[share_cols].to_numpy(), from_frame[share_cols].to_numpy())
        assert other["lead_theme_id"].tolist() == from_frame["lead_theme_id"].tolist()
    pd.testing.assert_frame_equal(from_path, from_frame)
    assert written.rows == 3 and written.exit_code == 0


def test_a_text_of_one_themes_words_is_led_by_that_theme(published: tt.Workspace) -> None:
    themes = published.themes(lam=1.0, n_terms=8)
    texts = [" ".join(t.replace("_", " ") for t in terms * 3) for terms in themes["top_terms"]]
    assigned = published.assign(texts)
    assert assigned["lead_theme_id"].tolist() == themes["theme_id"].tolist()
    assert (assigned["lead_share"] > 0.5).all()
    shares = assigned[[f"share_{t}" for t in themes["theme_id"]]].to_numpy()
    assert np.allclose(shares.sum(axis=1), 1, atol=1e-5)


def test_a_text_without_a_known_word_has_no_lead_theme_and_says_why(
    published: tt.Workspace,
) -> None:
    row = published.assign(["zzzq xxyv"]).iloc[0]
    assert pd.isna(row["lead_theme_id"]) and row["known_terms"] == 0 and row["reason"]
    assert row["lead_theme_label"] == "unthemed"


def test_a_text_with_fewer_known_words_than_min_tokens_is_unthemed(
    published: tt.Workspace,
) -> None:
    assigned = published.assign(["my smart meter shows no reading", CALLS["b2"]])
    short, long = assigned.iloc[0], assigned.iloc[1]
    assert 0 < short["known_terms"] < 20  # the version's [prepare] min_tokens
    assert pd.isna(short["lead_theme_id"]) and pd.isna(short["lead_share"])
    assert short["lead_theme_label"] == short["lead_theme_suggested_name"] == "unthemed"
    assert short["reason"] == (
        f"{short['known_terms']} tokens in the vocabulary, fewer than min_tokens = 20"
    )
    assert assigned.filter(like="share_").iloc[0].isna().all()
    assert long["known_terms"] >= 20 and not pd.isna(long["lead_theme_id"])
    assert long["reason"] == "" and long["lead_theme_label"] != "unthemed"


def test_rejected_inputs_raise_unless_asked_to_go_on(
    published: tt.Workspace, caplog: pytest.LogCaptureFixture
) -> None:
    texts = ["my smart meter shows no reading", "  ", "the direct debit took too much"]
    with pytest.raises(tt.InputError, match=r"1 input\(s\) rejected: texts: row 1: empty text"):
        published.assign(texts)
    with caplog.at_level(logging.WARNING, logger="talkthemes.api.reading"):
        kept = published.assign(texts, strict=False)
    assert kept["transcript_id"].tolist() == ["0", "2"]
    assert "rejected: texts: row 1: empty text" in caplog.text


def test_shapes_that_cannot_be_read_are_refused(published: tt.Workspace, tmp_path: Path) -> None:
    with pytest.raises(tt.InputError, match="a single string is ambiguous"):
        published.assign("my bill")  # type: ignore[arg-type]
    with pytest.raises(tt.InputError, match="not a mix"):
        published.assign(["a text", tmp_path / "a.txt"])  # type: ignore[list-item]
    with pytest.raises(tt.InputError, match="cannot read a int"):
        published.assign(3)  # type: ignore[arg-type]
    no_text = pd.DataFrame({"call_id": ["x"], "words": ["meter"]})
    with pytest.raises(tt.InputError, match="no text column found"):
        published.assign(no_text)


def test_missing_values_in_a_frame_are_empty_not_text(published: tt.Workspace) -> None:
    frame = pd.DataFrame({"call_id": ["a", "b"], "text": ["my meter reading", None]})
    frame["queue"] = pd.array(["billing", pd.NA], dtype="string")
    with pytest.raises(tt.InputError, match="frame: row 1: empty text"):
        published.assign(frame)
    assert published.assign(frame, strict=False)["transcript_id"].tolist() == ["a"]


def test_an_empty_list_gives_an_empty_frame(published: tt.Workspace) -> None:
    empty = published.assign([])
    assert empty.empty and "lead_theme_id" in empty.columns


def test_assign_with_an_older_version(published: tt.Workspace) -> None:
    texts = ["my smart meter shows no reading"]
    before = published.assign(texts)
    published.publish(k=3, family="nmf")
    assert published.current_version() == 2
    pd.testing.assert_frame_equal(published.assign(texts, version=1), before)
    assert len([c for c in published.assign(texts).columns if c.startswith("share_")]) == 3


def test_assign_reports_progress(published: tt.Workspace) -> None:
    seen: list[tuple[int, int, str]] = []
    published.assign(["meter reading", "direct debit"], progress=lambda *a: seen.append(a))
    assert seen[-1] == (2, 0, "1")
