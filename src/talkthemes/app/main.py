"""Entry point of the viewer: ``streamlit run main.py -- --workspace PATH``.

One navigation over the sections; each section is a page file beside this one whose
code runs when it is shown, and each answers at its own address (``/theme-map``,
``/calls``, …), so a link to a section can be shared and reloaded. The root address
(``/``) is a hidden start page that moves on to the first useful section: the Theme map
once a version is published, Choose K before. The workspace comes from ``--workspace``
after ``--``, else ``$TALKTHEMES_WORKSPACE`` (see
:func:`talkthemes.app._shared.workspace_root`).
"""

from __future__ import annotations

from pathlib import Path

import streamlit as st

from talkthemes.app import _shared

HERE = Path(__file__).resolve().parent

st.set_page_config(
    page_title="talkthemes",
    page_icon=_shared.favicon(),
    layout="wide",
    initial_sidebar_state="expanded",
)

ready = _shared.readiness()
has_version = ready.version is not None

# Sections in the order of the work: choose, map, read, drill in, watch over time.
# (address, title, icon); the address is the section's page file name with dashes.
SECTIONS = {
    "choose-k": ("Choose K", ":material/tune:"),
    "theme-map": ("Theme map", ":material/hub:"),
    "theme-cards": ("Theme cards", ":material/label:"),
    "calls": ("Calls", ":material/call:"),
    "over-time": ("Over time", ":material/timeline:"),
    "refresh-history": ("Refresh history", ":material/history:"),
}
PAGES = {
    address: st.Page(
        HERE / f"{address.replace('-', '_')}.py", title=title, url_path=address, icon=icon
    )
    for address, (title, icon) in SECTIONS.items()
}


def _start() -> None:
    """The root address: go on to the Theme map, or to Choose K before a version exists."""
    st.switch_page(PAGES["theme-map" if has_version else "choose-k"])


START = st.Page(_start, title="talkthemes", url_path="start", default=True, visibility="hidden")

page = st.navigation([START, *PAGES.values()])
_shared.sidebar(ready)
page.run()
