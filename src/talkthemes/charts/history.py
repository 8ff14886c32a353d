"""The refresh timeline: version number against the time each version was made."""

from __future__ import annotations

import altair as alt
import pandas as pd

from talkthemes.charts.style import BLACK, BLUE, BLUISH_GREEN, INK, LINE_SOFT, inline, look
from talkthemes.errors import InputError

__all__ = ["TIMELINE_COLUMNS", "time_format", "timeline_chart"]

TIMELINE_COLUMNS = (
    "n",
    "created_at",
    "current",
    "kind",
    "family",
    "k",
    "previous_version",
    "new_transcripts",
)
"""The columns :func:`timeline_chart` reads, as
:func:`talkthemes.view.history.versions_timeline` makes them."""


def timeline_chart(timeline: pd.DataFrame, *, width: int = 560) -> alt.LayerChart:
    """Version number against the time it was made; the current version ringed.

    Parameters
    ----------
    timeline : DataFrame
        One row per version: :data:`TIMELINE_COLUMNS` (``created_at`` a naive datetime,
        ``current`` bool, ``kind`` ``"refresh"`` or ``"publish"``).
    width : int
        Width in pixels.

    Returns
    -------
    altair.LayerChart
        A line through the versions in order, a dot per version coloured by how it was
        made (refresh or direct publish), and a ring around the current one.
    """
    missing = [c for c in TIMELINE_COLUMNS if c not in timeline.columns]
    if missing:
        raise InputError(f"timeline_chart: timeline lacks column(s) {', '.join(missing)}")
    df = timeline.copy()
    df["made_by"] = df["kind"].map({"refresh": "refresh", "publish": "publish"})
    df["state"] = df["current"].map({True: "current", False: ""})
    df["k"] = df["k"].astype("float64")
    df["new_transcripts"] = df["new_transcripts"].astype("float64")
    df["previous_version"] = df["previous_version"].astype("float64")
    tick_format = time_format(df["created_at"])
    df["created_at"] = df["created_at"].dt.strftime("%Y-%m-%dT%H:%M:%S")
    x = alt.X(
        "created_at:T",
        title="Made at",
        scale=alt.Scale(padding=24, nice=False),
        axis=alt.Axis(format=tick_format, tickCount=min(6, max(2, len(df))), labelOverlap=True),
    )
    y = alt.Y(
        "n:Q",
        title="Version",
        axis=alt.Axis(tickMinStep=1, format="d"),
        scale=alt.Scale(zero=False, nice=False, padding=12),
    )
    tooltip = [
        alt.Tooltip("n:Q", title="Version", format="d"),
        alt.Tooltip("created_at:T", title="Made at", format="%Y-%m-%d %H:%M"),
        alt.Tooltip("made_by:N", title="Made by"),
        alt.Tooltip("family:N", title="Family"),
        alt.Tooltip("k:Q", title="K", format="d"),
        alt.Tooltip("new_transcripts:Q", title="New transcripts", format=",d"),
        alt.Tooltip("state:N", title="State"),
    ]
    base = alt.Chart(inline(df, "timeline_chart")).encode(x=x, y=y)
    line = base.mark_line(color=LINE_SOFT, strokeWidth=1.5)
    dots = base.mark_point(filled=True, size=90, opacity=1).encode(
        color=alt.Color(
            "made_by:N",
            title="Made by",
            scale=alt.Scale(domain=["publish", "refresh"], range=[BLUE, BLUISH_GREEN]),
            legend=alt.Legend(orient="top"),
        ),
        tooltip=tooltip,
    )
    ring = (
        base.transform_filter("datum.current")
        .mark_point(filled=False, size=320, strokeWidth=2, color=BLACK)
        .encode(tooltip=tooltip)
    )
    label = (
        base.transform_filter("datum.current")
        .mark_text(align="left", dx=14, fontSize=11, color=INK)
        .encode(text=alt.value("current"))
    )
    return alt.layer(
        line,
        dots,
        ring,
        label,
        width=width,
        height=max(120, 36 * len(df)),
        **look("Versions over time", "Each dot is a version; the ringed one is current."),
    )


def time_format(stamps: pd.Series) -> str:
    """A date-time format that tells the ticks of ``stamps``' span apart, and no finer.

    Versions made minutes apart (a demo, a test) read "14:05:09", hours apart "14:05",
    days or weeks apart "03 Jun", further apart "Jun 2026" — never a bare fraction of a
    second.
    """
    present = pd.to_datetime(stamps).dropna()
    span = (present.max() - present.min()) if len(present) else pd.Timedelta(0)
    if span < pd.Timedelta(minutes=10):
        return "%H:%M:%S"
    if span < pd.Timedelta(days=2):
        return "%H:%M"
    if span < pd.Timedelta(days=300):
        return "%d %b"
    return "%b %Y"
