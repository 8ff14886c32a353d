"""The theme map: themes placed by how alike their words are, sized by what they lead.

The coordinates come from :func:`talkthemes.view.theme_map.theme_layout` (classical MDS on
Jensen–Shannon distances, docs/methods_metrics.md, "Theme map: Jensen–Shannon distance and
classical MDS"); this module only draws them.
"""

from __future__ import annotations

import math

import altair as alt
import numpy as np
import pandas as pd

from talkthemes.charts.style import (
    BLACK,
    BLUE,
    INK,
    ORANGE,
    SKY_BLUE,
    inline,
    look,
    require,
    require_finite,
)
from talkthemes.errors import InputError

__all__ = ["theme_map_caption", "theme_map_chart"]

_MAP_MAX_AREA = 3200.0  # px² of the circle of the theme with the largest coverage


def theme_map_caption(variance_kept: float) -> str:
    """Plain-words caption for :func:`theme_map_chart`.

    Parameters
    ----------
    variance_kept : float
        Share (0–1) of the distance structure the two map axes keep: the share of the
        positive eigenvalue mass of the classical MDS (docs/methods_metrics.md, "Theme
        map").

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


def theme_map_chart(
    themes: pd.DataFrame,
    selected: int | None = None,
    *,
    width: int = 560,
    height: int = 440,
    interactive: bool = True,
) -> alt.LayerChart:
    """Themes as circles on a 2-D map: close circles use similar words.

    Parameters
    ----------
    themes : pandas.DataFrame
        One row per theme. Columns: ``theme_id`` (int), ``x``, ``y`` (classical MDS
        coordinates, docs/methods_metrics.md, "Theme map"), ``coverage`` (share of
        transcripts the theme leads, 0–1), ``name`` (what to print: the caller passes the
        theme's label or suggested name), and optionally ``hidden``
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
    require(themes, ("theme_id", "x", "y", "coverage", "name"), "theme_map_chart", "themes")
    df = themes[["theme_id", "x", "y", "coverage", "name"]].copy()
    df["hidden"] = themes["hidden"].astype(bool) if "hidden" in themes.columns else False
    for col in ("x", "y", "coverage"):
        require_finite(df, col, "theme_map_chart")
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
    base = alt.Chart(inline(df, "theme_map_chart"))
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
        .mark_text(baseline="top", align=al, fontSize=11, limit=_LABEL_MAX_PX, color=INK)
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
        **look(
            "Theme map",
            "Close circles use similar words; larger circles lead more transcripts."
            + (" Click a theme to select it." if interactive else ""),
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
