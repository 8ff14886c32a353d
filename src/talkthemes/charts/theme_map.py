"""The theme map: named tiles laid out by how alike the themes' words are, linked to their
nearest themes, each showing the share of transcripts it leads.

The design and its reasons are in docs/viewer.md, "Theme map". In short: every theme
is a tile of the same size carrying its full name, so names are read, not hunted for,
and never print over each other; the tiles sit on a grid in the arrangement of the
similarity layout (:func:`grid_cells`, an optimal assignment of themes to grid cells
from their classical-MDS coordinates, docs/methods_metrics.md, "Theme map"), and thin
lines join each theme to its nearest themes when their Jensen–Shannon distance is under
a cut-off; the share a theme leads is a number and a bar inside its tile; the tile's
fill says whether the theme is labelled, the bar's colour (and an arrow) whether it is
rising or falling. Text colours are chosen for a WCAG 2.1 contrast ratio of at least
4.5:1 on their fills (success criterion 1.4.3).
"""

from __future__ import annotations

import math
import textwrap

import altair as alt
import numpy as np
import pandas as pd
from scipy.optimize import linear_sum_assignment

from talkthemes.charts.style import (
    BLUE,
    INK,
    INK_SOFT,
    LINE_SOFT,
    PAPER,
    VERMILLION,
    inline,
    look,
    require,
    require_finite,
)
from talkthemes.errors import InputError

__all__ = [
    "TILE_STYLES",
    "contrast_ratio",
    "grid_cells",
    "theme_map_caption",
    "theme_map_chart",
    "tile_geometry",
]

# Tile fills by status and the inks written on them (each pair ≥ 4.5:1, tested).
TILE_STYLES: dict[str, dict[str, str]] = {
    "labelled": {"fill": "#e4f1fa", "ink": INK, "soft": "#4a4a4a", "edge": "#9cc9e8"},
    "suggested": {"fill": "#f4f4f2", "ink": INK, "soft": "#4a4a4a", "edge": "#cfcfcb"},
    "hidden": {"fill": PAPER, "ink": "#6b6b6b", "soft": "#6b6b6b", "edge": "#bdbdbd"},
}
"""Fill, ink (name), soft ink (facts) and outline of a tile, by the theme's status."""

BOILERPLATE_INK = "#8a4500"
"""The ink of the "looks like boilerplate" note (dark orange, ≥ 4.5:1 on every fill)."""

TREND_COLOURS = {"rising": BLUE, "falling": VERMILLION, "steady": INK_SOFT}
TREND_MARKS = {"rising": "▲", "falling": "▼", "steady": ""}

_GAP_X, _GAP_Y = 24.0, 22.0
_TILE_H = 90.0
_PAD = 10.0
_NAME_PX = 12.5  # font size of the name
_CHAR_PX = 0.64  # average width of a bold character, in font sizes (sans-serif)
_LINE_PX = 15.0


def theme_map_caption(variance_kept: float) -> str:
    """Plain-words caption for :func:`theme_map_chart`.

    Parameters
    ----------
    variance_kept : float
        Share (0–1) of the distance structure the two axes of the similarity layout keep:
        the share of the positive eigenvalue mass of the classical MDS
        (docs/methods_metrics.md, "Theme map").

    Returns
    -------
    str
        For example "Themes placed near each other use similar words; lines join each
        theme to its closest themes. The layout keeps 83% of the differences between
        themes. The bar in each tile is the share of transcripts the theme leads."
    """
    if not (math.isfinite(variance_kept) and 0.0 <= variance_kept <= 1.0):
        raise InputError(f"theme_map_caption: variance_kept must be in 0–1, not {variance_kept}")
    return (
        "Themes placed near each other use similar words; lines join each theme to its "
        f"closest themes. The layout keeps {variance_kept:.0%} of the differences between "
        "themes. The bar in each tile is the share of transcripts the theme leads."
    )


def contrast_ratio(foreground: str, background: str) -> float:
    """WCAG 2.1 contrast ratio of two sRGB colours (``"#rrggbb"``), from 1 to 21.

    (L1 + 0.05) / (L2 + 0.05) with L the relative luminance of the lighter (L1) and the
    darker (L2) colour; L = 0.2126 R + 0.7152 G + 0.0722 B of the linearised channels
    (c / 12.92 for c ≤ 0.04045, else ((c + 0.055) / 1.055) ** 2.4).

    References
    ----------
    W3C (2018). Web Content Accessibility Guidelines (WCAG) 2.1, definitions of
    "contrast ratio" and "relative luminance"; success criterion 1.4.3 asks 4.5:1 for
    text.
    """

    def luminance(colour: str) -> float:
        channels = [int(colour.lstrip("#")[i : i + 2], 16) / 255.0 for i in (0, 2, 4)]
        lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
        return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]

    a, b = luminance(foreground), luminance(background)
    hi, lo = max(a, b), min(a, b)
    return (hi + 0.05) / (lo + 0.05)


def grid_cells(x: np.ndarray, y: np.ndarray, columns: int) -> tuple[np.ndarray, np.ndarray]:
    """Put each theme in its own cell of a grid, keeping the similarity layout's arrangement.

    The layout's coordinates are scaled onto a grid of ``columns`` columns and enough rows
    for every theme with a quarter to spare; themes are then assigned to distinct cells
    so that the summed squared distance between where a theme lies and the centre of its
    cell is least (the linear assignment problem, solved exactly: Crouse 2016, as
    :func:`scipy.optimize.linear_sum_assignment`). Empty rows and columns are dropped.

    Returns
    -------
    col, row : ndarray of int
        Each theme's cell; up on the layout is row 0.
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    k = x.size
    if k == 0:
        return np.zeros(0, int), np.zeros(0, int)
    columns = max(1, min(int(columns), k))
    rows = max(1, math.ceil(1.25 * k / columns))
    while rows * columns < k:
        rows += 1

    def scaled(v: np.ndarray, n: int) -> np.ndarray:
        span = float(v.max() - v.min())
        return (v - v.min()) / span * (n - 1) if span > 0 else np.full(v.shape, (n - 1) / 2)

    px, py = scaled(x, columns), scaled(-y, rows)  # up on the layout is the top row
    cc, rr = np.meshgrid(np.arange(columns), np.arange(rows))
    cc, rr = cc.ravel(), rr.ravel()
    cost = (px[:, None] - cc[None, :]) ** 2 + (py[:, None] - rr[None, :]) ** 2
    themes, cells = linear_sum_assignment(cost)
    col, row = np.empty(k, int), np.empty(k, int)
    col[themes], row[themes] = cc[cells], rr[cells]
    # close up empty rows and columns, keeping the order
    col = np.unique(col, return_inverse=True)[1]
    row = np.unique(row, return_inverse=True)[1]
    return col, row


def tile_geometry(width: int, k: int) -> tuple[int, float]:
    """Columns and tile width for a map ``width`` pixels wide holding ``k`` themes.

    Tiles are 170–240 px wide: as many columns as fit (at most ``k``), so the map uses
    the width it is given.
    """
    width = max(int(width), 200)
    columns = max(1, min(k, int((width + _GAP_X) // (170 + _GAP_X))))
    tile_w = (width - (columns - 1) * _GAP_X) / columns
    if tile_w > 240 and columns < k:
        columns += 1
        tile_w = (width - (columns - 1) * _GAP_X) / columns
    return columns, min(tile_w, 320.0)


def _wrap(name: str, chars: int, lines: int = 2) -> list[str]:
    """A name in at most ``lines`` lines of ``chars`` characters, "…" when cut."""
    wrapped = textwrap.wrap(name, width=max(chars, 4), break_long_words=True) or [""]
    if len(wrapped) > lines:
        last = " ".join(wrapped[lines - 1 :])
        wrapped = [*wrapped[: lines - 1], last[: max(chars - 1, 1)].rstrip() + "…"]
    return wrapped


def theme_map_chart(
    themes: pd.DataFrame,
    links: pd.DataFrame | None = None,
    selected: int | None = None,
    *,
    width: int = 880,
    interactive: bool = True,
) -> alt.LayerChart:
    """Themes as named tiles on the similarity layout, linked to their nearest themes.

    Parameters
    ----------
    themes : pandas.DataFrame
        One row per theme. Columns: ``theme_id`` (int), ``x``, ``y`` (classical MDS
        coordinates, docs/methods_metrics.md, "Theme map"), ``coverage`` (share of
        transcripts the theme leads, 0–1), ``name`` (its label or suggested name), and
        optionally ``labelled`` (bool: a person named it; default False), ``hidden``
        (bool), ``boilerplate_like`` (bool: suggest hiding it) and ``trend``
        (``"rising"``, ``"falling"`` or ``"steady"``) with ``change`` (percentage points).
    links : pandas.DataFrame, optional
        ``theme_a, theme_b, distance``: the pairs to join
        (:func:`talkthemes.view.theme_map.theme_links`).
    selected : int, optional
        Theme id whose tile is outlined (a thick dark border; the fill is unchanged).
    width : int
        Width of the map in pixels; tiles and columns follow (:func:`tile_geometry`).
    interactive : bool
        Whether clicking a tile selects its theme (the viewer) or not (the report).

    Returns
    -------
    altair.LayerChart
        Links under tiles, each tile holding the name (up to two lines), the share it
        leads as a number and a bar, and the trend arrow. A point selection named
        ``theme`` on ``theme_id`` when ``interactive``. Positions are in pixels
        (``scale=None``), so the layout is the same in every renderer.
    """
    require(themes, ("theme_id", "x", "y", "coverage", "name"), "theme_map_chart", "themes")
    df = themes.copy().reset_index(drop=True)
    for col in ("x", "y", "coverage"):
        require_finite(df, col, "theme_map_chart")
    bad = (df["coverage"] < 0) | (df["coverage"] > 1)
    if bad.any():
        row = themes.index[bad.to_numpy().nonzero()[0][0]]
        raise InputError(
            f"theme_map_chart: themes row {row!r}: coverage {themes.loc[row, 'coverage']} "
            "is not a share between 0 and 1"
        )
    for flag in ("labelled", "hidden", "boilerplate_like"):
        df[flag] = df[flag].fillna(False).astype(bool) if flag in df else False
    if "trend" not in df:
        df["trend"] = "steady"
    df["trend"] = df["trend"].fillna("steady").astype(str)
    df["change"] = pd.to_numeric(df.get("change", np.nan), errors="coerce")
    df["theme_id"] = df["theme_id"].astype(int)
    df["name"] = df["name"].astype(str)

    k = len(df)
    columns, tile_w = tile_geometry(width, k)
    col, row = grid_cells(df["x"].to_numpy(float), df["y"].to_numpy(float), columns)
    df["x0"] = col * (tile_w + _GAP_X)
    df["y0"] = row * (_TILE_H + _GAP_Y)
    df["x1"], df["y1"] = df["x0"] + tile_w, df["y0"] + _TILE_H
    df["cx"], df["cy"] = df["x0"] + tile_w / 2, df["y0"] + _TILE_H / 2
    status = np.where(df["hidden"], "hidden", np.where(df["labelled"], "labelled", "suggested"))
    df["status"] = status
    for part in ("fill", "ink", "soft", "edge"):
        df[part] = [TILE_STYLES[s][part] for s in status]
    chars = int((tile_w - 2 * _PAD) / (_NAME_PX * _CHAR_PX))
    lines = [_wrap(n, chars) for n in df["name"]]
    df["line1"] = [ln[0] for ln in lines]
    df["line2"] = [ln[1] if len(ln) > 1 else "" for ln in lines]
    df["tx"] = df["x0"] + _PAD
    df["ty1"] = df["y0"] + _PAD
    df["ty2"] = df["ty1"] + _LINE_PX
    max_cov = float(df["coverage"].max()) or 1.0
    df["fy"] = df["ty2"] + _LINE_PX + 4  # the facts, under the name's two lines
    df["by0"] = df["fy"] + _LINE_PX + 2  # the bar, under the facts
    df["by1"] = df["by0"] + 6
    df["bx1"] = df["tx"] + np.maximum((tile_w - 2 * _PAD) * df["coverage"] / max_cov, 1.0)
    df["bar"] = [TREND_COLOURS.get(t, INK_SOFT) for t in df["trend"]]
    df["fact"] = [_fact(r) for r in df.itertuples()]
    df["note"] = np.where(df["boilerplate_like"] & ~df["hidden"], "boilerplate? hide", "")
    df["note_ink"] = BOILERPLATE_INK
    df["sel"] = df["theme_id"] == (int(selected) if selected is not None else -1)
    df["tooltip_status"] = [
        {"labelled": "labelled", "suggested": "suggested name", "hidden": "hidden as noise"}[s]
        for s in status
    ]
    height = float(df["y1"].max()) if k else _TILE_H
    map_width = float(df["x1"].max()) if k else tile_w

    theme = alt.selection_point(
        name="theme",
        fields=["theme_id"],
        on="click",
        clear="dblclick",
        value=[{"theme_id": int(selected)}] if selected is not None else alt.Undefined,
    )
    tooltip = [
        alt.Tooltip("name:N", title="Theme"),
        alt.Tooltip("coverage:Q", title="Leads (share of transcripts)", format=".1%"),
        alt.Tooltip("fact:N", title="Trend"),
        alt.Tooltip("tooltip_status:N", title="Name"),
        alt.Tooltip("theme_id:Q", title="Theme id", format="d"),
    ]
    base = alt.Chart(inline(_tile_columns(df), "theme_map_chart"))
    px = {"scale": None, "axis": None}
    layers: list[alt.Chart] = []
    link_rows = _link_rows(df, links)
    if not link_rows.empty:
        layers.append(
            alt.Chart(inline(link_rows, "theme_map_chart"))
            .mark_rule(color=LINE_SOFT, strokeCap="round")
            .encode(
                x=alt.X("ax:Q", **px),
                y=alt.Y("ay:Q", **px),
                x2="bx:Q",
                y2="by:Q",
                strokeWidth=alt.StrokeWidth("weight:Q", scale=None),
                tooltip=[
                    alt.Tooltip("pair:N", title="Close themes"),
                    alt.Tooltip("distance:Q", title="Jensen–Shannon distance", format=".3f"),
                ],
            )
        )
    tiles = base.mark_rect(cornerRadius=6).encode(
        x=alt.X("x0:Q", **px),
        x2="x1:Q",
        y=alt.Y("y0:Q", **px),
        y2="y1:Q",
        fill=alt.Fill("fill:N", scale=None),
        stroke=alt.when("datum.sel")
        .then(alt.value(INK))
        .otherwise(alt.Stroke("edge:N", scale=None)),
        strokeWidth=alt.when("datum.sel").then(alt.value(3.0)).otherwise(alt.value(1.0)),
        tooltip=tooltip,
    )
    if interactive:
        tiles = tiles.add_params(theme)
    layers.append(tiles)
    # hidden themes: a dashed outline drawn over their tile (rect marks take no dash
    # encoding, only a fixed dash)
    layers.append(
        base.transform_filter("datum.hidden && !datum.sel")
        .mark_rect(cornerRadius=6, filled=False, strokeDash=[4, 3], strokeWidth=1.2)
        .encode(
            x=alt.X("x0:Q", **px),
            x2="x1:Q",
            y=alt.Y("y0:Q", **px),
            y2="y1:Q",
            stroke=alt.value(INK_SOFT),
        )
    )
    for line, y_field in (("line1", "ty1"), ("line2", "ty2")):
        layers.append(
            base.mark_text(
                align="left",
                baseline="top",
                fontSize=_NAME_PX,
                fontWeight=600,
                limit=tile_w - 2 * _PAD,
            ).encode(
                x=alt.X("tx:Q", **px),
                y=alt.Y(f"{y_field}:Q", **px),
                text=f"{line}:N",
                color=alt.Color("ink:N", scale=None),
                tooltip=tooltip,
            )
        )
    layers.append(
        base.mark_rect(cornerRadius=2).encode(
            x=alt.X("tx:Q", **px),
            x2="bx1:Q",
            y=alt.Y("by0:Q", **px),
            y2="by1:Q",
            fill=alt.Fill("bar:N", scale=None),
            tooltip=tooltip,
        )
    )
    layers.append(
        base.mark_text(align="left", baseline="top", fontSize=11, limit=tile_w - 2 * _PAD).encode(
            x=alt.X("tx:Q", **px),
            y=alt.Y("fy:Q", **px),
            text="fact:N",
            color=alt.Color("soft:N", scale=None),
            tooltip=tooltip,
        )
    )
    layers.append(
        base.transform_filter("datum.note != ''")
        .mark_text(align="right", baseline="bottom", fontSize=10.5, fontStyle="italic")
        .encode(
            x=alt.X("nx:Q", **px),
            y=alt.Y("ny:Q", **px),
            text="note:N",
            color=alt.Color("note_ink:N", scale=None),
        )
    )
    subtitle = (
        "Near tiles use similar words; lines join close themes. Blue tiles are labelled, "
        "grey ones carry a suggested name, dashed ones are hidden as noise; the bar and "
        "number give the share of transcripts each theme leads (▲ rising, ▼ falling)."
    )
    if interactive:
        subtitle += " Click a tile to select its theme."
    return alt.layer(
        *layers,
        width=map_width,
        height=height,
        **look("Theme map", subtitle),
    )


def _fact(row: object) -> str:
    cov = float(getattr(row, "coverage"))  # noqa: B009
    trend = str(getattr(row, "trend"))  # noqa: B009
    change = getattr(row, "change")  # noqa: B009
    text = f"leads {cov:.1%}"
    mark = TREND_MARKS.get(trend, "")
    if mark and change is not None and np.isfinite(change):
        text += f" {mark} {change:+.1f} pp"
    return text


def _tile_columns(df: pd.DataFrame) -> pd.DataFrame:
    out = df.copy()
    out["nx"] = out["x1"] - _PAD
    out["ny"] = out["y1"] - 4
    keep = [c for c in out.columns if c not in ("x", "y")]
    return out[keep]


def _link_rows(df: pd.DataFrame, links: pd.DataFrame | None) -> pd.DataFrame:
    cols = ["ax", "ay", "bx", "by", "distance", "weight", "pair"]
    if links is None or links.empty:
        return pd.DataFrame(columns=cols)
    require(links, ("theme_a", "theme_b", "distance"), "theme_map_chart", "links")
    where = df.set_index("theme_id")
    rows = []
    d = links["distance"].astype(float)
    lo, hi = float(d.min()), float(d.max())
    for a, b, dist in zip(links["theme_a"], links["theme_b"], d, strict=True):
        if int(a) not in where.index or int(b) not in where.index:
            raise InputError(f"theme_map_chart: link {a}–{b} names a theme not on the map")
        ta, tb = where.loc[int(a)], where.loc[int(b)]
        closeness = 1.0 if hi == lo else (hi - dist) / (hi - lo)
        rows.append(
            {
                "ax": ta["cx"],
                "ay": ta["cy"],
                "bx": tb["cx"],
                "by": tb["cy"],
                "distance": dist,
                "weight": 1.5 + 2.5 * closeness,
                "pair": f"{ta['name']} ↔ {tb['name']}",
            }
        )
    return pd.DataFrame(rows, columns=cols)
