"""Entry point of the viewer: ``streamlit run main.py -- --workspace PATH``.

One navigation over the sections; each section is a page file beside this one whose
code runs when it is shown. The workspace comes from ``--workspace`` after ``--``, else
``$TALKTHEMES_WORKSPACE`` (see :func:`talkthemes.app._shared.workspace_root`).
"""

from __future__ import annotations

from pathlib import Path

import streamlit as st

from talkthemes.app import _shared

HERE = Path(__file__).resolve().parent

st.set_page_config(
    page_title="talkthemes",
    page_icon=":material/forum:",
    layout="wide",
    initial_sidebar_state="expanded",
)

ready = _shared.readiness()
has_version = ready.version is not None

# Sections in the order of the work: choose, map, read, drill in, watch over time.
SECTIONS = [
    st.Page(
        HERE / "choose_k.py",
        title="Choose K",
        url_path="choose-k",
        icon=":material/tune:",
        default=not has_version,
    ),
    st.Page(
        HERE / "theme_map.py",
        title="Theme map",
        url_path="theme-map",
        icon=":material/bubble_chart:",
        default=has_version,
    ),
    st.Page(
        HERE / "theme_cards.py",
        title="Theme cards",
        url_path="theme-cards",
        icon=":material/label:",
    ),
    st.Page(HERE / "calls.py", title="Calls", url_path="calls", icon=":material/call:"),
    st.Page(
        HERE / "over_time.py",
        title="Over time",
        url_path="over-time",
        icon=":material/timeline:",
    ),
    st.Page(
        HERE / "refresh_history.py",
        title="Refresh history",
        url_path="refresh-history",
        icon=":material/history:",
    ),
]

page = st.navigation(SECTIONS)
_shared.sidebar(ready)
page.run()
