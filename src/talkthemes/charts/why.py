"""Why this call: the terms that pulled a call to each of its top themes, as small bars."""

from __future__ import annotations

import altair as alt
import pandas as pd

from talkthemes.charts.style import (
    BLUE,
    INK_SOFT,
    inline,
    look,
    require,
    require_finite,
    unique_names,
)
from talkthemes.errors import InputError

__all__ = ["WHY_CAPTION", "why_chart"]

WHY_CAPTION = (
    "For each of the call's top themes, the words that pulled it there: how often the call "
    "says the word times how much the theme weighs it, as a share of the theme's pull on "
    "the whole call."
)
"""Plain-language caption of :func:`why_chart` (also its subtitle)."""


def why_chart(frame: pd.DataFrame, *, width: int = 420) -> alt.VConcatChart:
    """Small bar charts, one per theme: each term's pull on the call.

    Parameters
    ----------
    frame : pandas.DataFrame
        :func:`talkthemes.view.why.why_frame`: columns ``theme_id``, ``name``, ``share``
        (the call's share of the theme, 0–1), ``theme_rank`` (1 = largest share),
        ``term``, ``count``, ``weight``, ``pull`` (0–1) and ``rank`` (1 = largest pull).
    width : int
        Width of each panel in pixels.

    Returns
    -------
    altair.VConcatChart
        One panel per theme, largest share on top, titled with the theme's name and its
        share of the call; in each, one blue bar per term (largest pull at the top) with
        the pull printed beside it as a percentage. The caption is :data:`WHY_CAPTION`.
    """
    cols = ("theme_id", "name", "share", "theme_rank", "term", "count", "weight", "pull", "rank")
    require(frame, cols, "why_chart", "frame")
    for col in ("share", "pull", "weight"):
        require_finite(frame, col, "why_chart")
    bad = (frame["pull"] < 0) | (frame["pull"] > 1)
    if bad.any():
        row = frame.index[bad.to_numpy().nonzero()[0][0]]
        raise InputError(f"why_chart: row {row!r}: pull must lie in [0, 1]")
    df = frame.copy()
    df["name"] = unique_names(df)
    df["term"] = df["term"].astype(str).str.replace("_", " ", regex=False)
    df["pull_text"] = [f"{p:.0%}" for p in df["pull"]]
    panels = []
    for _, group in df.sort_values(["theme_rank", "rank"]).groupby("theme_rank", sort=True):
        first = group.iloc[0]
        order = group["term"].tolist()
        y = alt.Y("term:N", sort=order, title=None, axis=alt.Axis(ticks=False, domain=False))
        x = alt.X(
            "pull:Q",
            title="Pull on the call",
            scale=alt.Scale(domain=[0, max(0.05, float(group["pull"].max()) * 1.15)]),
            axis=alt.Axis(format="~%", tickCount=5),
        )
        tooltip = [
            alt.Tooltip("term:N", title="Word"),
            alt.Tooltip("count:Q", title="Times in the call", format="d"),
            alt.Tooltip("weight:Q", title="Weight in the theme", format=".2%"),
            alt.Tooltip("pull:Q", title="Pull", format=".1%"),
        ]
        data = inline(group, "why_chart")
        bars = alt.Chart(data).mark_bar(color=BLUE).encode(y=y, x=x, tooltip=tooltip)
        text = (
            alt.Chart(data)
            .mark_text(align="left", dx=4, fontSize=11, color=INK_SOFT)
            .encode(y=y, x=x, text="pull_text:N")
        )
        panels.append(
            alt.layer(
                bars,
                text,
                width=width,
                height=max(40, 18 * len(group)),
                title=alt.TitleParams(
                    text=f"{first['name']} · {first['share']:.0%} of the call",
                    anchor="start",
                    fontSize=12,
                    fontWeight="normal",
                ),
            )
        )
    return alt.vconcat(*panels, spacing=18, **look("Why this call", WHY_CAPTION))
