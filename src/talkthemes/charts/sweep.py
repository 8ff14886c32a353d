"""The Choose K chart: sweep measures against the number of themes, one panel per measure."""

from __future__ import annotations

import warnings

import altair as alt
import numpy as np
import pandas as pd

from talkthemes.charts.style import (
    FAMILY_COLOURS,
    FAMILY_NAMES,
    INK,
    inline,
    look,
    require,
)
from talkthemes.errors import InputError

__all__ = ["sweep_chart"]

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
    require(cells, ("family", "k", "seed"), "sweep_chart", "cells")
    unknown = ~cells["family"].isin(list(FAMILY_NAMES))
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
    families = [f for f in FAMILY_NAMES if (cells["family"] == f).any()]
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
            domain=[FAMILY_NAMES[f] for f in families],
            range=[FAMILY_COLOURS[f] for f in families],
        ),
        legend=alt.Legend(orient="top", symbolType="stroke", symbolStrokeWidth=3, symbolOpacity=1),
    )
    cell = alt.selection_point(name="cell", fields=["family", "k"], on="click", clear="dblclick")
    subtitle = "Lines: mean across seeds. Bands: range from the lowest to the highest seed."
    if rec:
        picks = ", ".join(f"{FAMILY_NAMES[f]} K = {k}" for f, k in rec.items())
        subtitle += f" Dashed lines and rings: the recommended number of themes ({picks})."
    panels = []
    for metric in metrics:
        title, y_title, fmt = _SWEEP_METRICS[metric]
        data = summary[summary["metric"] == metric]
        y_scale = alt.Scale(zero=False)
        y_axis = alt.Axis(format=fmt, tickCount=4)
        base = alt.Chart(inline(data, "sweep_chart")).encode(x=x, color=colour)
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
            **look("How the measures change with the number of themes", subtitle),
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
    out["family_name"] = out["family"].map(FAMILY_NAMES)
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
            "family_name": [FAMILY_NAMES[f] for f in rec],
            "k": [rec[f] for f in rec],
        }
    )
    at = marks.merge(data[["family", "k", "mean"]], on=["family", "k"], how="inner")
    layers = [
        alt.Chart(inline(marks, "sweep_chart"))
        .mark_rule(strokeDash=[5, 4], strokeWidth=1.5, opacity=0.9)
        .encode(x=x, color=colour)
    ]
    if not at.empty:
        layers.append(
            alt.Chart(inline(at, "sweep_chart"))
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
        colour_k = FAMILY_COLOURS[fams[0]] if len(fams) == 1 else INK
        align = "center" if len(distinct) == 1 else ("right" if j == 0 else "left")
        layers.append(
            alt.Chart(inline(pd.DataFrame({"k": [k], "label": [f"K = {k}"]}), "sweep_chart"))
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
