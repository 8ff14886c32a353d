"""Over time: each theme's share per week or month with a bootstrap 95% interval, a
comparison of segments (any metadata field), and the themes that rose or fell most
between two periods."""

from __future__ import annotations

import pandas as pd
import streamlit as st

from talkthemes.app import _shared
from talkthemes.errors import TalkthemesError
from talkthemes.text import md_inline
from talkthemes.view.over_time import period_choices, segment_fields

FREQ_NAMES = {"week": "Week", "month": "Month"}


def _visible(frame: pd.DataFrame, show_hidden: bool) -> pd.DataFrame:
    return frame if show_hidden else frame[~frame["hidden"]]


def _period_label(p: pd.Timestamp, freq: str) -> str:
    return p.strftime("%B %Y") if freq == "month" else f"week of {p:%d %b %Y}"


def _trends(ws, version, meta, freq: str, show_hidden: bool, selected: int) -> None:
    frame = _visible(_shared.trend(ws, version, freq), show_hidden)
    if frame.empty:
        st.info("Every theme is hidden as noise; switch on “Show hidden themes”.")
        return
    highlight = [selected] if selected in set(frame["theme_id"]) else None
    _shared.show_chart("trend", frame, highlight=highlight, freq=freq, key="time_trend")
    st.caption(
        f"For each {freq}, the share of that {freq}'s transcripts whose lead theme it is. "
        "The band around a line is a 95% bootstrap interval: the range the share would "
        "likely take with another sample of the same size, so narrow bands in busy "
        f"{freq}s, wide ones in quiet {freq}s (see the transcript counts below the chart). "
        "The selected theme is picked at first; click the legend to pick others."
    )


def _segments(ws, version, meta, show_hidden: bool) -> None:
    st.subheader("Compare segments")
    fields = segment_fields(meta)
    if not fields:
        st.info("The transcripts have no metadata field to compare by (such as a queue).")
        return
    default = next((f for f in ("queue", "site", "channel") if f in fields), fields[0])
    if st.session_state.get("time_field") not in fields:
        st.session_state["time_field"] = default
    field = st.selectbox(
        "Compare by",
        fields,
        key="time_field",
        help="Number fields are cut into four groups of equal size (quartiles).",
    )
    frame = _visible(_shared.segments(ws, version, field), show_hidden)
    if frame.empty:
        st.info("Nothing to compare with the themes shown.")
        return
    _shared.show_chart("segments", frame, field=field)
    st.caption(
        f"Each dot is the share of a {md_inline(field)}'s transcripts that the theme leads, "
        "with a "
        "95% bootstrap interval; where intervals do not overlap, the segments really differ."
    )


def _movers(ws, version, meta, freq: str, show_hidden: bool) -> None:
    st.subheader("Rising and falling themes")
    periods = period_choices(meta, freq)
    if len(periods) < 2:
        st.info(f"Movers need transcripts in at least two {freq}s.")
        return
    labels = {p: _period_label(p, freq) for p in periods}
    left, right = st.columns(2)
    before = left.selectbox(
        "From", periods, index=0, format_func=labels.get, key=f"time_before_{freq}"
    )
    after = right.selectbox(
        "To", periods, index=len(periods) - 1, format_func=labels.get, key=f"time_after_{freq}"
    )
    if before == after:
        st.warning("Pick two different periods.")
        return
    if after < before:
        before, after = after, before
    try:
        frame = _visible(_shared.movers(ws, version, freq, before, after), show_hidden)
    except TalkthemesError as exc:
        _shared.show_error(exc)
        return
    if frame.empty:
        st.info("Nothing to rank with the themes shown.")
        return
    _shared.show_chart("movers", frame)
    n_before, n_after = int(frame["n_before"].iloc[0]), int(frame["n_after"].iloc[0])
    st.caption(
        f"Change in the share of transcripts each theme leads, from {labels[before]} "
        f"({n_before:,} transcripts) to {labels[after]} ({n_after:,} transcripts), in "
        "percentage points; biggest rise at the top. Faint bars: the 95% interval "
        "includes no change."
    )


def render() -> None:
    """The Over time section."""
    ws = _shared.gate("version")
    version = _shared.current_version(ws)
    meta = _shared.metadata(ws, version)
    st.title("Over time")
    selected = _shared.selected_theme(version)
    left, right = st.columns([2, 3])
    freq = left.radio(
        "Period",
        list(FREQ_NAMES),
        format_func=FREQ_NAMES.get,
        horizontal=True,
        key="time_freq",
    )
    show_hidden = right.toggle("Show hidden themes", value=False, key="time_hidden")
    if meta.date_field is None:
        st.info(
            "The transcripts have no date, so there is nothing to show over time. Add a "
            "manifest with a date column: `talkthemes ingest FILES --manifest MANIFEST.csv`.",
            icon=":material/event_busy:",
        )
    else:
        _trends(ws, version, meta, freq, show_hidden, selected)
    _segments(ws, version, meta, show_hidden)
    if meta.date_field is not None:
        _movers(ws, version, meta, freq, show_hidden)


if __name__ == "__main__":
    render()
