"""Hostile transcript text and labels show as text — in the Calls section and the report.

The demo workspace holds ``A-xss-001``, whose every turn carries ``<script>alert(1)</script>``
and ``<img src=x onerror=alert(1)>``, and whose ``site`` metadata carries the image tag. By
default the viewer masks such tags with the rest of the text the scrub removes; the
escaping is checked where the workspace allows the original text (``[view]
original_text``), where the markup reaches the page as typed.
"""

from __future__ import annotations

import html
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

import talkthemes.app
from talkthemes.app import _shared
from talkthemes.app.calls import OPEN_KEY
from talkthemes.config import render_settings
from talkthemes.report import build_report, render_report
from talkthemes.text import md_inline
from talkthemes.versions.load import load_version
from talkthemes.view.transcript import TermHighlighter, segments_html, transcript_html, turn_views
from talkthemes.workspace import atomic_write_text

APP = Path(talkthemes.app.__file__).resolve().parent / "main.py"
SCRIPT = "<script>alert(1)</script>"
IMG = "<img src=x onerror=alert(1)>"
RAW = ("<script", "<img", "onerror=alert(1)>")


def _assert_text_only(markup: str) -> None:
    for raw in RAW:
        assert raw not in markup.replace("&lt;script", "").replace("&lt;img", ""), raw
    assert "<script" not in markup and "<img" not in markup


def _allow_original(ws) -> None:
    settings = ws.settings()
    settings.view.original_text = True
    atomic_write_text(ws.settings_path, render_settings(settings))


def test_the_calls_section_shows_markup_as_text(demo_ws, ws_copy, monkeypatch) -> None:
    _allow_original(ws_copy)
    version = load_version(ws_copy)
    lead = version.theme_ids[int(version.lead()[version.doc_ids.index(demo_ws.xss_id)])]
    monkeypatch.setenv("TALKTHEMES_WORKSPACE", str(ws_copy.root))
    at = AppTest.from_file(str(APP), default_timeout=180)
    at.run()
    at.session_state[_shared.SELECTED_THEME] = lead
    at.session_state[OPEN_KEY] = demo_ws.xss_id
    at.switch_page("calls.py").run()
    assert not at.exception, [e.value for e in at.exception]
    assert at.selectbox(key=OPEN_KEY).value == demo_ws.xss_id
    bodies = [h.value for h in at.get("html")]
    assert len(bodies) == 1
    body = bodies[0]
    _assert_text_only(body)
    with ws_copy.store() as store:
        stored = " ".join(t.text for t in store.get_turns(demo_ws.xss_id))
    assert stored.count(SCRIPT) >= 5 and stored.count(IMG) >= 5
    assert body.count(html.escape(SCRIPT)) == stored.count(SCRIPT)
    assert body.count(html.escape(IMG)) == stored.count(IMG)
    # the metadata shown above the transcript is escaped markdown, never markup
    facts = " ".join(c.value for c in at.caption)
    assert md_inline(f"Site: Site {IMG}") in facts
    # the list shows the value as data (a cell of a table, not HTML)
    listed = at.dataframe[0].value.set_index("transcript_id")
    assert listed.loc[demo_ws.xss_id, "site"] == f"Site {IMG}"
    # and the site filter offers it as a plain option
    assert f"Site {IMG}" in at.multiselect(key="calls_field_site").options


def test_highlighted_html_is_built_from_escaped_pieces() -> None:
    h = TermHighlighter(["alert", "script", "power"])
    text = f"power {SCRIPT} and {IMG}"
    out = segments_html(h.segments(text))
    _assert_text_only(out)
    assert html.unescape(out.replace('<mark class="tt-hit">', "").replace("</mark>", "")) == text
    assert '<mark class="tt-hit">script</mark>' in out  # a term inside the tag, still text


def test_by_default_the_tags_are_masked_like_the_rest(demo_ws) -> None:
    from talkthemes.view.transcript import load_transcript

    turns = load_transcript(demo_ws.ws, demo_ws.xss_id, TermHighlighter(["power"]))
    body = transcript_html(turns)
    _assert_text_only(body)
    assert "alert(1)" not in body and ">removed</span>" in body


def test_the_report_shows_markup_as_text(ws_copy) -> None:
    _allow_original(ws_copy)
    version = load_version(ws_copy)
    pos = int(version.lead()[version.doc_ids.index("A-xss-001")])
    tid = version.theme_ids[pos]
    with ws_copy.store() as store:
        store.set_label(tid, label=f"</script>{SCRIPT}", note=f"{IMG} & \"quoted\" 'note'")
    n_led = int((version.lead() == pos).sum())
    page = render_report(build_report(ws_copy, excerpts=n_led))
    body = page.split("</head>", 1)[1]  # after the inlined chart runtime
    card = body.split(f'id="theme-{tid}"', 1)[1].split("</article>", 1)[0]
    assert html.escape(f"</script>{SCRIPT}") in card
    assert html.escape(f"{IMG} & \"quoted\" 'note'") in card
    assert card.count(html.escape(IMG)) >= 2  # the note and the hostile excerpt
    assert "A-xss-001" in card
    visible = body.split('<script id="tt-specs"', 1)[0]
    _assert_text_only(visible)
    specs = body.split('<script id="tt-specs" type="application/json">', 1)[1].split(
        "</script>", 1
    )[0]
    assert "<" not in specs and ">" not in specs and "\\u003c/script\\u003e" in specs
    assert page.count("<script") == 3  # the runtime, the specs, the loader — nothing else


@pytest.mark.parametrize("text", [SCRIPT, IMG, "a</mark><script>x</script>"])
def test_transcript_html_never_passes_markup(text: str) -> None:
    raw = [type("T", (), {"seq": 0, "speaker": text, "role": "agent", "start": 1.0, "text": text})]
    for masked in (True, False):
        turns = turn_views(raw, TermHighlighter(["mark", "script", "img"]), masked=masked)
        _assert_text_only(transcript_html(turns))
