"""The self-contained HTML report: offline, complete, escaped, with PNGs on request."""

from __future__ import annotations

import html
import json
import re
from collections.abc import Iterator
from pathlib import Path

import pytest
import tests.charts.spec as vl
from tests.support.layout import retained_share

from talkthemes.charts.style import BLUE, SERIES_COLOURS, VERMILLION
from talkthemes.errors import NotReadyError
from talkthemes.report import build_report, render_report, write_report
from talkthemes.versions.load import load_version
from talkthemes.view.theme_map import theme_layout
from talkthemes.view.themes import shown_terms
from talkthemes.workspace import Workspace


def specs_of(page: str) -> dict:
    m = re.search(r'<script id="tt-specs" type="application/json">(.*?)</script>', page, re.S)
    assert m is not None
    return json.loads(m.group(1))


def records(spec: object) -> Iterator[dict]:
    """Every data record in a spec (inline values anywhere, or top-level datasets)."""
    if isinstance(spec, dict):
        if "theme_id" in spec:
            yield spec
        for value in spec.values():
            yield from records(value)
    elif isinstance(spec, list):
        for value in spec:
            yield from records(value)


def cards_of(page: str) -> dict[int, str]:
    found = re.findall(r'<article class="card" id="theme-(\d+)">(.*?)</article>', page, re.S)
    return {int(tid): body for tid, body in found}


@pytest.fixture(scope="module")
def page(report_file: Path) -> str:
    return report_file.read_text(encoding="utf-8")


def test_the_report_loads_nothing_from_anywhere(page: str) -> None:
    assert page.startswith("<!DOCTYPE html>")
    assert re.search(r"<script[^>]*\bsrc\s*=", page, re.I) is None
    assert re.search(r"<link\b", page, re.I) is None
    assert re.search(r"""\b(?:src|href)\s*=\s*["']?\s*(?:https?:)?//""", page, re.I) is None
    assert re.search(r"url\(\s*['\"]?(?:https?:)?//", page, re.I) is None
    assert "@import" not in page
    csp = re.search(r'http-equiv="Content-Security-Policy" content="([^"]+)"', page)
    assert csp is not None and "default-src 'none'" in csp.group(1)
    assert "connect-src" not in csp.group(1)  # so fetches fall back to 'none'
    assert page.count("window.vegaEmbed=") == 1  # the runtime is inlined once
    assert "actions:false" in page  # no links out of the charts' menus


def test_the_report_has_every_part(demo_ws, page: str) -> None:
    version = load_version(demo_ws.ws)
    specs = specs_of(page)
    expected = {"sweep", "theme-map", "trend"} | {f"theme-{t}-terms" for t in version.theme_ids}
    assert set(specs) == expected
    assert all(
        s["$schema"].startswith("https://vega.github.io/schema/vega-lite/") for s in specs.values()
    )
    for cid in specs:
        assert f'<div class="chart" id="{cid}"' in page
    with demo_ws.ws.store() as store:
        sweep = store.get_sweep()
    assert sweep is not None and sweep.recommendations is not None
    rec = sweep.recommendations["nmf"]
    assert f"NMF: K = {rec['k']} recommended" in page
    assert all(html.escape(r) in page for r in rec["reasons"])
    assert "Bills &amp; &lt;payments&gt;" in page  # a label, escaped
    cards = cards_of(page)
    assert set(cards) == set(version.theme_ids)
    for tid, body in cards.items():
        pos = version.position(tid)
        expected_quotes = min(3, int((version.lead() == pos).sum()))
        assert body.count("<blockquote>") == expected_quotes
        assert '<mark class="tt-hit">' in body or expected_quotes == 0
        words = ", ".join(t.replace("_", " ") for t in shown_terms(version, pos, 15, 0.6))
        assert words in body
    assert "Hidden as noise" not in page


def test_the_trend_has_every_shown_theme(demo_ws, page: str) -> None:
    version = load_version(demo_ws.ws)
    ids = {r["theme_id"] for r in records(specs_of(page)["trend"])}
    assert ids == set(version.theme_ids)


def test_the_map_caption_states_the_share_the_map_keeps(demo_ws, page: str) -> None:
    version = load_version(demo_ws.ws)
    layout = theme_layout(version.topic_terms)
    share = retained_share(version.topic_terms, layout.x, layout.y)
    section = re.search(r'<section id="map">(.*?)</section>', page, re.S)
    assert section is not None
    caption = re.search(r'<p class="caption">(.*?)</p>', section.group(1), re.S).group(1)
    assert re.findall(r"\d+%", caption) == [f"{share:.0%}"]


# The colour each chart's PNG must show where its data is drawn (the demo is NMF only).
PNG_COLOURS = {"sweep": VERMILLION, "trend": SERIES_COLOURS[0], "terms": BLUE}


def test_each_chart_is_also_a_png_that_shows_it(report_file: Path, page: str) -> None:
    folder = report_file.parent / "png"
    specs = specs_of(page)
    assert sorted(p.stem for p in folder.glob("*.png")) == sorted(specs)
    for cid, spec in specs.items():
        image = vl.decode((folder / f"{cid}.png").read_bytes())
        scene = vl.scene(spec)
        # drawn at twice the chart's size, the whole chart
        assert image.shape[:2] == (2 * scene.height, 2 * scene.width), cid
        assert vl.not_paper_share(image) > 0.02, cid  # not a blank canvas
        kind = "terms" if cid.endswith("-terms") else cid
        if kind in PNG_COLOURS:
            drawn = vl.colour_share(image, vl.rgb(PNG_COLOURS[kind]), tol=30)
            assert drawn * image.shape[0] * image.shape[1] > 200, cid  # its marks, in colour


def test_hidden_themes_are_folded_and_left_out_of_the_trend(ws_copy) -> None:
    version = load_version(ws_copy)
    hidden = version.theme_ids[-1]
    with ws_copy.store() as store:
        store.set_label(hidden, hidden=True)
    page = render_report(build_report(ws_copy, excerpts=1))
    folded = page.split("<details><summary>Hidden as noise (1)</summary>", 1)
    assert len(folded) == 2
    assert f'id="theme-{hidden}"' in folded[1] and f'id="theme-{hidden}"' not in folded[0]
    assert hidden not in {r["theme_id"] for r in records(specs_of(page)["trend"])}
    assert hidden in {r["theme_id"] for r in records(specs_of(page)["theme-map"])}
    assert all(b.count("<blockquote>") <= 1 for b in cards_of(page).values())
    assert "1 hidden as noise" in page


def test_lambda_changes_the_word_ranking(ws_copy) -> None:
    version = load_version(ws_copy)
    report = build_report(ws_copy, lam=1.0, excerpts=0)
    body = report.body
    for pos, tid in enumerate(version.theme_ids):
        words = ", ".join(t.replace("_", " ") for t in shown_terms(version, pos, 15, 1.0))
        assert words in cards_of(body)[tid]
        assert "<blockquote>" not in cards_of(body)[tid]
    assert "λ = 1" in body


def test_no_report_before_a_version(tmp_path: Path) -> None:
    ws = Workspace(tmp_path / "w")
    ws.init()
    with pytest.raises(NotReadyError, match="talkthemes ingest"):
        write_report(ws, tmp_path / "r.html")
    assert not (tmp_path / "r.html").exists()


def test_progress_is_told_done_total_and_what(ws_copy, tmp_path: Path) -> None:
    calls: list[tuple[int, int, str]] = []
    write_report(
        ws_copy,
        tmp_path / "r.html",
        png_dir=tmp_path / "png",
        excerpts=0,
        progress=lambda done, total, what="": calls.append((done, total, what)),
    )
    assert calls[0] == (0, 5, "loading the version") and (5, 5, "done") in calls
    n_charts = len(list((tmp_path / "png").glob("*.png")))
    assert calls[-1][:2] == (n_charts, n_charts)  # the PNGs, counted to the last
    assert all(0 <= done <= total and what for done, total, what in calls)


def test_the_footer_names_the_model_and_never_an_empty_cell(demo_ws, page: str) -> None:
    import dataclasses

    from talkthemes.report.sections import footer

    footer_html = re.search(r"<footer>(.*?)</footer>", page, re.S).group(1)
    assert "NMF, K = 5" in footer_html and "cell )" not in footer_html
    version = load_version(demo_ws.ws)
    bare = dataclasses.replace(version, info={"family": "lda"})
    assert footer(bare).endswith("from version 1 (LDA, K = 5).</footer>")


def test_the_static_map_asks_for_no_click_and_counts_say_who_is_unthemed(
    demo_ws, page: str
) -> None:
    from talkthemes.view.counts import call_counts, version_unthemed

    subtitle = " ".join(specs_of(page)["theme-map"]["title"]["subtitle"])
    assert "click" not in subtitle.lower()
    version = load_version(demo_ws.ws)
    sentence = call_counts(demo_ws.ws, version).sentence()
    group = version_unthemed(version)
    assert f"{group.count:,} unthemed" in sentence and html.escape(sentence) in page
    # the unthemed group's card after the themes: its count, share and reasons
    card = re.search(r'<article class="card" id="unthemed">(.*?)</article>', page, re.S)
    assert card is not None and html.escape(group.sentence()) in card.group(1)
    for why, n in group.by_reason.items():
        assert f"<tr><td>{html.escape(why)}</td><td>{n:,}</td></tr>" in card.group(1)


def test_planted_personal_data_never_reaches_the_report(ws_copy) -> None:
    from tests.viewer.conftest import PII, PII_ID

    from talkthemes.config import render_settings
    from talkthemes.workspace import atomic_write_text

    version = load_version(ws_copy)
    assert PII_ID in version.doc_ids  # it is in the themes, so its excerpts can be shown
    page = render_report(build_report(ws_copy, excerpts=1000))  # every call's excerpt
    pos = version.lead()[version.doc_ids.index(PII_ID)]
    card = cards_of(page)[version.theme_ids[pos]]
    assert f"transcript {PII_ID}" in card  # its excerpt is on the card…
    leaked = [p for p in PII if p in page or html.escape(p) in page]
    assert not leaked  # …with nothing personal in it
    assert 'class="tt-masked"' in card
    # a workspace that allows the original text shows it
    settings = ws_copy.settings()
    settings.view.original_text = True
    atomic_write_text(ws_copy.settings_path, render_settings(settings))
    original = render_report(build_report(ws_copy, excerpts=1000))
    assert any(p in original for p in PII)


def test_the_themes_section_says_how_to_read_the_term_charts_once(page: str) -> None:
    from talkthemes.charts.terms import TERM_CAPTION

    intro = re.search(r'<section id="themes"><h2>Themes</h2><p class="caption">(.*?)</p>', page)
    text = html.unescape(intro.group(1))
    assert "λ = 0.6" in text and "Largest first." in text
    assert TERM_CAPTION.split(".")[0] not in text  # each chart's subtitle says it already
    sentences = [s.strip() for s in re.split(r"(?<=[.:])\s+", text) if s.strip()]
    assert len(sentences) == len(set(sentences))
