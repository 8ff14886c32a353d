"""Over time: each theme's share per week or month with a bootstrap 95% interval, a
comparison of segments (any metadata field), and the themes that rose or fell most
between two periods."""

from __future__ import annotations

import pandas as pd
import streamlit as st

from talkthemes.app import _shared
from talkthemes.errors import TalkthemesError
from talkthemes.text import md_inline
from talkthemes.view.over_time import (
    BASELINE_PERIODS,
    default_comparison,
    full_periods,
    period_choices,
    segment_fields,
)

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
        format_func=lambda f: meta.fields[f].label,
        help="Number fields are cut into four groups of equal size (quartiles).",
    )
    shown_as = meta.fields[field].label
    frame = _visible(_shared.segments(ws, version, field), show_hidden)
    if frame.empty:
        st.info("Nothing to compare with the themes shown.")
        return
    _shared.show_chart("segments", frame, field=shown_as)
    st.caption(
        f"Each dot is the share of a {md_inline(shown_as.lower())} group's transcripts that "
        "the theme leads, "
        "with a "
        "95% bootstrap interval; where intervals do not overlap, the segments really differ."
    )


def _the(p: pd.Timestamp, freq: str) -> str:
    return ("the " if freq == "week" else "") + _period_label(p, freq)


def _span_label(periods: tuple[pd.Timestamp, ...], freq: str) -> str:
    if len(periods) == 1:
        return _the(periods[0], freq)
    first, last = _period_label(periods[0], freq), _period_label(periods[-1], freq)
    return f"the {len(periods)} {freq}s before it ({first} to {last})"


def _movers(ws, version, meta, freq: str, show_hidden: bool) -> None:
    st.subheader("Rising and falling themes")
    periods = period_choices(meta, freq)
    default = default_comparison(meta, freq)
    if default is None:
        st.info(f"Movers need transcripts in at least two {freq}s.")
        return
    full = set(full_periods(meta, freq))
    labels = {p: _period_label(p, freq) + ("" if p in full else " (cut short)") for p in periods}
    left, right = st.columns(2)
    after_key, n_key = f"time_after_{freq}", f"time_baseline_{freq}"
    if st.session_state.get(after_key) not in periods:
        st.session_state[after_key] = default.after
    after = left.selectbox(
        f"The {freq} to look at",
        periods,
        format_func=labels.get,
        key=after_key,
        help=f"Starts on the last full {freq}. A {freq} the data covers only in part is "
        "marked “cut short”: its share rests on fewer days' calls.",
    )
    most = max(1, sum(1 for p in periods if p != after))
    if st.session_state.get(n_key, 0) not in range(1, most + 1):
        st.session_state[n_key] = min(BASELINE_PERIODS[freq], most)
    baseline = right.number_input(
        f"Compared with how many {freq}s before it",
        min_value=1,
        max_value=most,
        step=1,
        key=n_key,
        help=f"Those {freq}s are pooled, so the comparison rests on more calls than one "
        f"{freq} holds; full {freq}s are used first.",
    )
    chosen = default_comparison(meta, freq, after=after, baseline=int(baseline))
    if chosen is None or not chosen.before:
        st.warning(f"There is no other {freq} to compare with.")
        return
    try:
        frame = _visible(
            _shared.movers(ws, version, freq, chosen.before, chosen.after), show_hidden
        )
    except TalkthemesError as exc:
        _shared.show_error(exc)
        return
    if frame.empty:
        st.info("Nothing to rank with the themes shown.")
        return
    pool = _span_label(chosen.before, freq)
    look_at = _the(chosen.after, freq)
    _shared.show_chart("movers", frame, compared=f"from {pool} to {look_at}", key="time_movers")
    n_before, n_after = int(frame["n_before"].iloc[0]), int(frame["n_after"].iloc[0])
    st.caption(
        f"Change in the share of transcripts each theme leads, from {pool} "
        f"({n_before:,} transcripts) to {look_at} ({n_after:,} transcripts), in "
        "percentage points; biggest rise at the top. Black lines are 95% bootstrap "
        "intervals; faint bars: the interval includes no change."
    )


def render() -> None:
    """The Over time section."""
    ws = _shared.gate("version")
    version = _shared.current_version(ws)
    meta = _shared.tables(ws, version)  # the fields and the days with calls
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
