"""The drift report on a small refresh whose answer is known."""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
from markdown_it import MarkdownIt

from talkthemes.charts.drift import drift_chart
from talkthemes.errors import InputError
from talkthemes.text import md_file_inline
from talkthemes.versions.align import align_themes
from talkthemes.versions.drift import ThemeSide, drift_frame, drift_report
from talkthemes.versions.drift_markdown import render_markdown

LABEL = "Billing <b>|</b> [x](http://e)"
VOCAB = ["bill", "charge", "fee", "late", "leak", "pipe", "water", "meter", "read", "price"]


def _phi(weights: dict[str, float]) -> np.ndarray:
    row = np.full(len(VOCAB), 1e-3)
    for w, x in weights.items():
        row[VOCAB.index(w)] = x
    return row / row.sum()


@pytest.fixture
def case() -> dict:
    old = ThemeSide(
        theme_ids=[1, 2, 3],
        labels=[LABEL, "", ""],
        topic_terms=np.vstack(
            [
                _phi({"bill": 5, "charge": 4, "fee": 3, "late": 2}),
                _phi({"leak": 5, "pipe": 4, "water": 3}),
                _phi({"meter": 5, "read": 4}),
            ]
        ),
        vocabulary=VOCAB,
        coverage=np.array([0.5, 0.3, 0.2]),
    )
    # new version: billing kept (late fee fades), leak kept, meter gone, price appears
    new_topics = np.vstack(
        [
            _phi({"leak": 5, "pipe": 4, "water": 3.5}),
            _phi({"bill": 5, "charge": 4, "fee": 3, "price": 0.5}),
            _phi({"price": 6, "charge": 1}),
        ]
    )
    al = align_themes(old.topic_terms, VOCAB, new_topics, VOCAB, threshold=0.4)
    assert al.matched_old.tolist() == [1, 0, -1] and al.retired.tolist() == [2]
    new = ThemeSide([2, 1, 4], ["", LABEL, ""], new_topics, VOCAB,
                    np.array([0.3, 0.4, 0.3]))  # fmt: skip
    rng = np.random.default_rng(0)
    theta = rng.dirichlet([1, 1, 1], size=40)
    is_new = np.zeros(40, dtype=bool)
    is_new[30:] = True
    theta[30:35] = [0.05, 0.05, 0.9]  # five new transcripts about the price
    theta[35] = [0.0, 0.0, 1.0]
    ids = [f"t{i:02d}" for i in range(40)]
    theta[3] = [0.0, 0.0, 1.0]  # an earlier transcript with the largest share: not an example
    report = drift_report(
        old, new, al, doc_topics=theta, doc_ids=ids, is_new=is_new, version=5,
        previous_version=4, calibration={"rule": "test rule", "overlap": True}, n_terms=4,
        n_examples=3, snippets={"t35": "I saw the <price> letter | twice"},
        created_at="2026-11-02T03:00:00+00:00",
    )  # fmt: skip
    return {"report": report, "theta": theta, "is_new": is_new, "al": al}


def test_report_contents(case: dict) -> None:
    r, theta, is_new = case["report"], case["theta"], case["is_new"]
    assert (r["version"], r["previous_version"]) == (5, 4)
    assert r["counts"] == {"carried": 2, "new": 1, "retired": 1}
    assert r["transcripts"] == {"total": 40, "new": 10, "earlier": 30}
    assert r["threshold"]["same_theme_cutoff"] == 0.4 and r["threshold"]["rule"] == "test rule"
    leak, billing, price = r["themes"]
    assert (leak["theme_id"], leak["status"], leak["previous_theme_id"]) == (2, "carried", 2)
    assert billing["terms_gained"] == ["price"] and billing["terms_lost"] == ["late"]
    assert billing["top_terms"] == ["bill", "charge", "fee", "price"]
    assert billing["distance"] == pytest.approx(case["al"].matched_distance[1], abs=1e-6)
    assert (billing["coverage_before"], billing["coverage_after"]) == (0.5, 0.4)
    assert leak["terms_gained"] == [] and leak["terms_lost"] == []
    # coverage among new and earlier transcripts, with bootstrap intervals
    lead = np.argmax(theta, axis=1)
    cov = price["coverage_new_transcripts"]
    assert cov["n"] == 10 and cov["share"] == pytest.approx(np.mean(lead[is_new] == 2))
    assert cov["lo"] <= cov["share"] <= cov["hi"]
    earlier = price["coverage_earlier_transcripts"]
    assert earlier["n"] == 30 and earlier["share"] == pytest.approx(np.mean(lead[~is_new] == 2))
    # the new theme: no distance, its nearest previous theme, examples from new transcripts
    assert price["status"] == "new" and price["distance"] is None
    assert price["coverage_before"] is None
    assert price["nearest_previous"]["theme_id"] == 1
    ex = price["examples"]
    assert [e["transcript_id"] for e in ex] == ["t35", "t30", "t31"]  # largest share first
    assert ex[0]["share"] == 1.0 and ex[0]["excerpt"].startswith("I saw")
    assert "excerpt" not in ex[1]
    (meter,) = r["retired"]
    assert (meter["theme_id"], meter["status"], meter["coverage_before"]) == (3, "retired", 0.2)
    assert meter["top_terms"][:2] == ["meter", "read"]
    assert "nearest_new" in meter
    json.dumps(r, allow_nan=False)  # strict JSON: no NaN anywhere


def test_frame_and_chart(case: dict) -> None:
    frame = drift_frame(case["report"])
    assert frame["status"].tolist() == ["carried", "carried", "new", "retired"]
    assert frame["theme_id"].tolist() == [2, 1, 4, 3]
    assert np.isnan(frame.loc[2, "distance"]) and np.isnan(frame.loc[3, "coverage_after"])
    spec = drift_chart(frame).to_dict()
    assert spec["hconcat"]


def test_markdown_is_readable_and_escaped(case: dict) -> None:
    md = render_markdown(case["report"])
    assert md.startswith("# Drift report: version 5 against version 4")
    for section in ("## New themes", "## Carried themes", "## Retired themes"):
        assert section in md
    assert "### Theme 4: price · charge · bill" in md
    assert "Caution" in md  # the calibration reported overlap
    # no markup character of transcript or label text is left unescaped
    assert not re.search(r"(?<!\\)[<>]", md) and not re.search(r"(?<!\\)\]\(", md)
    assert "\\<b\\>" in md and "\\[x\\]" in md
    table_rows = [line for line in md.splitlines() if line.startswith("| 1 |")]
    assert len(table_rows) == 1 and table_rows[0].count(" | ") == 7  # pipes escaped
    assert md_file_inline(LABEL) in md  # the escaping for Markdown files, from text/


def test_markdown_renders_user_text_literally(case: dict) -> None:
    """Rendered as a Markdown viewer would (CommonMark with tables, markdown-it-py), the label
    and the excerpt show as the text they are: no bold element, no link, no extra cell."""
    html = MarkdownIt("commonmark").enable("table").render(render_markdown(case["report"]))
    assert "<b>" not in html and "<a " not in html
    assert "Billing &lt;b&gt;|&lt;/b&gt; [x](http://e)" in html
    assert "I saw the &lt;price&gt; letter | twice" in html
    assert "2026-11-02T03:00:00+00:00" in html  # the refresh time, unescaped once rendered
    first_cell = '<td style="text-align:right">1</td>'
    carried_rows = [row for row in html.split("<tr>") if first_cell in row]
    assert len(carried_rows) == 1 and carried_rows[0].count("<td") == 8


def test_report_rejects_shapes_that_do_not_fit(case: dict) -> None:
    r = case["report"]
    del r
    old = ThemeSide([1], [""], np.ones((1, 3)) / 3, ["a", "b", "c"], np.array([1.0]))
    al = align_themes(old.topic_terms, old.vocabulary, old.topic_terms, old.vocabulary,
                      threshold=0.5)  # fmt: skip
    with pytest.raises(InputError, match="doc_topics"):
        drift_report(old, old, al, doc_topics=np.ones((2, 2)), doc_ids=["a", "b"],
                     is_new=np.zeros(2, bool), version=2, previous_version=1)  # fmt: skip
    with pytest.raises(InputError, match="theme ids"):
        ThemeSide([1, 2], [""], np.ones((1, 3)), ["a", "b", "c"], np.array([1.0]))
