"""Labelling in the viewer and the report: suggested names, evidence sentences (stored,
highlighted, escaped), merging on the Theme cards, and why a call belongs to its themes."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
from tests.viewer.conftest import IMG, SCRIPT
from tests.viewer.test_app import charts, open_app, run, texts
from tests.viewer.test_report import cards_of

from talkthemes.app import _shared
from talkthemes.text import md_inline
from talkthemes.versions.load import load_version


def _html(at) -> str:
    return "\n".join(str(h.value) for h in at.get("html"))


def test_the_theme_card_shows_the_suggested_name_and_the_evidence(demo_ws, monkeypatch) -> None:
    version = load_version(demo_ws.ws)
    unlabelled = next(t for t in version.themes if not t.label)
    tid = unlabelled.theme_id
    at = open_app(demo_ws.ws.root, monkeypatch)
    at.session_state[_shared.SELECTED_THEME] = tid
    run(at, "theme_cards.py")
    pos = version.position(tid)
    suggested = version.suggested_names()[pos]
    assert at.subheader[0].value == md_inline(suggested)
    assert f"**Suggested name**, not labelled yet: {md_inline(suggested)}" in texts(at)
    assert at.selectbox(key="cards_pick").format_func(tid).endswith("· suggested name")
    body = _html(at)
    sentences = version.evidence(pos)
    assert sentences and body.count('class="tt-evidence-item"') == len(sentences)
    assert '<mark class="tt-hit">' in body
    for s in sentences:
        assert f"call {s.call_id}" in body
    assert SCRIPT not in body and IMG not in body  # transcript text is never markup
    assert at.selectbox(key=f"evidence_call_{pos}_{version.n}").options == [
        s.call_id for s in sentences
    ]


def test_merging_on_the_card_makes_one_theme_everywhere(ws_copy, monkeypatch) -> None:
    version = load_version(ws_copy)
    a, b = version.theme_ids[:2]
    at = open_app(ws_copy.root, monkeypatch)
    at.session_state[_shared.SELECTED_THEME] = b
    run(at, "theme_cards.py")
    at.selectbox(key=f"curation_into_{b}").set_value(a)
    run(at)
    at.button(key=f"curation_merge_{b}").click()
    run(at)
    with ws_copy.store() as store:
        assert store.theme_merges() == {b: a}
        assert store.curation_log(b)[0].action == "merge"
    assert at.session_state[_shared.SELECTED_THEME] == a
    assert f"Merged: themes #{b} are shown as part of theme #{a}" in texts(at)
    run(at, "theme_map.py")
    listed = at.dataframe[0].value
    assert b not in set(listed["theme_id"]) and a in set(listed["theme_id"])
    merged = load_version(ws_copy)
    assert merged.k == version.k - 1
    raw = np.asarray(version.doc_topics)
    ai, bi = version.position(a), version.position(b)
    assert np.allclose(
        np.asarray(merged.doc_topics)[:, merged.position(a)], raw[:, ai] + raw[:, bi], atol=1e-5
    )
    run(at, "theme_cards.py")
    at.button(key=f"curation_unmerge_{a}").click()
    run(at)
    assert load_version(ws_copy).k == version.k


def test_why_this_call_draws_the_terms_that_pulled_it(demo_ws, monkeypatch) -> None:
    at = run(open_app(demo_ws.ws.root, monkeypatch), "calls.py")
    (chart,) = charts(at)
    spec = json.loads(chart.proto.spec)
    assert spec["title"]["text"] == "Why this call"
    version = load_version(demo_ws.ws)
    names = set(version.names())
    panels = spec["vconcat"]
    assert 1 <= len(panels) <= 3
    call = at.selectbox(key="calls_open").value
    row = version.doc_ids.index(call)
    for panel in panels:
        title = panel["title"]["text"]
        name, share = title.rsplit(" · ", 1)
        assert name in names and re.fullmatch(r"\d+% of the call", share)
        k = version.names().index(name)
        assert share == f"{float(version.doc_topics[row, k]):.0%} of the call"


def test_the_report_cards_hold_the_evidence_and_mark_suggested_names(
    demo_ws, report_file: Path
) -> None:
    page = report_file.read_text(encoding="utf-8")
    version = load_version(demo_ws.ws)
    cards = cards_of(page)
    for tid, body in cards.items():
        pos = version.position(tid)
        assert "<h4>Evidence sentences</h4>" in body
        n = min(5, len(version.evidence(pos)))
        assert body.count('class="tt-evidence-item"') == n
        if not version.themes[pos].label:
            assert "suggested name, not labelled yet" in body
            assert f"<h3>{version.suggested_names()[pos]}</h3>" in body.replace("&#x27;", "'")
    assert SCRIPT not in page
