"""The "Refresh history" section: its pure data (timeline, carried/new/retired, the new
themes' examples) and the page through ``AppTest`` on a workspace with one refresh."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest
from streamlit.testing.v1 import AppTest

import talkthemes.app
from talkthemes.charts.history import timeline_chart
from talkthemes.errors import InputError
from talkthemes.text import md_inline
from talkthemes.versions import load as versions_load
from talkthemes.view.history import (
    alert_cards,
    load_drift,
    new_theme_examples,
    report_top_terms,
    version_changes,
    versions_timeline,
)
from talkthemes.workspace import Workspace

PAGE = Path(talkthemes.app.__file__).resolve().parent / "refresh_history.py"
#: As in tests/refresh/conftest.py: NMF K=12 on 1000 invented demo calls with October held
#: back finds October's price-change calls as a new theme.
DEMO_SIZE, FAMILY, K = 1000, "nmf", 12
LABEL = "Billing <b>questions</b> & *more*"


@pytest.fixture(scope="module")
def refreshed(tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    """Version 1 published on May–September, then refreshed with October into version 2
    (the theme leading the most transcripts labelled before the refresh)."""
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.prepare.run import run_prepare
    from talkthemes.refresh.run import refresh
    from talkthemes.sweep.run import load_current_prep
    from talkthemes.versions.fit import fit_version
    from talkthemes.versions.load import load_version
    from talkthemes.versions.write import write_version

    base = tmp_path_factory.mktemp("history")
    files = write_demo(base / "src", size=DEMO_SIZE, seed=7, hold_back_last_month=True)
    ws = Workspace(base / "ws")
    ws.init()
    with ws.lock("test"):
        ingest(ws, [files.exports], manifests=[files.manifest])
        run_prepare(ws)
        prep, folder = load_current_prep(ws)
        fitted = fit_version(
            ws, PreparedCorpus.load(folder), family=FAMILY, k=K, seed=0, prep_hash=prep.hash
        )
        write_version(ws, fitted)
        v1 = load_version(ws)
        with ws.store() as store:
            store.set_label(v1.theme_ids[int(v1.coverage().argmax())], label=LABEL)
        result = refresh(ws, ingest_paths=[files.inbox])
    assert result.status == "published" and result.version == 2
    return ws


@pytest.fixture(scope="module")
def single(tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    """A workspace with one directly published version and no refresh."""
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep.run import load_current_prep
    from talkthemes.versions.fit import fit_version
    from talkthemes.versions.write import write_version

    base = tmp_path_factory.mktemp("single")
    files = write_demo(base / "src", size=200, seed=3)
    ws = Workspace(base / "ws")
    ws.init()
    with ws.lock("test"):
        ingest(ws, [files.exports], manifests=[files.manifest])
        run_prepare(ws)
        prep, folder = load_current_prep(ws)
        fitted = fit_version(
            ws, PreparedCorpus.load(folder), family="nmf", k=4, seed=0, prep_hash=prep.hash
        )
        write_version(ws, fitted)
    return ws


def _report(ws: Workspace, n: int = 2) -> dict:
    return json.loads((ws.versions_dir / str(n) / "drift.json").read_text(encoding="utf-8"))


def _open(root: Path, monkeypatch: pytest.MonkeyPatch) -> AppTest:
    monkeypatch.setenv("TALKTHEMES_WORKSPACE", str(root))
    at = AppTest.from_file(str(PAGE), default_timeout=120)
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _texts(at: AppTest) -> str:
    parts = [
        e.value
        for e in (*at.title, *at.subheader, *at.caption, *at.markdown, *at.info, *at.warning)
    ]
    return "\n".join(str(p) for p in (*parts, *(c.value for c in at.code)))


# --------------------------------------------------------------------------- pure data


def test_timeline_marks_the_current_version_and_how_each_was_made(refreshed) -> None:
    with refreshed.store() as store:
        versions = store.versions()
    frame = versions_timeline(versions)
    assert frame["n"].tolist() == [1, 2]
    assert frame["current"].tolist() == [False, True]
    assert frame["kind"].tolist() == ["publish", "refresh"]
    assert frame["family"].tolist() == ["NMF", "NMF"]
    assert frame.loc[1, "previous_version"] == 1
    refresh = versions[1].refresh
    assert refresh is not None and refresh.previous_version == 1
    assert frame.loc[1, "new_transcripts"] == refresh.new_transcripts > 0
    assert pd.isna(frame.loc[0, "new_transcripts"])
    assert frame["created_at"].is_monotonic_increasing
    spec = timeline_chart(frame).to_dict()
    values = next(iter(spec["datasets"].values()))
    assert [v["n"] for v in values] == [1, 2] and [v["current"] for v in values] == [False, True]


def test_changes_split_carried_new_and_retired_as_the_store_and_report_say(refreshed) -> None:
    report = _report(refreshed)
    with refreshed.store() as store:
        themes = store.themes(2)
        retired = store.retired_themes(2)
        previous = {t.theme_id for t in store.themes(1)}
    changes = version_changes(themes, retired, report_top_terms(report))
    by_status = {
        s: {t["theme_id"] for t in report["themes"] if t["status"] == s} for s in ("carried", "new")
    }
    assert changes.ids("carried") == by_status["carried"]
    assert changes.ids("new") == by_status["new"] and changes.ids("new")
    assert changes.ids("retired") == {t["theme_id"] for t in report["retired"]}
    assert changes.ids("carried") <= previous and not (changes.ids("new") & previous)
    assert changes.ids("retired") <= previous
    assert len(changes.carried) + len(changes.new) == K
    names = {t.theme_id: t.name for t in [*changes.carried, *changes.new]}
    labelled = next(t.theme_id for t in themes if t.label == LABEL)
    assert names[labelled] == LABEL  # carried with its label
    for t in changes.new:
        top = next(r["top_terms"] for r in report["themes"] if r["theme_id"] == t.theme_id)
        assert t.name == " · ".join(w.replace("_", " ") for w in top[:3])
        assert t.detail.startswith("closest previous theme #")


def test_examples_come_from_the_report_with_current_labels(refreshed) -> None:
    report = _report(refreshed)
    new = [t for t in report["themes"] if t["status"] == "new"]
    frame = new_theme_examples(report, {new[0]["theme_id"]: "Price change"})
    expected = {(t["theme_id"], e["transcript_id"]) for t in new for e in t["examples"]}
    assert set(zip(frame["theme_id"], frame["transcript_id"], strict=True)) == expected
    assert set(frame.loc[frame["theme_id"] == new[0]["theme_id"], "theme"]) == {"Price change"}
    for _, group in frame.groupby("theme_id"):
        assert group["share"].is_monotonic_decreasing
    assert (frame["excerpt"].str.len() > 0).all()


def test_load_drift_names_the_file_when_broken(refreshed, tmp_path) -> None:
    assert load_drift(refreshed, 1) is None
    assert load_drift(refreshed, 2) == _report(refreshed)
    ws = Workspace(tmp_path / "ws")
    (ws.versions_dir / "4").mkdir(parents=True)
    (ws.versions_dir / "4" / "drift.json").write_text("{not json", encoding="utf-8")
    with pytest.raises(InputError, match=r"drift\.json: cannot be read as JSON"):
        load_drift(ws, 4)


# --------------------------------------------------------------------------- the page


def test_page_shows_the_timeline_the_changes_and_a_new_theme(refreshed, monkeypatch) -> None:
    at = _open(refreshed.root, monkeypatch)
    assert at.title[0].value == "Refresh history"
    assert not at.error, [e.value for e in at.error]
    assert at.selectbox(key="history_version").value == 2
    assert len(at.get("vega_lite_chart")) == 2  # timeline + drift
    text = _texts(at)
    report = _report(refreshed)
    new = next(t for t in report["themes"] if t["status"] == "new")
    v2 = versions_load.load_version(refreshed, 2, fold=False)
    name = v2.suggested_names()[v2.theme_ids.index(new["theme_id"])]
    assert new["name"] == name  # the report names a theme as its version does
    assert f"**{md_inline(name)}** \\#{new['theme_id']}" in text
    assert md_inline(new["examples"][0]["transcript_id"]) in text
    assert md_inline(LABEL) in text and LABEL not in text  # escaped, never raw
    assert "Version 2" in text and "Refreshed from version 1." in text
    room = report["room"]  # the room check ran, and the caption says K was raised only if so
    assert room["published_k"] == K and (md_inline(room["text"]) in text) == room["raised"]
    # the alert explains itself: evidence and example sentences, escaped
    assert "Alerts" in [s.value for s in at.subheader]
    card = alert_cards(report)[0]
    assert card.kind == "new" and f"New theme \\#{card.theme_id}: " in text
    assert all(f"✓ {md_inline(t)}" in text for _, t in card.evidence)
    assert card.examples and all(md_inline(s) in text for _, s in card.examples)
    at.selectbox(key="history_version").select(1)
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    assert "Published directly" in _texts(at)
    assert len(at.get("vega_lite_chart")) == 1  # a direct publish has no drift chart


def test_empty_state_names_the_refresh_command(single, monkeypatch) -> None:
    at = _open(single.root, monkeypatch)
    assert at.title[0].value == "Refresh history"
    assert "talkthemes refresh" in _texts(at)
    assert any(c.value.startswith("talkthemes refresh --workspace") for c in at.code)
    assert not at.get("vega_lite_chart")


def test_the_section_is_in_the_viewers_navigation(refreshed, monkeypatch) -> None:
    monkeypatch.setenv("TALKTHEMES_WORKSPACE", str(refreshed.root))
    at = AppTest.from_file(str(PAGE.parent / "main.py"), default_timeout=120)
    at.run()
    at.switch_page("refresh_history.py")
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    assert at.title[0].value == "Refresh history"
    assert any("Version 2" in m.value for m in at.sidebar.markdown)
