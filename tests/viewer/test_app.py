"""The Streamlit viewer through ``AppTest``: every section renders, edits persist, empty
states name the next command, publishing takes the lock."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest
from tests.support.layout import retained_share

import talkthemes.app
from talkthemes.app import _shared
from talkthemes.app.choose_k import PICK
from talkthemes.calls.model import Transcript, Turn
from talkthemes.text import md_inline
from talkthemes.versions.load import load_version
from talkthemes.view.theme_map import theme_layout
from talkthemes.workspace import Workspace

APP = Path(talkthemes.app.__file__).resolve().parent / "main.py"
SECTIONS = [
    ("choose_k.py", "Choose K", 1),
    ("theme_map.py", "Theme map", 1),
    ("theme_cards.py", "Theme cards", 1),
    ("calls.py", "Calls", 1),  # why this call
    ("over_time.py", "Over time", 3),
]


def open_app(root: Path, monkeypatch: pytest.MonkeyPatch) -> AppTest:
    """The viewer on ``root``, run once (pages can only be switched after a first run)."""
    monkeypatch.setenv("TALKTHEMES_WORKSPACE", str(root))
    at = AppTest.from_file(str(APP), default_timeout=180)
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def run(at: AppTest, page: str | None = None) -> AppTest:
    if page is not None:
        at.switch_page(page)
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def charts(at: AppTest) -> list:
    return at.get("vega_lite_chart")


def texts(at: AppTest) -> str:
    parts = [e.value for e in (*at.title, *at.subheader, *at.caption, *at.markdown)]
    return "\n".join(str(p) for p in parts)


# --------------------------------------------------------------------------- rendering


@pytest.mark.parametrize(("page", "title", "n_charts"), SECTIONS)
def test_every_section_renders(demo_ws, monkeypatch, page, title, n_charts) -> None:
    at = run(open_app(demo_ws.ws.root, monkeypatch), page)
    assert at.title[0].value == title
    assert not at.error, [e.value for e in at.error]
    assert len(charts(at)) == n_charts
    sidebar = at.sidebar
    assert str(demo_ws.ws.root) in [c.value for c in sidebar.code]
    assert any("Version 1" in m.value for m in sidebar.markdown)


def test_the_map_is_the_first_section_once_published(demo_ws, monkeypatch) -> None:
    at = open_app(demo_ws.ws.root, monkeypatch)
    assert at.title[0].value == "Theme map"
    selected = at.session_state[_shared.SELECTED_THEME]
    version = load_version(demo_ws.ws)
    assert selected == version.theme_ids[int(version.coverage().argmax())]
    assert f"Selected: {md_inline(demo_ws.labelled[selected])}" in texts(at)
    # the map's caption states the share of the themes' differences its two axes keep
    layout = theme_layout(version.topic_terms)
    share = retained_share(version.topic_terms, layout.x, layout.y)
    caption = next(c.value for c in at.caption if "keep" in c.value)
    assert re.findall(r"\d+%", caption)[0] == f"{share:.0%}"
    # and the links' cut-off it states is the one the links were drawn under
    from talkthemes.view.theme_map import theme_links

    links, cutoff = theme_links(layout.distances, version.theme_ids)
    assert f"under {cutoff:.3f} apart" in caption and (links["distance"] < cutoff).all()
    # under the list of all themes: the unthemed group, with its count and share
    from talkthemes.view.counts import version_unthemed

    group = version_unthemed(version)
    with demo_ws.ws.store() as store:
        stored = store.count_transcripts()
    assert group.count > 0 and group.count + len(version.doc_ids) == stored
    line = f"Unthemed: {group.count:,} transcripts ({100 * group.count / stored:.1f}%)"
    assert md_inline(line) in texts(at)


def test_choose_k_shows_the_picked_cell_and_the_recommendation(demo_ws, monkeypatch) -> None:
    at = run(open_app(demo_ws.ws.root, monkeypatch), "choose_k.py")
    with demo_ws.ws.store() as store:
        sweep = store.get_sweep()
    assert sweep is not None and sweep.recommendations is not None
    rec = sweep.recommendations["nmf"]
    assert f"NMF: K = {rec['k']} recommended" in texts(at)
    for reason in rec["reasons"][:1]:
        assert md_inline(reason) in texts(at)
    at.session_state[PICK] = ("nmf", 8)
    run(at)
    assert "Themes of NMF K = 8" in texts(at)
    assert len(at.dataframe[-1].value) == 8
    at.selectbox(key="choosek_k").select(5)
    run(at)
    assert "Themes of NMF K = 5" in texts(at) and len(at.dataframe[-1].value) == 5


def test_theme_selection_is_shared_between_sections(demo_ws, monkeypatch) -> None:
    at = run(open_app(demo_ws.ws.root, monkeypatch), "theme_cards.py")
    version = load_version(demo_ws.ws)
    other = next(t for t in version.theme_ids if t not in demo_ws.labelled)
    at.selectbox(key="cards_pick").select(other)
    run(at)
    assert at.session_state[_shared.SELECTED_THEME] == other
    run(at, "calls.py")
    assert at.selectbox(key="calls_pick").value == other
    run(at, "theme_map.py")
    name = md_inline(load_version(demo_ws.ws).names()[version.position(other)])
    assert f"Selected: {name}" in texts(at)


# --------------------------------------------------------------------------- editing


def test_label_note_and_hidden_are_saved_at_once_and_shown_everywhere(ws_copy, monkeypatch) -> None:
    at = run(open_app(ws_copy.root, monkeypatch), "theme_cards.py")
    tid = at.session_state[_shared.SELECTED_THEME]
    at.text_input(key=f"cards_label_{tid}").input("  Meter readings  ")
    run(at)
    at.text_area(key=f"cards_note_{tid}").input("Estimated bills too.")
    run(at)
    at.toggle(key=f"cards_hidden_{tid}").set_value(True)
    run(at)
    with ws_copy.store() as store:
        theme = next(t for t in store.themes(1) if t.theme_id == tid)
    assert (theme.label, theme.note, theme.hidden) == (
        "Meter readings",
        "Estimated bills too.",
        True,
    )
    assert "Meter readings" in texts(at)
    run(at, "theme_map.py")
    assert "Selected: Meter readings" in texts(at)
    listed = at.dataframe[0].value.set_index("theme_id")
    assert listed.loc[tid, "name"] == "Meter readings" and bool(listed.loc[tid, "hidden"])
    run(at, "calls.py")
    assert at.selectbox(key="calls_pick").value == tid
    assert "Meter readings" in at.selectbox(key="calls_pick").format_func(tid)
    run(at, "over_time.py")
    assert not at.toggle(key="time_hidden").value  # hidden themes left out by default


# --------------------------------------------------------------------------- calls, time


def test_calls_filters_the_list_and_offers_csv(demo_ws, monkeypatch) -> None:
    at = run(open_app(demo_ws.ws.root, monkeypatch), "calls.py")
    everything = at.dataframe[0].value
    assert len(everything) > 0 and everything["share"].is_monotonic_decreasing
    # readable at a glance: each call's best sentence beside its id
    assert list(everything.columns[:2]) == ["transcript_id", "best_sentence"]
    assert (everything["best_sentence"].str.len() > 0).mean() > 0.8
    at.multiselect(key="calls_field_queue").set_value(["billing"])
    run(at)
    billing = at.dataframe[0].value
    assert set(billing["queue"]) == {"billing"} and len(billing) < len(everything)
    assert at.download_button(key="calls_download").label == "Download the list (CSV)"
    at.slider(key="calls_min_share").set_value(95)
    run(at)
    assert (at.dataframe[0].value["share"] >= 0.95).all()
    html_body = at.get("html")
    if len(at.dataframe[0].value):
        assert html_body and "tt-transcript" in html_body[0].value
    else:
        assert any("No transcript matches" in i.value for i in at.info)


def test_over_time_controls(demo_ws, monkeypatch) -> None:
    from talkthemes.view.over_time import default_comparison, full_periods

    at = run(open_app(demo_ws.ws.root, monkeypatch), "over_time.py")
    meta = _shared.metadata(demo_ws.ws, load_version(demo_ws.ws))
    weekly = default_comparison(meta, "week")
    # like with like: the last full week against the 4 full weeks before it
    assert at.selectbox(key="time_after_week").value == weekly.after
    assert weekly.after == full_periods(meta, "week")[-1] and len(weekly.before) == 4
    assert at.number_input(key="time_baseline_week").value == 4
    at.radio(key="time_freq").set_value("month")
    run(at)
    at.selectbox(key="time_field").select("duration_s")
    run(at)
    assert len(charts(at)) == 3
    assert at.selectbox(key="time_field").format_func("duration_s") == "Duration (min)"
    assert "duration_s" not in texts(at)
    at.number_input(key="time_baseline_month").set_value(1)
    run(at)
    assert any("transcripts) to" in c.value for c in at.caption)


def test_cards_say_the_relevance_sentence_once_and_measures_read_as_written(
    demo_ws, monkeypatch
) -> None:
    from talkthemes.app.theme_cards import LAMBDA_HELP

    at = run(open_app(demo_ws.ws.root, monkeypatch), "theme_cards.py")
    shown = texts(at)
    assert shown.count(LAMBDA_HELP[:40]) <= 1 and "C_NPMI" in at.metric[2].label
    # the counts say who is not in the themes, and why: the unthemed group
    from talkthemes.view.counts import version_unthemed

    group = version_unthemed(load_version(demo_ws.ws))
    assert group.count > 0 and f"{group.count:,} unthemed" in shown
    run(at, "choose_k.py")
    shown = texts(at)
    assert "c_npmi" not in shown and "Runners-up, and why not" in shown
    with demo_ws.ws.store() as store:
        rec = store.get_sweep().recommendations["nmf"]
    for runner in rec["runners_up"]:  # each reason in full, never cut by a column
        assert md_inline(runner["why_not"].replace("c_npmi", "C_NPMI")) in shown


# --------------------------------------------------------------------------- publishing


def _confirm_publish(at: AppTest) -> AppTest:
    at.button(key="choosek_publish").click()
    run(at)
    assert any("Publish NMF K =" in w.value for w in at.warning)
    at.button(key="choosek_confirm").click()
    return run(at)


def test_publish_waits_for_nobody_when_the_workspace_is_busy(ws_copy, monkeypatch) -> None:
    at = run(open_app(ws_copy.root, monkeypatch), "choose_k.py")
    with ws_copy.lock("sweep"):
        _confirm_publish(at)
    assert any(md_inline("workspace busy: sweep") in e.value for e in at.error)
    with ws_copy.store() as store:
        assert [v.n for v in store.versions()] == [1]


def test_publish_cancel_and_confirm(ws_copy, monkeypatch) -> None:
    at = run(open_app(ws_copy.root, monkeypatch), "choose_k.py")
    at.session_state[PICK] = ("nmf", 8)
    run(at)
    at.button(key="choosek_publish").click()
    run(at)
    at.button(key="choosek_cancel").click()
    run(at)
    assert not at.warning or all("Publish NMF" not in w.value for w in at.warning)
    _confirm_publish(at)
    assert any("Version 2 is now current" in s.value for s in at.success)
    with ws_copy.store() as store:
        current = store.current_version()
        assert current is not None and current.n == 2
    assert load_version(ws_copy).k == 8
    run(at, "theme_map.py")
    assert any("Version 2" in m.value for m in at.sidebar.markdown)


# --------------------------------------------------------------------------- empty states


def _at_stage(root: Path, stage: str) -> None:
    if stage == "workspace":
        return
    ws = Workspace(root)
    ws.init()
    if stage == "transcripts":
        return
    with ws.store() as store:
        store.add_transcripts(
            [Transcript("a", [Turn("Customer", "customer", "my bill")], "a.txt", "txt")], None
        )
        if stage == "prep":
            return
        store.record_prep("f00d", {"counts": {}})
        if stage == "sweep":
            return
        sweep = store.start_sweep("f00d", {})
        store.add_cell(sweep, "nmf-k002-s0", "nmf", 2, 0, {"fit_seconds": 0.5})


@pytest.mark.parametrize(
    ("stage", "command"),
    [
        ("workspace", "talkthemes init"),
        ("transcripts", "talkthemes ingest"),
        ("prep", "talkthemes prepare"),
        ("sweep", "talkthemes sweep"),
        ("version", "talkthemes publish"),
    ],
)
def test_empty_states_name_the_next_command(tmp_path, monkeypatch, stage, command) -> None:
    root = tmp_path / "work"
    _at_stage(root, stage)
    at = open_app(root, monkeypatch)
    pages = ["theme_map.py", "theme_cards.py", "calls.py", "over_time.py"]
    if stage != "version":
        assert at.title == [] or at.title[0].value != "Theme map"  # Choose K comes first
        assert [c.value for c in at.code if c.value.startswith("talkthemes")] == [
            c.value for c in at.code if c.value.startswith(command)
        ]
        pages.insert(0, "choose_k.py")
    for page in pages:
        run(at, page)
        commands = [c.value for c in at.main.code]
        assert len(commands) == 1 and commands[0].startswith(command), (page, commands)
        assert str(root) in commands[0]
        assert at.info and not charts(at)
    assert not root.exists() or stage != "workspace"  # the viewer never creates one


# --------------------------------------------------------------------------- serve


def test_serve_command_binds_loopback_and_passes_the_workspace(tmp_path) -> None:
    from talkthemes.serve import APP_MAIN, streamlit_command, viewer_url

    cmd = streamlit_command(tmp_path, port=8600)
    assert cmd[1:5] == ["-m", "streamlit", "run", str(APP_MAIN)] and APP_MAIN == APP
    flags = dict(zip(cmd[5:-3:2], cmd[6:-3:2], strict=True))
    assert flags["--server.address"] == "127.0.0.1" and flags["--server.port"] == "8600"
    assert flags["--server.headless"] == "true"
    assert flags["--browser.gatherUsageStats"] == "false"
    assert cmd[-3:] == ["--", "--workspace", str(tmp_path)]
    assert (
        streamlit_command(tmp_path, open_browser=True)[
            streamlit_command(tmp_path).index("--server.headless") + 1
        ]
        == "false"
    )
    assert viewer_url("127.0.0.1", 8501) == "http://127.0.0.1:8501"
    assert viewer_url("0.0.0.0", 80) == "http://localhost:80"
    assert viewer_url("::1", 8501) == "http://[::1]:8501"


def test_serve_refuses_a_missing_workspace_and_a_bad_port(tmp_path) -> None:
    from talkthemes.errors import ConfigError, NotReadyError
    from talkthemes.serve import serve, streamlit_command

    with pytest.raises(NotReadyError, match="talkthemes init"):
        serve(tmp_path / "none")
    with pytest.raises(ConfigError, match="--port 0"):
        streamlit_command(tmp_path, port=0)


def test_the_workspace_comes_from_the_command_line_first(monkeypatch, tmp_path) -> None:
    monkeypatch.setenv("TALKTHEMES_WORKSPACE", str(tmp_path / "env"))
    monkeypatch.setattr("sys.argv", ["main.py", "--workspace", str(tmp_path / "arg")])
    assert _shared.workspace_root() == (tmp_path / "arg").resolve()
    monkeypatch.setattr("sys.argv", ["main.py"])
    assert _shared.workspace_root() == (tmp_path / "env").resolve()
