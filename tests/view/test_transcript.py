"""Terms found in the original wording, turns and excerpts, HTML made of escaped pieces."""

from __future__ import annotations

import itertools
import re

from hypothesis import given
from hypothesis import strategies as st

from talkthemes.store import StoredTurn
from talkthemes.view.transcript import (
    TermHighlighter,
    excerpt,
    lemma_table,
    segments_html,
    transcript_html,
    turn_views,
    version_lang,
    version_lemmas,
)


def _marked(h: TermHighlighter, text: str) -> list[str]:
    return [s for s, hit in h.segments(text) if hit]


def test_highlight_words_case_lemma_and_inflection() -> None:
    h = TermHighlighter(["bill", "pay", "outage", "reply", "stop"], lemmas={"paid": "pay"})
    assert _marked(h, "Bills, BILL and billing; we paid.") == ["Bills", "BILL", "billing", "paid"]
    assert _marked(h, "Outages replies stopped") == ["Outages", "replies", "stopped"]
    assert _marked(h, "payment billboard") == []  # only whole words and simple endings


def test_highlight_has_no_short_d_rule() -> None:
    h = TermHighlighter(["fee", "move"])
    assert _marked(h, "feed the fees; moved") == ["fees", "moved"]


def test_highlight_phrases_as_runs_with_gaps() -> None:
    h = TermHighlighter(["direct_debit", "pay_bill", "late"])
    assert _marked(h, "My Direct-Debit failed") == ["Direct-Debit"]
    assert _marked(h, "I want to pay the bill") == ["pay the bill"]
    assert _marked(h, "pay it off, then the bill") == []  # too far apart
    assert _marked(h, "a direct line, a debit card") == []  # not across punctuation
    assert _marked(h, "direct to the bank by debit") == []  # more than two words apart
    assert _marked(h, "a direct line") == []  # parts alone are not marked
    assert _marked(h, "late late") == ["late", "late"]


def test_highlight_overlaps_merge() -> None:
    h = TermHighlighter(["late_fee", "fee"])
    assert h.segments("a late fee") == [("a ", False), ("late fee", True)]
    assert h.count("a late fee and a fee") == 2


@given(st.text(alphabet=st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=80))
def test_segments_join_back_to_the_text(text: str) -> None:
    h = TermHighlighter(["bill", "pay_bill", "a"])
    segments = h.segments(text)
    assert "".join(s for s, _ in segments) == text
    assert all(s for s, _ in segments) or text == ""
    for (_, a), (_, b) in itertools.pairwise(segments):
        assert not (a and b)  # highlighted runs are merged


def test_segments_html_escapes_every_piece() -> None:
    out = segments_html([("<b>x</b> & ", False), ("<i>bill</i>", True)])
    assert out == '&lt;b&gt;x&lt;/b&gt; &amp; <mark class="tt-hit">&lt;i&gt;bill&lt;/i&gt;</mark>'


def test_transcript_html_escapes_speakers_and_text() -> None:
    turns = [
        StoredTurn(0, "<AGENT> Dana", "agent", 65.0, None, "Your bill <script>x</script>"),
        StoredTurn(1, "", "customer", None, None, "ok"),
        StoredTurn(2, "caller", "unknown", None, None, "hm"),
    ]
    views = turn_views(turns, TermHighlighter(["bill"]), masked=False)
    out = transcript_html(views)
    assert "<script>" not in out and "&lt;script&gt;" in out
    assert '<mark class="tt-hit">bill</mark>' in out and "1:05" in out
    # one spelling per role, whatever the label was (and no name from a label)
    speakers = re.findall(r'class="tt-speaker"[^>]*>([^<]*)</span>', out)
    assert speakers == ["Agent", "Customer", "Speaker"] and "Dana" not in out


def test_excerpt_picks_the_turn_with_most_terms_and_trims() -> None:
    h = TermHighlighter(["bill"])
    long = "word " * 100 + "my bill here " + "tail " * 100
    turns = turn_views(
        [
            StoredTurn(0, "Agent", "agent", None, None, "hello there"),
            StoredTurn(1, "Customer", "customer", None, None, long),
        ],
        h,
    )
    speaker, segments = excerpt(turns, max_chars=120)
    text = "".join(s for s, _ in segments)
    assert speaker == "Customer" and "bill" in [s for s, hit in segments if hit]
    assert text.startswith("… ") and text.endswith(" …") and len(text) <= 126
    short = turn_views([StoredTurn(0, "A", "agent", None, None, "a bill")], h)
    assert excerpt(short) == ("Agent", [("a ", False), ("bill", True)])
    assert excerpt([]) == ("", [])


def test_highlighting_uses_the_lemmas_the_version_was_prepared_with(version) -> None:
    version.info["prepare_settings"] = {"lang": "en"}
    lemmas = version_lemmas(version)
    assert lemmas is lemma_table("en")  # read once per process, shared
    assert lemmas.get("paid") == "pay"  # an irregular form only the lookup table knows
    h = TermHighlighter(["pay"], lemmas=lemmas)
    assert [s for s, hit in h.segments("I paid it") if hit] == ["paid"]


def test_a_language_without_a_lookup_table_highlights_words_as_written(version) -> None:
    version.info["prepare_settings"] = {"lang": "xx"}
    assert version_lang(version) == "xx" and version_lemmas(version) == {}
    version.info.pop("prepare_settings")
    assert version_lang(version) == "en"  # a version that did not record it
