"""What a refresh changed: how far carried themes moved, which themes are new or retired."""

from __future__ import annotations

import altair as alt
import numpy as np
import pandas as pd

from talkthemes.charts.style import (
    BLUE,
    BLUISH_GREEN,
    LINE_SOFT,
    VERMILLION,
    inline,
    look,
    require,
    unique_names,
)
from talkthemes.errors import InputError

__all__ = ["drift_chart"]

_DRIFT_STATUS = {"new": BLUISH_GREEN, "carried": BLUE, "retired": VERMILLION}


def drift_chart(drift: pd.DataFrame, *, width: int = 280) -> alt.HConcatChart:
    """What a refresh changed: how far carried themes moved, which are new or retired.

    Parameters
    ----------
    drift : pandas.DataFrame
        One row per theme of either version. Columns: ``theme_id``, ``name``, ``status``
        (``"carried"``, ``"new"`` or ``"retired"``), ``distance`` (Jensen–Shannon distance
        the theme's words moved, 0–1; NaN for new and retired themes),
        ``coverage_before``, ``coverage_after`` (share of transcripts led in the previous
        and the new version, 0–1; NaN where the theme did not exist).
    width : int
        Width of each of the two panels in pixels.

    Returns
    -------
    altair.HConcatChart
        Rows: new themes first, then carried themes by distance moved (largest first),
        then retired themes; colour = status (new bluish green, carried blue, retired
        vermillion). Left: the distance as a lollipop for carried themes, the word "new"
        or "retired" for the others. Right: coverage before (ring) and after (dot) joined
        by a line.
    """
    require(
        drift,
        ("theme_id", "name", "status", "distance", "coverage_before", "coverage_after"),
        "drift_chart",
        "drift",
    )
    df = drift[
        ["theme_id", "name", "status", "distance", "coverage_before", "coverage_after"]
    ].copy()
    bad = ~df["status"].isin(list(_DRIFT_STATUS))
    if bad.any():
        row = drift.index[bad.to_numpy().nonzero()[0][0]]
        raise InputError(
            f"drift_chart: drift row {row!r}: status {df.loc[row, 'status']!r} is not one of "
            "'carried', 'new', 'retired'"
        )
    df["theme_id"] = df["theme_id"].astype(int)
    df["theme"] = unique_names(df)
    rank = df["status"].map({"new": 0, "carried": 1, "retired": 2})
    key = np.where(
        df["status"] == "carried",
        -df["distance"].fillna(0.0),
        -df[["coverage_before", "coverage_after"]].max(axis=1).fillna(0.0),
    )
    df = df.assign(_rank=rank, _key=key).sort_values(["_rank", "_key", "theme_id"])
    df = df.drop(columns=["_rank", "_key"]).reset_index(drop=True)
    order = df["theme"].tolist()
    status_colour = alt.Color(
        "status:N",
        title="Status",
        scale=alt.Scale(domain=list(_DRIFT_STATUS), range=list(_DRIFT_STATUS.values())),
        legend=alt.Legend(orient="top", symbolOpacity=1),
    )
    tooltip = [
        alt.Tooltip("theme:N", title="Theme"),
        alt.Tooltip("status:N", title="Status"),
        alt.Tooltip("distance:Q", title="Words moved (JS distance)", format=".2f"),
        alt.Tooltip("coverage_before:Q", title="Leads before", format=".1%"),
        alt.Tooltip("coverage_after:Q", title="Leads after", format=".1%"),
    ]
    height = max(60, 24 * len(df))
    y = alt.Y("theme:N", sort=order, title=None, axis=alt.Axis(labelLimit=220, ticks=False))
    data = inline(df, "drift_chart")
    d_scale = alt.Scale(domain=[0.0, 1.0])
    d_title = "How far the words moved (Jensen–Shannon distance, 0 = same, 1 = none shared)"
    carried = alt.Chart(data).transform_filter("datum.status == 'carried'").encode(y=y)
    stems = carried.mark_rule(strokeWidth=2, color=LINE_SOFT).encode(
        x=alt.X("distance:Q", title=d_title, scale=d_scale), x2=alt.datum(0.0)
    )
    heads = carried.mark_point(filled=True, size=60).encode(
        x=alt.X("distance:Q", title=d_title, scale=d_scale), color=status_colour, tooltip=tooltip
    )
    words = (
        alt.Chart(data)
        .transform_filter("datum.status != 'carried'")
        .mark_text(align="left", dx=6, fontSize=11, fontStyle="italic")
        .encode(
            y=y,
            x=alt.datum(0.0, scale=d_scale),
            text="status:N",
            color=status_colour,
            tooltip=tooltip,
        )
    )
    moved = alt.layer(
        stems,
        heads,
        words,
        width=width,
        height=height,
        title=alt.TitleParams("Words moved", anchor="start"),
    )
    c_title = "Share of transcripts led (ring: before, dot: after)"
    c_axis = alt.Axis(format=".0%")
    hidden_y = alt.Y("theme:N", sort=order, title=None, axis=None)
    base = alt.Chart(data).encode(y=hidden_y, color=status_colour, tooltip=tooltip)
    join = base.mark_rule(strokeWidth=2, opacity=0.5).encode(
        x=alt.X("coverage_before:Q", title=c_title, axis=c_axis), x2="coverage_after:Q"
    )
    before = base.mark_point(filled=False, size=60, strokeWidth=1.8).encode(
        x=alt.X("coverage_before:Q", title=c_title, axis=c_axis)
    )
    after = base.mark_point(filled=True, size=60).encode(
        x=alt.X("coverage_after:Q", title=c_title, axis=c_axis)
    )
    coverage = alt.layer(
        join,
        before,
        after,
        width=width,
        height=height,
        title=alt.TitleParams("Coverage", anchor="start"),
    )
    return alt.hconcat(
        moved,
        coverage,
        spacing=16,
        resolve=alt.Resolve(scale=alt.ScaleResolveMap(y="shared")),
        **look(
            "What this refresh changed",
            "New themes appeared, carried themes kept their identity and label (some moved "
            "more than others), retired themes no longer lead any group of transcripts.",
        ),
    )
