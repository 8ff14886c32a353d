"""Theme map: themes placed by how alike their words are; selecting one drives the other
sections."""

from __future__ import annotations

import streamlit as st

from talkthemes.app import _shared
from talkthemes.charts.theme_map import theme_map_caption
from talkthemes.text import md_inline, percent
from talkthemes.view.counts import version_unthemed
from talkthemes.view.theme_map import LINK_QUANTILE, LINKS_PER_THEME, theme_links
from talkthemes.view.themes import boilerplate_advice, map_frame, theme_table

CHART_KEY = "map_chart"
MAP_WIDTH = 860  # about the width of the page's main column on a laptop
TABLE_KEY = "map_table"


def _on_chart_select() -> None:
    state = st.session_state.get(CHART_KEY) or {}
    picked = (state.get("selection") or {}).get("theme") or []
    if picked:
        _shared.select_theme(int(picked[0]["theme_id"]))


def render() -> None:
    """The Theme map section."""
    ws = _shared.gate("version")
    version = _shared.current_version(ws)
    layout = _shared.layout(ws, version)
    lam = ws.settings().view.relevance_lambda
    table = theme_table(version, layout, lam=lam)
    selected = _shared.selected_theme(version)

    links, cutoff = theme_links(layout.distances, version.theme_ids)
    st.title("Theme map")
    _shared.show_chart(
        "map",
        map_frame(table, _shared.trends(ws, version)),
        links,
        selected,
        width=MAP_WIDTH,
        key=CHART_KEY,
        on_select=_on_chart_select,
        selection_mode="theme",
    )
    st.caption(
        theme_map_caption(layout.explained)
        + " Closeness is the Jensen–Shannon distance between the themes' word "
        f"distributions; a line joins a theme to its {LINKS_PER_THEME} closest themes when "
        f"they are under {cutoff:.3f} apart (the closest {LINK_QUANTILE:.0%} of all pairs). "
        "Rising and falling compare the last full period with the ones before it."
    )

    row = table[table["theme_id"] == _shared.selected_theme(version)].iloc[0]
    st.subheader(f"Selected: {md_inline(row['name'])}")
    a, b, c = st.columns(3)
    a.metric("Leads", percent(row["coverage"]), help="Share of transcripts it leads.")
    b.metric(
        "Average share",
        percent(row["mean_share"]),
        help="Its average share across all transcripts.",
    )
    c.metric("Theme id", f"#{int(row['theme_id'])}")
    if row["boilerplate_like"] and not row["hidden"]:
        st.warning(md_inline(boilerplate_advice(row)), icon=":material/visibility_off:")
    st.caption(f"Top words: {md_inline(row['top_terms'])}")
    st.page_link("theme_cards.py", label="Open its card", icon=":material/label:")
    st.page_link("calls.py", label="Read the calls it leads", icon=":material/call:")

    st.subheader("All themes")
    st.caption("Sorted by the share of transcripts each theme leads. Select a row to select it.")
    shown = table.sort_values(["coverage", "theme_id"], ascending=[False, True])
    st.dataframe(
        shown[["theme_id", "name", "coverage", "mean_share", "top_terms", "hidden"]],
        hide_index=True,
        key=TABLE_KEY,
        on_select=lambda: _on_table_select(shown),
        selection_mode="single-row",
        column_config={
            "theme_id": st.column_config.NumberColumn("Id", format="%d", width="small"),
            "name": st.column_config.TextColumn("Theme"),
            "coverage": st.column_config.ProgressColumn(
                "Leads", format="percent", min_value=0.0, max_value=1.0
            ),
            "mean_share": st.column_config.NumberColumn("Average share", format="percent"),
            "top_terms": st.column_config.TextColumn("Top words", width="large"),
            "hidden": st.column_config.CheckboxColumn("Hidden"),
        },
    )
    unthemed = version_unthemed(version)
    st.markdown(md_inline(unthemed.sentence()))
    st.caption(
        "Transcripts with too few words to say what they are about (hang-ups, wrong numbers, "
        "greetings only) are in no theme; the shares above are out of the others."
    )


def _on_table_select(shown: object) -> None:
    state = st.session_state.get(TABLE_KEY) or {}
    rows = (state.get("selection") or {}).get("rows") or []
    if rows:
        _shared.select_theme(int(shown.iloc[rows[0]]["theme_id"]))  # type: ignore[attr-defined]


if __name__ == "__main__":
    render()
