"""Charts: pure functions from a small, aggregated DataFrame to an Altair chart.

The Streamlit viewer and the static HTML report draw the same charts from these functions.
Each chart is a value (Altair 6 / Vega-Lite 6): nothing is rendered or written here, and
tests read the specification through ``chart.to_dict()``.

The look is our own and calm: a white background, soft grey ink for axes and text, no
frame around plots, and data colours only from the colour-blind-safe Okabe–Ito palette
(:data:`OKABE_ITO`). Numbers carry their unit (``%``, percentage points, seconds) and every
chart has a plain-language title and subtitle. Themes are always shown by name — their
label, or their three top terms until labelled (:func:`theme_name`).

Inputs are aggregated frames (one row per theme, per period × theme, per sweep cell…),
never one row per transcript; they are embedded inline, so a chart works with Altair's
default data transformer. A frame larger than :data:`MAX_CHART_ROWS` is refused with a
message asking to aggregate first.

References
----------
Okabe, M. & Ito, K. (2002). *Color Universal Design (CUD): How to make figures and
presentations that are friendly to colorblind people.* J*FLY Data Depository for
Drosophila Researchers [mem].
"""

from __future__ import annotations

import json
import math
import textwrap
import warnings
from collections.abc import Sequence
from typing import Any, Literal, TypeAlias

import altair as alt
import numpy as np
import pandas as pd

from talkthemes.errors import InputError

__all__ = [
    "BLACK",
    "BLUE",
    "BLUISH_GREEN",
    "FAMILY_COLOURS",
    "MAX_CHART_ROWS",
    "OKABE_ITO",
    "ORANGE",
    "REDDISH_PURPLE",
    "SERIES_COLOURS",
    "SKY_BLUE",
    "TERM_CAPTION",
    "VERMILLION",
    "YELLOW",
    "ChartLike",
    "drift_chart",
    "movers_chart",
    "segment_chart",
    "sweep_chart",
    "term_chart",
    "theme_map_caption",
    "theme_map_chart",
    "theme_name",
    "trend_chart",
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

MAX_CHART_ROWS = 50_000
"""Largest frame a chart accepts; charts take aggregates, never per-transcript rows."""

TERM_CAPTION = (
    "Words are ranked by relevance to the theme, most relevant at the top. The filled dot "
    "is how often the word is used in this theme, the ring how often it is used across all "
    "transcripts; ×3.2 means the word is 3.2 times as common in this theme."
)
"""Plain-language caption of :func:`term_chart` (also its subtitle)."""

_FAMILY_NAMES = {"lda": "LDA", "nmf": "NMF"}
_INK = "#2b2b2b"
_INK_SOFT = "#6b6b6b"
_LINE_SOFT = "#c8c8c8"
_GRID = "#ededed"
_PAPER = "#ffffff"
_FONT = "Helvetica Neue, Helvetica, Arial, sans-serif"
_MAP_MAX_AREA = 3200.0  # px² of the circle of the theme with the largest coverage

# metric column -> (panel title, y-axis title, number format)
_SWEEP_METRICS: dict[str, tuple[str, str, str]] = {
    "c_npmi": ("Coherence (C_NPMI, higher is better)", "C_NPMI", ".2f"),
    "c_v": ("Coherence (C_V, higher is better)", "C_V", ".2f"),
    "c_uci": ("Coherence (C_UCI, higher is better)", "C_UCI", ".2f"),
    "u_mass": ("Coherence (U_Mass, higher is better)", "U_Mass", ".2f"),
    "diversity": (
        "Diversity (share of distinct top terms, higher is better)",
        "distinct top terms",
        ".0%",
    ),
    "stability": (
        "Stability across seeds (average Jaccard, higher is better)",
        "average Jaccard",
        ".2f",
    ),
    "perplexity": ("Held-out perplexity (LDA only, lower is better)", "perplexity", ",.0f"),
    "reconstruction_error": (
        "Reconstruction error (NMF only, lower is better)",
        "Frobenius error",
        ",.3~f",
    ),
    "fit_seconds": ("Fit time (lower is faster)", "seconds per model", ",.1f"),
    "peak_memory_mb": ("Peak memory (lower is lighter)", "MiB per worker", ",.0f"),
}


# --------------------------------------------------------------------------- names, captions


def theme_name(label: str | None, top_terms: Sequence[str]) -> str:
    """The name a theme is shown by: its label, or its three top terms until labelled.

    Parameters
    ----------
    label : str or None
        The user's label; blank or ``None`` means not labelled yet.
    top_terms : sequence of str
        The theme's terms, most relevant first.

    Returns
    -------
    str
        ``label`` stripped, or the first three terms joined by ``" · "``, with the
        underscores of joined phrases (``late_fee``) shown as spaces.

    Raises
    ------
    InputError
        If the theme has neither a label nor any term.
    """
    if label is not None and label.strip():
        return label.strip()
    terms = [t.replace("_", " ") for t in top_terms[:3] if t]
    if not terms:
        raise InputError("theme_name: a theme needs a label or at least one top term")
    return " · ".join(terms)


def theme_map_caption(variance_kept: float) -> str:
    """Plain-words caption for :func:`theme_map_chart`.

    Parameters
    ----------
    variance_kept : float
        Share (0–1) of the distance structure the two map axes keep (METHODS §6.2).

    Returns
    -------
    str
        For example "Themes that sit close together use similar words. The two axes keep
        83% of the differences between themes; sizes show how many transcripts each theme
        leads."
    """
    if not (math.isfinite(variance_kept) and 0.0 <= variance_kept <= 1.0):
        raise InputError(f"theme_map_caption: variance_kept must be in 0–1, not {variance_kept}")
    return (
        "Themes that sit close together use similar words. The two axes keep "
        f"{variance_kept:.0%} of the differences between themes; sizes show how many "
        "transcripts each theme leads."
    )


# --------------------------------------------------------------------------- sweep


def sweep_chart(
    cells: pd.DataFrame,
    recommended: dict[str, int] | None = None,
    *,
    width: int = 260,
    height: int = 140,
    columns: int = 2,
) -> alt.ConcatChart:
    """Sweep metrics against the number of themes K, one small panel per metric.

    Parameters
    ----------
    cells : pandas.DataFrame
        One row per sweep cell (family, k, seed). Columns: ``family`` (``"lda"`` or
        ``"nmf"``), ``k`` (int), ``seed`` (int), and any of the metric columns
        ``c_npmi``, ``c_v``, ``c_uci``, ``u_mass``, ``diversity``, ``stability``,
        ``perplexity`` (LDA only, NaN for NMF), ``reconstruction_error`` (NMF only),
        ``fit_seconds``, ``peak_memory_mb``. Metric columns that are absent or entirely
        missing are skipped; other columns are ignored.
    recommended : dict of str to int, optional
        Recommended K per family (``{"lda": 12, "nmf": 10}``); families absent from
        ``cells`` are ignored.
    width, height : int
        Size of each panel in pixels.
    columns : int
        Panels per row.

    Returns
    -------
    altair.ConcatChart
        Each panel: the mean across seeds as a line with points, one colour per family
        (:data:`FAMILY_COLOURS`); the seed spread as a band from the lowest to the highest
        seed's value (min–max, drawn only where a family has more than one seed); the
        recommended K as a dashed rule in the family's colour with a ring on the mean and
        the text "K = 12" above the plot. Independent y scales, a shared x axis. Clicking
        a point selects a cell: a point selection named ``cell`` on the fields ``family``
        (``"lda"``/``"nmf"``) and ``k``.

    Raises
    ------
    InputError
        If a required column is missing, a family is unknown, or no metric has a value.
    """
    _require(cells, ("family", "k", "seed"), "sweep_chart", "cells")
    unknown = ~cells["family"].isin(list(_FAMILY_NAMES))
    if unknown.any():
        row = cells.index[unknown.to_numpy().nonzero()[0][0]]
        raise InputError(
            f"sweep_chart: cells row {row!r}: family {cells.loc[row, 'family']!r} is not "
            "'lda' or 'nmf'"
        )
    metrics = [m for m in _SWEEP_METRICS if m in cells.columns and cells[m].notna().any()]
    if not metrics:
        raise InputError(
            "sweep_chart: cells has no metric values (expected any of "
            + ", ".join(_SWEEP_METRICS)
            + ")"
        )
    families = [f for f in _FAMILY_NAMES if (cells["family"] == f).any()]
    summary = _sweep_summary(cells, metrics)
    ks = np.sort(cells["k"].unique())
    k_lo, k_hi = (ks[0] - 1, ks[0] + 1) if ks.size == 1 else (ks[0], ks[-1])
    rec = {f: int(k) for f, k in (recommended or {}).items() if f in families}
    x_axis = alt.Axis(format="d", tickMinStep=1)
    if ks.size <= 12:
        x_axis = alt.Axis(format="d", values=[int(k) for k in ks])
    x = alt.X(
        "k:Q",
        title="Number of themes (K)",
        scale=alt.Scale(domain=[float(k_lo), float(k_hi)], nice=False, padding=8),
        axis=x_axis,
    )
    colour = alt.Color(
        "family_name:N",
        title="Model family",
        scale=alt.Scale(
            domain=[_FAMILY_NAMES[f] for f in families],
            range=[FAMILY_COLOURS[f] for f in families],
        ),
        legend=alt.Legend(orient="top", symbolType="stroke", symbolStrokeWidth=3, symbolOpacity=1),
    )
    cell = alt.selection_point(name="cell", fields=["family", "k"], on="click", clear="dblclick")
    subtitle = "Lines: mean across seeds. Bands: range from the lowest to the highest seed."
    if rec:
        picks = ", ".join(f"{_FAMILY_NAMES[f]} K = {k}" for f, k in rec.items())
        subtitle += f" Dashed lines and rings: the recommended number of themes ({picks})."
    panels = []
    for metric in metrics:
        title, y_title, fmt = _SWEEP_METRICS[metric]
        data = summary[summary["metric"] == metric]
        y_scale = alt.Scale(zero=False)
        y_axis = alt.Axis(format=fmt, tickCount=4)
        base = alt.Chart(_inline(data, "sweep_chart")).encode(x=x, color=colour)
        layers: list[alt.Chart] = []
        if (data["seeds"] > 1).any():
            layers.append(
                base.transform_filter("datum.seeds > 1")
                .mark_area(opacity=0.18)
                .encode(
                    y=alt.Y("lo:Q", title=y_title, scale=y_scale, axis=y_axis),
                    y2="hi:Q",
                )
            )
        layers.append(
            base.mark_line(strokeWidth=2).encode(
                y=alt.Y("mean:Q", title=y_title, scale=y_scale, axis=y_axis)
            )
        )
        layers.append(
            base.mark_point(filled=True)
            .encode(
                y=alt.Y("mean:Q", title=y_title, scale=y_scale, axis=y_axis),
                size=alt.when(cell, empty=False).then(alt.value(110)).otherwise(alt.value(36)),
                tooltip=[
                    alt.Tooltip("family_name:N", title="Family"),
                    alt.Tooltip("k:Q", title="K", format="d"),
                    alt.Tooltip("mean:Q", title=f"{y_title}, mean across seeds", format=fmt),
                    alt.Tooltip("lo:Q", title="lowest seed", format=fmt),
                    alt.Tooltip("hi:Q", title="highest seed", format=fmt),
                    alt.Tooltip("seeds:Q", title="seeds", format="d"),
                ],
            )
            .add_params(cell)
        )
        rec_here = {f: k for f, k in rec.items() if (data["family"] == f).any()}
        if rec_here:
            layers.extend(_recommended_layers(data, rec_here, x, colour, y_title, y_scale, y_axis))
        panels.append(
            alt.layer(
                *layers,
                title=alt.TitleParams(
                    title, fontSize=12, fontWeight="normal", anchor="start", offset=16
                ),
                width=width,
                height=height,
            )
        )
    with warnings.catch_warnings():
        # One `cell` selection shared by every panel is what we want: Altair merges the
        # identical parameter into one with a view per panel, and says so with a warning.
        warnings.filterwarnings(
            "ignore", message="Automatically deduplicated selection parameter", category=UserWarning
        )
        return alt.concat(
            *panels,
            columns=columns,
            spacing=24,
            resolve=alt.Resolve(scale=alt.ScaleResolveMap(y="independent")),
            **_look("How the measures change with the number of themes", subtitle),
        )


def _sweep_summary(cells: pd.DataFrame, metrics: list[str]) -> pd.DataFrame:
    """Long frame: one row per (metric, family, k) with mean, min, max and seed count."""
    long = cells.melt(id_vars=["family", "k", "seed"], value_vars=metrics, var_name="metric")
    long = long[np.isfinite(pd.to_numeric(long["value"], errors="coerce"))]
    long["value"] = long["value"].astype(float)
    out = (
        long.groupby(["metric", "family", "k"], sort=True)["value"]
        .agg(mean="mean", lo="min", hi="max", seeds="count")
        .reset_index()
    )
    out["k"] = out["k"].astype(int)
    out["family_name"] = out["family"].map(_FAMILY_NAMES)
    return out


def _recommended_layers(
    data: pd.DataFrame,
    rec: dict[str, int],
    x: alt.X,
    colour: alt.Color,
    y_title: str,
    y_scale: alt.Scale,
    y_axis: alt.Axis,
) -> list[alt.Chart]:
    marks = pd.DataFrame(
        {
            "family": list(rec),
            "family_name": [_FAMILY_NAMES[f] for f in rec],
            "k": [rec[f] for f in rec],
        }
    )
    at = marks.merge(data[["family", "k", "mean"]], on=["family", "k"], how="inner")
    layers = [
        alt.Chart(_inline(marks, "sweep_chart"))
        .mark_rule(strokeDash=[5, 4], strokeWidth=1.5, opacity=0.9)
        .encode(x=x, color=colour)
    ]
    if not at.empty:
        layers.append(
            alt.Chart(_inline(at, "sweep_chart"))
            .mark_point(filled=False, size=190, strokeWidth=2)
            .encode(
                x=x,
                y=alt.Y("mean:Q", title=y_title, scale=y_scale, axis=y_axis),
                color=colour,
            )
        )
    # "K = 12" above the plot at each recommended K, in the family's colour (ink when both
    # families agree); with two different Ks the smaller is set left of its rule, the larger
    # right of its rule, so the two labels never overlap.
    distinct = sorted(set(rec.values()))
    for j, k in enumerate(distinct):
        fams = [f for f in rec if rec[f] == k]
        colour_k = FAMILY_COLOURS[fams[0]] if len(fams) == 1 else _INK
        align = "center" if len(distinct) == 1 else ("right" if j == 0 else "left")
        layers.append(
            alt.Chart(_inline(pd.DataFrame({"k": [k], "label": [f"K = {k}"]}), "sweep_chart"))
            .mark_text(
                align=align,
                baseline="bottom",
                dx={"center": 0, "right": -3, "left": 3}[align],
                dy=-3,
                fontSize=11,
                color=colour_k,
            )
            .encode(x=x, y=alt.value(0), text="label:N")
        )
    return layers


# --------------------------------------------------------------------------- theme map


def theme_map_chart(
    themes: pd.DataFrame,
    selected: int | None = None,
    *,
    width: int = 560,
    height: int = 440,
) -> alt.LayerChart:
    """Themes as circles on a 2-D map: close circles use similar words.

    Parameters
    ----------
    themes : pandas.DataFrame
        One row per theme. Columns: ``theme_id`` (int), ``x``, ``y`` (classical MDS
        coordinates, METHODS §6), ``coverage`` (share of transcripts the theme leads, 0–1),
        ``name`` (what to print, see :func:`theme_name`), and optionally ``hidden``
        (bool): hidden themes are drawn faint with a dashed outline, not omitted, so they
        can be found and shown again.
    selected : int, optional
        Theme id to highlight (orange fill, dark outline); it also initialises the
        selection.
    width, height : int
        Plot size in pixels.

    Returns
    -------
    altair.LayerChart
        Circles whose area is proportional to coverage (a linear size scale from 0), each
        with its name below it; x and y share one unit per pixel so distances are not
        stretched, and the axes are hidden because only relative distances mean
        something. A point selection named ``theme`` on ``theme_id`` (click to select,
        double-click to clear) for ``st.altair_chart(..., on_select="rerun")``. Tooltip:
        name, coverage as a percentage, theme id.
    """
    _require(themes, ("theme_id", "x", "y", "coverage", "name"), "theme_map_chart", "themes")
    df = themes[["theme_id", "x", "y", "coverage", "name"]].copy()
    df["hidden"] = themes["hidden"].astype(bool) if "hidden" in themes.columns else False
    for col in ("x", "y", "coverage"):
        _require_finite(df, col, "theme_map_chart")
    bad = (df["coverage"] < 0) | (df["coverage"] > 1)
    if bad.any():
        row = df.index[bad.to_numpy().nonzero()[0][0]]
        raise InputError(
            f"theme_map_chart: themes row {row!r}: coverage {df.loc[row, 'coverage']} is not "
            "a share between 0 and 1"
        )
    df["theme_id"] = df["theme_id"].astype(int)
    df["name"] = df["name"].astype(str)
    max_cov = float(df["coverage"].max()) or 1.0
    radius = np.sqrt(df["coverage"].to_numpy() / max_cov * _MAP_MAX_AREA / math.pi)
    margin_px = math.sqrt(_MAP_MAX_AREA / math.pi) + 20.0
    (x0, x1), (y0, y1), per_px = _equal_aspect(
        df["x"].to_numpy(float), df["y"].to_numpy(float), width, height, margin_px
    )
    df["label_x"], df["label_y"], df["label_align"], df["show_label"] = _place_labels(
        df["x"].to_numpy(float),
        df["y"].to_numpy(float),
        radius,
        df["name"].tolist(),
        df["coverage"].to_numpy(float),
        per_px,
    )
    df["status"] = np.where(df["hidden"], "hidden", "shown")

    theme = alt.selection_point(
        name="theme",
        fields=["theme_id"],
        on="click",
        clear="dblclick",
        value=[{"theme_id": int(selected)}] if selected is not None else alt.Undefined,
    )
    x = alt.X("x:Q", axis=None, scale=alt.Scale(domain=[x0, x1], nice=False, zero=False))
    y = alt.Y("y:Q", axis=None, scale=alt.Scale(domain=[y0, y1], nice=False, zero=False))
    tooltip = [
        alt.Tooltip("name:N", title="Theme"),
        alt.Tooltip("coverage:Q", title="Leads (share of transcripts)", format=".1%"),
        alt.Tooltip("theme_id:Q", title="Theme id", format="d"),
        alt.Tooltip("status:N", title="Shown or hidden"),
    ]
    base = alt.Chart(_inline(df, "theme_map_chart"))
    circles = (
        base.mark_circle(strokeWidth=1.2)
        .encode(
            x=x,
            y=y,
            size=alt.Size(
                "coverage:Q",
                scale=alt.Scale(domain=[0.0, max_cov], range=[0.0, _MAP_MAX_AREA], zero=True),
                legend=alt.Legend(
                    title="Share of transcripts it leads",
                    format=".0%",
                    orient="bottom",
                    direction="horizontal",
                    symbolFillColor=SKY_BLUE,
                    symbolStrokeColor=BLUE,
                    symbolOpacity=0.7,
                ),
            ),
            fill=alt.when(theme, empty=False)
            .then(alt.value(ORANGE))
            .otherwise(alt.value(SKY_BLUE)),
            stroke=alt.when(theme, empty=False).then(alt.value(BLACK)).otherwise(alt.value(BLUE)),
            strokeWidth=alt.when(theme, empty=False).then(alt.value(2.5)).otherwise(alt.value(1)),
            strokeDash=alt.when("datum.hidden").then(alt.value([3, 3])).otherwise(alt.value([])),
            fillOpacity=alt.when("datum.hidden").then(alt.value(0.12)).otherwise(alt.value(0.6)),
            tooltip=tooltip,
            order=alt.Order("coverage:Q", sort="descending"),
        )
        .add_params(theme)
    )
    label_y = alt.Y(
        "label_y:Q", axis=None, scale=alt.Scale(domain=[y0, y1], nice=False, zero=False)
    )
    label_x = alt.X(
        "label_x:Q", axis=None, scale=alt.Scale(domain=[x0, x1], nice=False, zero=False)
    )
    label_layers = [
        base.transform_filter(f"datum.show_label && datum.label_align == '{al}'")
        .mark_text(baseline="top", align=al, fontSize=11, limit=_LABEL_MAX_PX, color=_INK)
        .encode(
            x=label_x,
            y=label_y,
            text="name:N",
            opacity=alt.when("datum.hidden").then(alt.value(0.4)).otherwise(alt.value(1.0)),
            tooltip=tooltip,
        )
        for al in ("center", "left", "right")
    ]
    return alt.layer(
        circles,
        *label_layers,
        width=width,
        height=height,
        **_look(
            "Theme map",
            "Close circles use similar words; larger circles lead more transcripts. "
            "Click a theme to select it.",
        ),
    )


_LABEL_MAX_PX = 170.0
_LABEL_CHAR_PX = 6.0  # average width of an 11 px sans-serif character
_LABEL_HEIGHT_PX = 13.0


def _place_labels(
    x: np.ndarray,
    y: np.ndarray,
    radius_px: np.ndarray,
    names: list[str],
    coverage: np.ndarray,
    per_px: float,
) -> tuple[np.ndarray, np.ndarray, list[str], np.ndarray]:
    """Greedy label placement so names do not print over each other.

    Themes are taken from the largest coverage down; each label tries below its circle,
    then above, right and left, and is left out (the tooltip and the table still name the
    theme) when every spot overlaps a label already placed. Positions are in data units;
    boxes are estimated in pixels from the name's length.
    """
    placed: list[tuple[float, float, float, float]] = []
    n = len(names)
    lx, ly = np.array(x, dtype=float), np.array(y, dtype=float)
    align = ["center"] * n
    show = np.zeros(n, dtype=bool)
    for i in np.argsort(-coverage, kind="stable"):
        w = min(_LABEL_MAX_PX, _LABEL_CHAR_PX * len(names[i]) + 4.0)
        h = _LABEL_HEIGHT_PX
        cx, cy, r = x[i] / per_px, -y[i] / per_px, radius_px[i] + 3.0  # pixel space, y down
        spots = [
            (cx, cy + r, "center", (cx - w / 2, cy + r, cx + w / 2, cy + r + h)),
            (cx, cy - r - h, "center", (cx - w / 2, cy - r - h, cx + w / 2, cy - r)),
            (cx + r, cy - h / 2, "left", (cx + r, cy - h / 2, cx + r + w, cy + h / 2)),
            (cx - r, cy - h / 2, "right", (cx - r - w, cy - h / 2, cx - r, cy + h / 2)),
        ]
        for px, py, al, box in spots:
            if all(
                box[2] <= b[0] or box[0] >= b[2] or box[3] <= b[1] or box[1] >= b[3] for b in placed
            ):
                placed.append(box)
                lx[i], ly[i], align[i], show[i] = px * per_px, -py * per_px, al, True
                break
    return lx, ly, align, show


def _equal_aspect(
    x: np.ndarray, y: np.ndarray, width: int, height: int, margin_px: float
) -> tuple[tuple[float, float], tuple[float, float], float]:
    """Domains giving x and y the same data units per pixel, with a pixel margin."""
    span_x = float(x.max() - x.min()) if x.size else 0.0
    span_y = float(y.max() - y.min()) if y.size else 0.0
    usable_w = max(width - 2 * margin_px, 1.0)
    usable_h = max(height - 2 * margin_px, 1.0)
    per_px = max(span_x / usable_w, span_y / usable_h)
    if per_px <= 0.0:
        per_px = 1.0 / min(usable_w, usable_h)
    cx = float(x.min() + x.max()) / 2.0 if x.size else 0.0
    cy = float(y.min() + y.max()) / 2.0 if y.size else 0.0
    half_w, half_h = width / 2.0 * per_px, height / 2.0 * per_px
    return (cx - half_w, cx + half_w), (cy - half_h, cy + half_h), per_px


# --------------------------------------------------------------------------- terms


def term_chart(terms: pd.DataFrame, name: str, *, width: int = 420) -> alt.LayerChart:
    """A theme's terms, ranked by relevance, with their weight in the theme and the corpus.

    Parameters
    ----------
    terms : pandas.DataFrame
        One row per term. Columns: ``term`` (str), ``relevance`` (Sievert & Shirley 2014,
        at the viewer's λ), ``weight`` (the term's probability in the theme, > 0),
        ``corpus_weight`` (its probability in the whole corpus, > 0), ``rank`` (1 = most
        relevant).
    name : str
        The theme's name (its label or top terms), used as the title.
    width : int
        Plot width in pixels; the height follows the number of terms.

    Returns
    -------
    altair.LayerChart
        One row per term, most relevant at the top, on a shared logarithmic axis of
        "share of all words": a filled blue dot at the term's weight in the theme, a black
        ring at its weight across all transcripts, a grey line joining them, and the lift
        (theme weight ÷ corpus weight) printed as "×3.2" beside the pair. The caption is
        :data:`TERM_CAPTION`.

    References
    ----------
    Sievert, C., Shirley, K. E. (2014). Proc. ACL 2014 Workshop on Interactive Language
    Learning, Visualization, and Interfaces, pp. 63–70 (term relevance).
    """
    _require(terms, ("term", "relevance", "weight", "corpus_weight", "rank"), "term_chart", "terms")
    df = terms[["term", "relevance", "weight", "corpus_weight", "rank"]].copy()
    for col in ("weight", "corpus_weight"):
        _require_finite(df, col, "term_chart")
        bad = df[col] <= 0
        if bad.any():
            row = df.index[bad.to_numpy().nonzero()[0][0]]
            raise InputError(
                f"term_chart: terms row {row!r} ({df.loc[row, 'term']!r}): {col} must be "
                "positive to sit on a logarithmic axis"
            )
    df = df.sort_values("rank", kind="stable").reset_index(drop=True)
    df["term"] = df["term"].astype(str)
    df["lift"] = df["weight"] / df["corpus_weight"]
    df["lift_text"] = [_lift_text(v) for v in df["lift"]]
    df["right"] = df[["weight", "corpus_weight"]].max(axis=1)
    order = df["term"].tolist()
    in_theme, in_corpus = "in this theme", "across all transcripts"
    long = pd.concat(
        [
            df.assign(where=in_theme, value=df["weight"]),
            df.assign(where=in_corpus, value=df["corpus_weight"]),
        ],
        ignore_index=True,
    )
    lo = float(df[["weight", "corpus_weight"]].min().min()) / 1.5
    hi = float(df["right"].max()) * 4.0
    scale = alt.Scale(type="log", domain=[lo, hi], nice=False)
    x_title = "How often the word is used (share of all words, log scale)"
    y = alt.Y(
        "term:N",
        sort=order,
        title=None,
        axis=alt.Axis(ticks=False, domain=False, labelFontSize=12, labelPadding=8, labelLimit=180),
    )
    tooltip = [
        alt.Tooltip("term:N", title="Word"),
        alt.Tooltip("rank:Q", title="Rank by relevance", format="d"),
        alt.Tooltip("relevance:Q", title="Relevance", format=".3f"),
        alt.Tooltip("weight:Q", title="Share of the theme's words", format=".2%"),
        alt.Tooltip("corpus_weight:Q", title="Share of all words", format=".3%"),
        alt.Tooltip("lift_text:N", title="Times as common in the theme"),
    ]
    joins = (
        alt.Chart(_inline(df, "term_chart"))
        .mark_rule(color=_LINE_SOFT, strokeWidth=2)
        .encode(
            y=y,
            x=alt.X("corpus_weight:Q", title=x_title, scale=scale, axis=alt.Axis(format="~%")),
            x2="weight:Q",
        )
    )
    which = alt.Scale(domain=[in_theme, in_corpus], range=[BLUE, BLACK])
    dots = (
        alt.Chart(_inline(long, "term_chart"))
        .mark_point(size=80, strokeWidth=1.8, opacity=1)
        .encode(
            y=y,
            x=alt.X("value:Q", title=x_title, scale=scale, axis=alt.Axis(format="~%")),
            stroke=alt.Stroke("where:N", scale=which, legend=alt.Legend(title=None, orient="top")),
            fill=alt.Fill(
                "where:N",
                scale=alt.Scale(domain=[in_theme, in_corpus], range=[BLUE, _PAPER]),
                legend=alt.Legend(title=None, orient="top"),
            ),
            tooltip=tooltip,
        )
    )
    lift = (
        alt.Chart(_inline(df, "term_chart"))
        .mark_text(align="left", dx=10, fontSize=11, color=_INK_SOFT)
        .encode(
            y=y,
            x=alt.X("right:Q", title=x_title, scale=scale, axis=alt.Axis(format="~%")),
            text="lift_text:N",
            tooltip=tooltip,
        )
    )
    return alt.layer(
        joins, dots, lift, width=width, height=max(60, 22 * len(df)), **_look(name, TERM_CAPTION)
    )


def _lift_text(lift: float) -> str:
    if lift >= 10:
        return f"×{lift:,.0f}"
    if lift >= 0.1:
        return f"×{lift:.1f}"
    return f"×{lift:.2f}"


# --------------------------------------------------------------------------- over time


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
    _require(
        trend, ("period", "theme_id", "name", "share", "lo", "hi", "n"), "trend_chart", "trend"
    )
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
    df["theme"] = _unique_names(df)
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
        scale=alt.Scale(domain=order, range=_cycle(SERIES_COLOURS, len(order))),
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
    base = alt.Chart(_inline(df, "trend_chart")).encode(x=x, color=colour)
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
        **_look(
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
        alt.Chart(_inline(vol, "trend_chart"))
        .mark_bar(color=_LINE_SOFT)
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
    _require(seg, ("segment", "theme_id", "name", "share", "lo", "hi", "n"), "segment_chart", "seg")
    df = seg[["segment", "theme_id", "name", "share", "lo", "hi", "n"]].copy()
    df["segment"] = df["segment"].astype(str)
    df["theme_id"] = df["theme_id"].astype(int)
    df["theme"] = _unique_names(df)
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
        scale=alt.Scale(domain=segments, range=_cycle(SERIES_COLOURS, len(segments))),
        legend=alt.Legend(orient="top", symbolOpacity=1),
    )
    x_title = "Share of the segment's transcripts led"
    x_axis = alt.Axis(format=".0%", tickCount=6)
    base = alt.Chart(_inline(df, "segment_chart")).encode(y=y, yOffset=y_offset, color=colour)
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
        **_look(
            f"Themes by {field}",
            f"Each dot is the share of a {field}'s transcripts that the theme leads; "
            "lines are 95% bootstrap intervals.",
        ),
    )


def movers_chart(movers: pd.DataFrame, *, width: int = 420) -> alt.LayerChart:
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

    Returns
    -------
    altair.LayerChart
        One row per theme, biggest rise at the top and biggest fall at the bottom; a bar
        from zero to the change (blue for a rise, vermillion for a fall), faint when the
        95% interval includes no change; a black whisker for the interval; the shares
        before and after in a column to the right ("12.0% → 18.5%"); x in percentage
        points, symmetric around zero.
    """
    _require(
        movers,
        ("theme_id", "name", "share_before", "share_after", "change", "lo", "hi"),
        "movers_chart",
        "movers",
    )
    df = movers[["theme_id", "name", "share_before", "share_after", "change", "lo", "hi"]].copy()
    df["theme_id"] = df["theme_id"].astype(int)
    df["theme"] = _unique_names(df)
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
    base = alt.Chart(_inline(df, "movers_chart")).encode(y=y)
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
        alt.Chart(_inline(pd.DataFrame({"x": [0.0]}), "movers_chart"))
        .mark_rule(color=_INK_SOFT, strokeWidth=1)
        .encode(x=alt.X("x:Q", title=x_title, scale=x_scale, axis=x_axis))
    )
    # Shares before and after, as a column of text to the right of the plot.
    labels = base.mark_text(align="left", fontSize=11, color=_INK_SOFT).encode(
        x=alt.value(width + 12), text="shares:N"
    )
    header = (
        alt.Chart(_inline(pd.DataFrame({"h": ["share before → after"]}), "movers_chart"))
        .mark_text(align="left", baseline="bottom", fontSize=11, color=_INK_SOFT)
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
        **_look(
            "Themes that rose or fell the most",
            "Change in the share of transcripts each theme leads, from the first period to "
            "the second; black lines are 95% bootstrap intervals, faint bars may be no change "
            "at all.",
        ),
    )


# --------------------------------------------------------------------------- refresh drift


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
    _require(
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
    df["theme"] = _unique_names(df)
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
    data = _inline(df, "drift_chart")
    d_scale = alt.Scale(domain=[0.0, 1.0])
    d_title = "How far the words moved (Jensen–Shannon distance, 0 = same, 1 = none shared)"
    carried = alt.Chart(data).transform_filter("datum.status == 'carried'").encode(y=y)
    stems = carried.mark_rule(strokeWidth=2, color=_LINE_SOFT).encode(
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
        **_look(
            "What this refresh changed",
            "New themes appeared, carried themes kept their identity and label (some moved "
            "more than others), retired themes no longer lead any group of transcripts.",
        ),
    )


# --------------------------------------------------------------------------- shared helpers


def _require(frame: pd.DataFrame, columns: Sequence[str], fn: str, arg: str) -> None:
    if not isinstance(frame, pd.DataFrame):
        raise InputError(f"{fn}: {arg} must be a pandas DataFrame, not {type(frame).__name__}")
    missing = [c for c in columns if c not in frame.columns]
    if missing:
        raise InputError(f"{fn}: {arg} is missing column(s) " + ", ".join(map(repr, missing)))
    if frame.empty:
        raise InputError(f"{fn}: {arg} has no rows")


def _require_finite(df: pd.DataFrame, col: str, fn: str) -> None:
    values = pd.to_numeric(df[col], errors="coerce").to_numpy(dtype=float)
    bad = ~np.isfinite(values)
    if bad.any():
        row = df.index[bad.nonzero()[0][0]]
        raise InputError(f"{fn}: row {row!r}: {col} {df.loc[row, col]!r} is not a finite number")


def _inline(frame: pd.DataFrame, fn: str) -> alt.InlineData:
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


def _naive_datetime(values: pd.Series, fn: str) -> pd.Series:
    out = pd.to_datetime(values, errors="coerce")
    bad = out.isna() & values.notna()
    if bad.any():
        row = values.index[bad.to_numpy().nonzero()[0][0]]
        raise InputError(f"{fn}: row {row!r}: period {values.loc[row]!r} is not a date")
    if getattr(out.dt, "tz", None) is not None:
        out = out.dt.tz_localize(None)
    return out


def _unique_names(df: pd.DataFrame) -> pd.Series:
    """Theme names made unique per theme id: a repeated name gets its id appended."""
    names = df.drop_duplicates("theme_id").set_index("theme_id")["name"].astype(str)
    repeated = names.duplicated(keep=False)
    shown = names.where(~repeated, names + " (#" + names.index.astype(str) + ")")
    return df["theme_id"].map(shown)


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


def _cycle(colours: Sequence[str], n: int) -> list[str]:
    return [colours[i % len(colours)] for i in range(max(n, 1))]


def _look(title: str, subtitle: str) -> dict[str, Any]:
    """Title, subtitle and the calm look shared by every chart.

    Returned as constructor keywords, not applied with ``.properties``/``.configure``:
    every such call on a layered or concatenated chart makes Altair re-copy all of it.
    """
    return {
        "title": alt.TitleParams(
            text=title, subtitle=textwrap.wrap(subtitle, width=100), anchor="start", offset=10
        ),
        "config": alt.Config(
            background=_PAPER,
            font=_FONT,
            padding=16,
            view=alt.ViewConfig(stroke=None),
            axis=alt.AxisConfig(
                labelColor=_INK_SOFT,
                titleColor=_INK_SOFT,
                titleFontWeight="normal",
                titleFontSize=11,
                labelFontSize=11,
                gridColor=_GRID,
                domainColor=_LINE_SOFT,
                tickColor=_LINE_SOFT,
            ),
            legend=alt.LegendConfig(
                labelColor=_INK, titleColor=_INK_SOFT, titleFontWeight="normal", labelFontSize=11
            ),
            title=alt.TitleConfig(
                color=_INK,
                fontSize=15,
                fontWeight="normal",
                subtitleColor=_INK_SOFT,
                subtitleFontSize=12,
            ),
        ),
    }
