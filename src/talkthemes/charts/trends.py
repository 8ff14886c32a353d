"""Themes over time and across segments: the trend, the segment comparison, the movers."""

from __future__ import annotations

import math
from typing import Literal

import altair as alt
import numpy as np
import pandas as pd

from talkthemes.charts.style import (
    BLACK,
    BLUE,
    INK_SOFT,
    LINE_SOFT,
    SERIES_COLOURS,
    VERMILLION,
    cycle,
    inline,
    look,
    require,
    unique_names,
)
from talkthemes.errors import InputError

__all__ = ["movers_chart", "segment_chart", "trend_chart"]


def trend_chart(
    trend: pd.DataFrame,
    highlight: list[int] | None = None,
    *,
    freq: Literal["week", "month"] | None = None,
    width: int = 620,
    height: int = 260,
) -> alt.VConcatChart:
    """Each theme's share of transcripts per period, with its 95% interval.

    Parameters
    ----------
    trend : pandas.DataFrame
        One row per (period, theme), as :func:`talkthemes.trends.lead_share_by_period`
        returns. Columns: ``period`` (datetime, the start of a week or a month),
        ``theme_id``, ``name``, ``share`` (share of that period's transcripts led by the
        theme, 0–1), ``lo``, ``hi`` (95% interval), ``n`` (transcripts in the period).
        Periods with ``n = 0`` have missing shares and break the lines.
    highlight : list of int, optional
        Theme ids selected at first; the others are drawn faint until picked.
    freq : {"week", "month"}, optional
        What a period is, for axis titles and date formats; default: months when every
        period starts on the 1st and they are at least 28 days apart, else weeks.
    width, height : int
        Size of the main plot in pixels.

    Returns
    -------
    altair.VConcatChart
        Top: one line per theme (colour from :data:`SERIES_COLOURS`, repeating after
        eight themes, legend ordered by average share) over its interval band, y as a
        percentage. A point selection named ``themes`` on the legend field ``theme``
        (click a legend entry, shift-click for more). Bottom: transcripts per period as
        bars, so wide intervals can be read against small periods.
    """
    require(trend, ("period", "theme_id", "name", "share", "lo", "hi", "n"), "trend_chart", "trend")
    df = trend[["period", "theme_id", "name", "share", "lo", "hi", "n"]].copy()
    df["period"] = _naive_datetime(df["period"], "trend_chart")
    df["theme_id"] = df["theme_id"].astype(int)
    dup = df.duplicated(["period", "theme_id"])
    if dup.any():
        row = trend.index[dup.to_numpy().nonzero()[0][0]]
        raise InputError(
            f"trend_chart: trend row {row!r} repeats a (period, theme_id) pair; pass one "
            "aggregated row per period and theme, not one per transcript"
        )
    df["theme"] = unique_names(df)
    df["interval"] = _interval_text(df["lo"], df["hi"])
    order = _order_by_mean_share(df)
    monthly = _looks_monthly(df["period"]) if freq is None else freq == "month"
    period_title = "Month" if monthly else "Week starting"
    period_format = "%b %Y" if monthly else "%d %b %Y"
    picked = _names_for_ids(df, highlight)
    themes = alt.selection_point(
        name="themes",
        fields=["theme"],
        bind="legend",
        value=[{"theme": t} for t in picked] if picked else alt.Undefined,
    )
    colour = alt.Color(
        "theme:N",
        title="Theme",
        sort=order,
        scale=alt.Scale(domain=order, range=cycle(SERIES_COLOURS, len(order))),
        legend=alt.Legend(
            orient="right",
            labelLimit=220,
            symbolType="stroke",
            symbolStrokeWidth=3,
            symbolOpacity=1,
        ),
    )
    x = alt.X(
        "period:T",
        title=None,
        axis=alt.Axis(labels=False, ticks=False, values=_date_ticks(df["period"])),
    )
    y_axis = alt.Axis(format=".0%", tickCount=5)
    y_title = "Share of transcripts led"
    base = alt.Chart(inline(df, "trend_chart")).encode(x=x, color=colour)
    band = base.mark_area(invalid="break-paths-filter-domains").encode(
        y=alt.Y("lo:Q", title=y_title, axis=y_axis),
        y2="hi:Q",
        opacity=alt.when(themes).then(alt.value(0.16)).otherwise(alt.value(0.02)),
    )
    line = base.mark_line(strokeWidth=2, invalid="break-paths-filter-domains").encode(
        y=alt.Y("share:Q", title=y_title, axis=y_axis),
        opacity=alt.when(themes).then(alt.value(1.0)).otherwise(alt.value(0.12)),
    )
    points = base.mark_point(filled=True, size=26).encode(
        y=alt.Y("share:Q", title=y_title, axis=y_axis),
        opacity=alt.when(themes).then(alt.value(1.0)).otherwise(alt.value(0.1)),
        tooltip=[
            alt.Tooltip("theme:N", title="Theme"),
            alt.Tooltip("period:T", title=period_title, format=period_format),
            alt.Tooltip("share:Q", title="Share of transcripts led", format=".1%"),
            alt.Tooltip("interval:N", title="95% interval"),
            alt.Tooltip("n:Q", title="Transcripts in period", format=",d"),
        ],
    )
    main = alt.layer(band, line.add_params(themes), points, width=width, height=height)
    volume = _volume_strip(df, monthly, period_title, period_format, width)
    return alt.vconcat(
        main,
        volume,
        spacing=6,
        resolve=alt.Resolve(scale=alt.ScaleResolveMap(x="shared", color="independent")),
        **look(
            "How each theme's share changes over time",
            "Share of each period's transcripts whose lead theme it is; bands are 95% "
            "bootstrap intervals. Click a theme in the legend to pick it (shift-click for "
            "more).",
        ),
    )


def _volume_strip(
    df: pd.DataFrame, monthly: bool, period_title: str, period_format: str, width: int
) -> alt.Chart:
    vol = df.drop_duplicates("period")[["period", "n"]].sort_values("period").copy()
    half = pd.Timedelta(days=12) if monthly else pd.Timedelta(days=3)
    vol["start"] = vol["period"] - half
    vol["end"] = vol["period"] + half
    return (
        alt.Chart(inline(vol, "trend_chart"))
        .mark_bar(color=LINE_SOFT)
        .encode(
            x=alt.X(
                "start:T",
                title=period_title,
                axis=alt.Axis(format=period_format, values=_date_ticks(vol["period"])),
            ),
            x2="end:T",
            y=alt.Y("n:Q", title="Transcripts", axis=alt.Axis(tickCount=2, format=",d")),
            y2=alt.datum(0),
            tooltip=[
                alt.Tooltip("period:T", title=period_title, format=period_format),
                alt.Tooltip("n:Q", title="Transcripts", format=",d"),
            ],
        )
        .properties(width=width, height=48)
    )


def segment_chart(seg: pd.DataFrame, *, field: str = "segment", width: int = 460) -> alt.LayerChart:
    """Compare each theme's share across the segments of one metadata field.

    Parameters
    ----------
    seg : pandas.DataFrame
        One row per (segment, theme), as :func:`talkthemes.trends.lead_share_by_segment`
        returns. Columns: ``segment`` (a value of the field, e.g. a queue), ``theme_id``,
        ``name``, ``share`` (0–1), ``lo``, ``hi`` (95% interval), ``n`` (transcripts in
        the segment).
    field : str
        Name of the metadata field, used in the legend and title.
    width : int
        Plot width in pixels; the height follows the number of themes and segments.

    Returns
    -------
    altair.LayerChart
        A dot plot: one row per theme (ordered by average share), one dot per segment
        offset within the row, coloured by segment (:data:`SERIES_COLOURS`), with a
        whisker for the 95% interval; x as a percentage.
    """
    require(seg, ("segment", "theme_id", "name", "share", "lo", "hi", "n"), "segment_chart", "seg")
    df = seg[["segment", "theme_id", "name", "share", "lo", "hi", "n"]].copy()
    df["segment"] = df["segment"].astype(str)
    df["theme_id"] = df["theme_id"].astype(int)
    df["theme"] = unique_names(df)
    df["interval"] = _interval_text(df["lo"], df["hi"])
    order = _order_by_mean_share(df)
    segments = list(dict.fromkeys(df["segment"]))
    row_px = max(20, 9 * len(segments) + 10)
    y = alt.Y("theme:N", sort=order, title=None, axis=alt.Axis(labelLimit=220, ticks=False))
    y_offset = alt.YOffset("segment:N", sort=segments)
    colour = alt.Color(
        "segment:N",
        title=field,
        sort=segments,
        scale=alt.Scale(domain=segments, range=cycle(SERIES_COLOURS, len(segments))),
        legend=alt.Legend(orient="top", symbolOpacity=1),
    )
    x_title = "Share of the segment's transcripts led"
    x_axis = alt.Axis(format=".0%", tickCount=6)
    base = alt.Chart(inline(df, "segment_chart")).encode(y=y, yOffset=y_offset, color=colour)
    whiskers = base.mark_rule(strokeWidth=1.5, opacity=0.7).encode(
        x=alt.X("lo:Q", title=x_title, axis=x_axis), x2="hi:Q"
    )
    dots = base.mark_point(filled=True, size=48, opacity=1).encode(
        x=alt.X("share:Q", title=x_title, axis=x_axis),
        tooltip=[
            alt.Tooltip("theme:N", title="Theme"),
            alt.Tooltip("segment:N", title=field),
            alt.Tooltip("share:Q", title="Share of transcripts led", format=".1%"),
            alt.Tooltip("interval:N", title="95% interval"),
            alt.Tooltip("n:Q", title="Transcripts in segment", format=",d"),
        ],
    )
    return alt.layer(
        whiskers,
        dots,
        width=width,
        height=row_px * len(order),
        **look(
            f"Themes by {field}",
            f"Each dot is the share of a {field}'s transcripts that the theme leads; "
            "lines are 95% bootstrap intervals.",
        ),
    )


def movers_chart(
    movers: pd.DataFrame, *, width: int = 420, compared: str = "from the first period to the second"
) -> alt.LayerChart:
    """The themes that rose or fell most between two periods, as a diverging ranked chart.

    Parameters
    ----------
    movers : pandas.DataFrame
        One row per theme, as :func:`talkthemes.trends.movers` returns. Columns:
        ``theme_id``, ``name``, ``share_before``, ``share_after`` (0–1), ``change``
        (after − before, percentage points), ``lo``, ``hi`` (interval of the change,
        percentage points).
    width : int
        Plot width in pixels; the height follows the number of themes.
    compared : str
        What is compared with what, for the subtitle (e.g. "from the 4 weeks before to
        the week of 28 Sep 2026").

    Returns
    -------
    altair.LayerChart
        One row per theme, biggest rise at the top and biggest fall at the bottom; a bar
        from zero to the change (blue for a rise, vermillion for a fall), faint when the
        95% interval includes no change; a black whisker for the interval; the shares
        before and after in a column to the right ("12.0% → 18.5%"); x in percentage
        points, symmetric around zero.
    """
    require(
        movers,
        ("theme_id", "name", "share_before", "share_after", "change", "lo", "hi"),
        "movers_chart",
        "movers",
    )
    df = movers[["theme_id", "name", "share_before", "share_after", "change", "lo", "hi"]].copy()
    df["theme_id"] = df["theme_id"].astype(int)
    df["theme"] = unique_names(df)
    df["direction"] = np.where(df["change"] >= 0, "rose", "fell")
    df["clear"] = (df["lo"] > 0) | (df["hi"] < 0)
    df["shares"] = [
        f"{b:.1%} → {a:.1%}" for b, a in zip(df["share_before"], df["share_after"], strict=True)
    ]
    df["interval"] = [
        f"{lo:+.1f} to {hi:+.1f} pp" for lo, hi in zip(df["lo"], df["hi"], strict=True)
    ]
    order = df.sort_values(["change", "theme_id"], ascending=[False, True])["theme"].tolist()
    y = alt.Y("theme:N", sort=order, title=None, axis=alt.Axis(labelLimit=220, ticks=False))
    x_title = "Change in share of transcripts led (percentage points)"
    x_axis = alt.Axis(
        labelExpr="(datum.value == 0 ? '0' : format(datum.value, '+.3~f')) + ' pp'",
        tickCount=6,
    )
    extent = float(np.nanmax(np.abs(df[["lo", "hi", "change"]].to_numpy())))
    extent = extent * 1.1 if np.isfinite(extent) and extent > 0 else 1.0
    x_scale = alt.Scale(domain=[-extent, extent], nice=True)
    base = alt.Chart(inline(df, "movers_chart")).encode(y=y)
    bars = base.mark_bar(height={"band": 0.6}).encode(
        x=alt.X("change:Q", title=x_title, scale=x_scale, axis=x_axis),
        x2=alt.datum(0),
        color=alt.Color(
            "direction:N",
            title=None,
            scale=alt.Scale(domain=["rose", "fell"], range=[BLUE, VERMILLION]),
            legend=alt.Legend(orient="top", symbolOpacity=1),
        ),
        opacity=alt.when("datum.clear").then(alt.value(0.9)).otherwise(alt.value(0.35)),
        tooltip=[
            alt.Tooltip("theme:N", title="Theme"),
            alt.Tooltip("shares:N", title="Share before → after"),
            alt.Tooltip("change:Q", title="Change (percentage points)", format="+.1f"),
            alt.Tooltip("interval:N", title="95% interval of the change"),
        ],
    )
    whiskers = base.mark_rule(color=BLACK, strokeWidth=1.2).encode(
        x=alt.X("lo:Q", title=x_title, scale=x_scale, axis=x_axis), x2="hi:Q"
    )
    zero = (
        alt.Chart(inline(pd.DataFrame({"x": [0.0]}), "movers_chart"))
        .mark_rule(color=INK_SOFT, strokeWidth=1)
        .encode(x=alt.X("x:Q", title=x_title, scale=x_scale, axis=x_axis))
    )
    # Shares before and after, as a column of text to the right of the plot.
    labels = base.mark_text(align="left", fontSize=11, color=INK_SOFT).encode(
        x=alt.value(width + 12), text="shares:N"
    )
    header = (
        alt.Chart(inline(pd.DataFrame({"h": ["share before → after"]}), "movers_chart"))
        .mark_text(align="left", baseline="bottom", fontSize=11, color=INK_SOFT)
        .encode(x=alt.value(width + 12), y=alt.value(-6), text="h:N")
    )
    return alt.layer(
        zero,
        bars,
        whiskers,
        labels,
        header,
        width=width,
        height=max(60, 26 * len(df)),
        **look(
            "Themes that rose or fell the most",
            f"Change in the share of transcripts each theme leads, {compared}; black lines "
            "are 95% bootstrap intervals, faint bars may be no change at all.",
        ),
    )


def _naive_datetime(values: pd.Series, fn: str) -> pd.Series:
    out = pd.to_datetime(values, errors="coerce")
    bad = out.isna() & values.notna()
    if bad.any():
        row = values.index[bad.to_numpy().nonzero()[0][0]]
        raise InputError(f"{fn}: row {row!r}: period {values.loc[row]!r} is not a date")
    if getattr(out.dt, "tz", None) is not None:
        out = out.dt.tz_localize(None)
    return out


def _order_by_mean_share(df: pd.DataFrame) -> list[str]:
    mean = df.groupby("theme", sort=False)["share"].mean().fillna(-1.0)
    return mean.sort_values(ascending=False, kind="stable").index.tolist()


def _names_for_ids(df: pd.DataFrame, ids: list[int] | None) -> list[str]:
    if not ids:
        return []
    by_id = df.drop_duplicates("theme_id").set_index("theme_id")["theme"]
    unknown = [i for i in ids if i not in by_id.index]
    if unknown:
        raise InputError(f"trend_chart: highlight names theme id(s) not in the data: {unknown}")
    return [str(by_id[i]) for i in ids]


def _interval_text(lo: pd.Series, hi: pd.Series) -> list[str]:
    return [
        f"{a:.1%} – {b:.1%}" if np.isfinite(a) and np.isfinite(b) else "no transcripts"
        for a, b in zip(lo.astype(float), hi.astype(float), strict=True)
    ]


def _looks_monthly(periods: pd.Series) -> bool:
    present = periods.dropna()
    if present.empty or not (present.dt.day == 1).all():
        return False
    steps = np.diff(np.sort(present.unique()))
    return bool(steps.size == 0 or steps.min() >= np.timedelta64(28, "D"))


def _date_ticks(periods: pd.Series, most: int = 8) -> list[alt.DateTime]:
    """At most ``most`` period starts as axis ticks (local dates, like the data)."""
    stamps = pd.DatetimeIndex(periods.dropna().sort_values().unique())
    step = max(1, math.ceil(len(stamps) / most))
    return [alt.DateTime(year=t.year, month=t.month, date=t.day) for t in stamps[::step]]
