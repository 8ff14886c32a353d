"""Escaping in one place: what a user sees is the literal text, whatever it holds."""

from __future__ import annotations

import csv
import html
import io
import re

import pandas as pd
from hypothesis import example, given, settings
from hypothesis import strategies as st
from markdown_it import MarkdownIt

from talkthemes.text import (
    csv_cell,
    csv_frame,
    html_text,
    md_file_inline,
    md_inline,
    percent,
    terminal_text,
)

_md = MarkdownIt("commonmark", {"html": True}).enable("table").enable("strikethrough")


def _rendered_text(markdown: str) -> str:
    """The text a reader sees when the Markdown is rendered (tags stripped, entities decoded)."""
    rendered = _md.render(markdown)
    return html.unescape(re.sub(r"<[^>]+>", "", rendered)).strip()


@settings(max_examples=300, deadline=None)
@example("&ap;")
@example("&amp; &#35; &lt;b&gt;")
@given(st.text(alphabet=st.characters(blacklist_categories=("Cs", "Cc")), max_size=60))
def test_markdown_renders_the_literal_text(text: str) -> None:
    one_line = " ".join(text.split())
    assert _rendered_text(md_inline(text)) == one_line


def test_markdown_neutralises_links_images_and_html() -> None:
    hostile = "[click](http://x.test) ![i](http://x.test/i.png) <b>bold</b> # head | a | b"
    rendered = _md.render(md_inline(hostile))
    assert "<a " not in rendered and "<img" not in rendered and "<b>" not in rendered
    assert "<h1>" not in rendered and "<table>" not in rendered


_TAGS = re.compile(r"<(a|img|em|strong|code|del|h[1-6]|table|ol|ul|li|blockquote|hr|pre)\b")


@settings(max_examples=400, deadline=None)
@example("fall_line _x_ a__b ___")
@example("1. item")
@example("- item")
@example("# head")
@example("> quote")
@example("===")
@example("&amp; &#35; <b>x</b> [l](u) ![i](u) `c` ~~s~~ $m$ | a | b |")
@given(st.text(alphabet=st.characters(blacklist_categories=("Cs", "Cc")), max_size=60))
def test_markdown_file_text_renders_the_literal_text(text: str) -> None:
    one_line = " ".join(text.split())
    escaped = md_file_inline(text)
    assert _rendered_text(escaped) == one_line
    assert not _TAGS.search(_md.render(escaped))


def test_markdown_file_text_leaves_ids_dates_and_phrases_as_they_are() -> None:
    for plain in ("C2026-10-000141", "2026-12-05T07:16:24+00:00", "fall_line", "Unit rate · price"):
        assert md_file_inline(plain) == plain
    # autolinks of GitHub's Markdown (not in the parser above) are broken by one escape each
    assert md_file_inline("http://x.test www.x.test a@x.test") == (
        "http\\://x.test www\\.x.test a\\@x.test"
    )


def test_html_text_escapes_markup_and_quotes() -> None:
    assert html_text('<script>"x"</script>&\'') == (
        "&lt;script&gt;&quot;x&quot;&lt;/script&gt;&amp;&#x27;"
    )


def test_terminal_text_removes_escape_sequences() -> None:
    assert terminal_text("ok\x1b[31mred\x07") == "ok?[31mred?"
    assert terminal_text("tab\tand\nnewline") == "tab\tand\nnewline"


def test_csv_cell_follows_owasp_csv_injection_guidance() -> None:
    # OWASP "CSV Injection": cells starting with = + - @ tab or CR are prefixed with a quote.
    for start in ("=", "+", "-", "@", "\t", "\r"):
        assert csv_cell(start + "SUM(A1)") == "'" + start + "SUM(A1)"
    assert csv_cell("plain") == "plain"
    assert csv_cell(-3) == -3  # numbers are not text


def test_csv_frame_round_trips_through_pythons_csv_reader() -> None:
    frame = pd.DataFrame({"label": ['=HYPERLINK("x")', 'a, "b"\nc'], "n": [1, 2]})
    buf = io.StringIO()
    csv_frame(frame).to_csv(buf, index=False)
    rows = list(csv.reader(io.StringIO(buf.getvalue())))
    assert rows[1][0] == '\'=HYPERLINK("x")'
    assert rows[2][0] == 'a, "b"\nc'
    assert frame["label"][0].startswith("=")  # the input frame is not changed


def test_percent() -> None:
    assert percent(0.1234) == "12.3%"
    assert percent(0.5, 0) == "50%"
    assert percent(None) == "–"
    assert percent(float("nan")) == "–"
