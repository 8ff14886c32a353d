"""The look every chart shares, and the small helpers the chart families use.

The look is our own and calm: a white background, soft grey ink for axes and text, no
frame around plots, and data colours only from the colour-blind-safe Okabe–Ito palette
(:data:`OKABE_ITO`). Numbers carry their unit and every chart has a plain-language title
and subtitle (:func:`look`).

Inputs are aggregated frames, never one row per transcript; :func:`inline` embeds them in
the chart and refuses a frame larger than :data:`MAX_CHART_ROWS`.

References
----------
Okabe, M. & Ito, K. (2002). *Color Universal Design (CUD): How to make figures and
presentations that are friendly to colorblind people.* J*FLY Data Depository for
Drosophila Researchers [mem].
"""

from __future__ import annotations

import json
import textwrap
from collections.abc import Sequence
from typing import Any, TypeAlias

import altair as alt
import numpy as np
import pandas as pd

from talkthemes.errors import InputError

__all__ = [
    "AUTOSIZE",
    "BLACK",
    "BLUE",
    "BLUISH_GREEN",
    "FAMILY_COLOURS",
    "FAMILY_NAMES",
    "FONT",
    "GRID",
    "INK",
    "INK_SOFT",
    "LINE_SOFT",
    "MAX_CHART_ROWS",
    "OKABE_ITO",
    "ORANGE",
    "PAPER",
    "REDDISH_PURPLE",
    "SERIES_COLOURS",
    "SKY_BLUE",
    "VERMILLION",
    "YELLOW",
    "ChartLike",
    "cycle",
    "inline",
    "look",
    "require",
    "require_finite",
    "unique_names",
]

ChartLike: TypeAlias = (
    alt.Chart | alt.LayerChart | alt.ConcatChart | alt.HConcatChart | alt.VConcatChart
)
"""What the chart functions return: a single, layered or concatenated top-level chart."""

OKABE_ITO: tuple[str, ...] = (
    "#E69F00",  # orange
    "#56B4E9",  # sky blue
    "#009E73",  # bluish green
    "#F0E442",  # yellow
    "#0072B2",  # blue
    "#D55E00",  # vermillion
    "#CC79A7",  # reddish purple
    "#000000",  # black
)
"""The eight colours of Okabe & Ito (2002), distinguishable with the common colour-vision
deficiencies. Every colour that tells data apart (families, themes, segments, statuses,
rise and fall) comes from this tuple; neutral greys are kept for ink, joining lines and
the transcript-count bars."""

ORANGE, SKY_BLUE, BLUISH_GREEN, YELLOW, BLUE, VERMILLION, REDDISH_PURPLE, BLACK = OKABE_ITO

SERIES_COLOURS: tuple[str, ...] = (
    BLUE,
    ORANGE,
    BLUISH_GREEN,
    REDDISH_PURPLE,
    SKY_BLUE,
    VERMILLION,
    BLACK,
    YELLOW,
)
"""Okabe–Ito reordered for series (lines, segments): yellow, the colour with the least
contrast on white, comes last. Colours repeat after eight series."""

FAMILY_COLOURS: dict[str, str] = {"lda": BLUE, "nmf": VERMILLION}
"""Fixed colour per model family, the same in every chart."""

FAMILY_NAMES: dict[str, str] = {"lda": "LDA", "nmf": "NMF"}
"""How each model family is written on screen."""

MAX_CHART_ROWS = 50_000
"""Largest frame a chart accepts; charts take aggregates, never per-transcript rows."""

AUTOSIZE = alt.AutoSizeParams(type="pad", contains="padding")
"""Every chart keeps its own size; see :func:`look`."""

INK = "#2b2b2b"
"""Text and the strongest neutral lines."""
INK_SOFT = "#6b6b6b"
"""Axis labels, subtitles, secondary text."""
LINE_SOFT = "#c8c8c8"
"""Joining lines, axis domains, the transcript-count bars."""
GRID = "#ededed"
PAPER = "#ffffff"
FONT = "Helvetica Neue, Helvetica, Arial, sans-serif"


def look(title: str, subtitle: str) -> dict[str, Any]:
    """Title, subtitle and the calm look shared by every chart.

    Returned as constructor keywords, not applied with ``.properties``/``.configure``:
    every such call on a layered or concatenated chart makes Altair re-copy all of it.

    The size is fixed (``autosize`` "pad": the plot keeps the width and height the chart
    function was given and the axes, legends and titles are added around it), written
    into the spec so every renderer lays the chart out alike. Left unset, the viewer's
    page would squeeze the whole chart, labels included, into the plot's width (its
    "fit" default), leaving bars of ranked charts no width at all, and warn that "fit"
    does not work for concatenated views.
    """
    return {
        "autosize": AUTOSIZE,
        "title": alt.TitleParams(
            text=title, subtitle=textwrap.wrap(subtitle, width=100), anchor="start", offset=10
        ),
        "config": alt.Config(
            background=PAPER,
            font=FONT,
            padding=16,
            view=alt.ViewConfig(stroke=None),
            axis=alt.AxisConfig(
                labelColor=INK_SOFT,
                titleColor=INK_SOFT,
                titleFontWeight="normal",
                titleFontSize=11,
                labelFontSize=11,
                gridColor=GRID,
                domainColor=LINE_SOFT,
                tickColor=LINE_SOFT,
            ),
            legend=alt.LegendConfig(
                labelColor=INK, titleColor=INK_SOFT, titleFontWeight="normal", labelFontSize=11
            ),
            title=alt.TitleConfig(
                color=INK,
                fontSize=15,
                fontWeight="normal",
                subtitleColor=INK_SOFT,
                subtitleFontSize=12,
            ),
        ),
    }


def require(frame: pd.DataFrame, columns: Sequence[str], fn: str, arg: str) -> None:
    """Refuse a non-frame, missing columns or an empty frame, naming the chart and argument."""
    if not isinstance(frame, pd.DataFrame):
        raise InputError(f"{fn}: {arg} must be a pandas DataFrame, not {type(frame).__name__}")
    missing = [c for c in columns if c not in frame.columns]
    if missing:
        raise InputError(f"{fn}: {arg} is missing column(s) " + ", ".join(map(repr, missing)))
    if frame.empty:
        raise InputError(f"{fn}: {arg} has no rows")


def require_finite(df: pd.DataFrame, col: str, fn: str) -> None:
    """Refuse a column with a missing or infinite number, naming the first such row."""
    values = pd.to_numeric(df[col], errors="coerce").to_numpy(dtype=float)
    bad = ~np.isfinite(values)
    if bad.any():
        row = df.index[bad.nonzero()[0][0]]
        raise InputError(f"{fn}: row {row!r}: {col} {df.loc[row, col]!r} is not a finite number")


def inline(frame: pd.DataFrame, fn: str) -> alt.InlineData:
    """Embed an aggregated frame as inline values (bypasses the 5,000-row default cap)."""
    if len(frame) > MAX_CHART_ROWS:
        raise InputError(
            f"{fn}: {len(frame):,} rows is more than a chart takes ({MAX_CHART_ROWS:,}); "
            "aggregate first (one row per theme and period, not per transcript)"
        )
    values: list[dict[str, Any]] = json.loads(
        frame.to_json(orient="records", date_format="iso", date_unit="s", force_ascii=False)
    )
    return _SharedInlineData(values=values)


class _SharedInlineData(alt.InlineData):
    """Inline values shared, not deep-copied, when Altair copies a chart.

    Altair copies a chart (deeply) at every layer, concat and configure step; with plain
    inline data that copies every record each time, which made a chart of a few thousand
    rows take seconds to build. Nothing in Altair changes ``values`` in place (datasets
    are consolidated into new objects), so sharing them is safe. The values are plain JSON
    records we made ourselves, so they are not checked against the schema record by record
    when built (the chart is still validated as a whole by ``to_dict``).
    """

    _class_is_valid_at_instantiation = False

    def __deepcopy__(self, memo: Any = None) -> _SharedInlineData:
        return self


def unique_names(df: pd.DataFrame) -> pd.Series:
    """Theme names made unique per theme id: a repeated name gets its id appended."""
    names = df.drop_duplicates("theme_id").set_index("theme_id")["name"].astype(str)
    repeated = names.duplicated(keep=False)
    shown = names.where(~repeated, names + " (#" + names.index.astype(str) + ")")
    return df["theme_id"].map(shown)


def cycle(colours: Sequence[str], n: int) -> list[str]:
    """``n`` colours taken in turn from ``colours`` (repeating; at least one)."""
    return [colours[i % len(colours)] for i in range(max(n, 1))]
