"""What the charts put on the canvas, read back as a user sees them.

Vega lays each chart out (vl-convert's scenegraph) and draws it as PNG; the tests then
check what a reader relies on: the movers' bars have a length proportional to the change,
rises to the right of zero and falls to the left, in their colour; every theme's line is
drawn inside the trend's plot; the files written open offline.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import tests.charts.spec as vl

from talkthemes.charts.render import chart_html, chart_png, save_chart
from talkthemes.charts.style import BLUE, LINE_SOFT, SERIES_COLOURS, VERMILLION
from talkthemes.charts.trends import movers_chart, trend_chart
from talkthemes.trends import lead_share_by_period, period_start

# Outage rose clearly, Upgrade rose a little (its interval includes no change), Late fees
# fell clearly.
MOVERS = pd.DataFrame(
    {
        "theme_id": [3, 1, 2],
        "name": ["Outage", "Late fees", "Upgrade"],
        "share_before": [0.05, 0.30, 0.10],
        "share_after": [0.15, 0.22, 0.11],
        "change": [10.0, -8.0, 1.0],
        "lo": [6.0, -12.0, -2.0],
        "hi": [14.0, -4.0, 4.0],
    }
)
SHOWN_ORDER = ["Outage", "Upgrade", "Late fees"]  # biggest rise on top, biggest fall below


@pytest.fixture(scope="module")
def movers_spec() -> dict:
    return movers_chart(MOVERS).to_dict()


def _bars(scene: vl.Scene) -> list[dict]:
    (_, rects), *others = scene.of_type("rect")
    assert not others, "one bar mark"
    return sorted(rects, key=lambda r: r["y"])  # top to bottom


def _zero_x(scene: vl.Scene) -> float:
    """The x of the vertical line drawn at no change (the only one-item rule)."""
    (x,) = [items[0]["x"] for _, items in scene.of_type("rule") if len(items) == 1]
    return float(x)


def test_movers_bars_have_a_length_proportional_to_the_change(movers_spec) -> None:
    scene = vl.scene(movers_spec)
    bars = _bars(scene)
    change = MOVERS.set_index("name").loc[SHOWN_ORDER, "change"].to_numpy()
    widths = np.array([b["width"] for b in bars])
    assert (widths > 0).all()
    px_per_point = widths / np.abs(change)
    assert px_per_point == pytest.approx(np.full(3, px_per_point[0]), rel=0.01)
    zero = _zero_x(scene)
    for bar, c in zip(bars, change, strict=True):
        if c > 0:  # a rise starts at zero and goes right
            assert bar["x"] == pytest.approx(zero, abs=0.5)
        else:  # a fall ends at zero
            assert bar["x"] + bar["width"] == pytest.approx(zero, abs=0.5)


def test_movers_bars_are_drawn_in_their_colour(movers_spec) -> None:
    scene = vl.scene(movers_spec)
    scale = 2.0
    image = vl.render(movers_spec, scale=scale)
    assert image.shape[:2] == (round(scene.height * scale), round(scene.width * scale))
    (name, _), *_ = scene.of_type("rect")
    ox, oy = scene.offsets[name]
    expected = {  # rise blue, fall vermillion; faint where the interval includes no change
        "Outage": vl.rgb(BLUE, 0.9),
        "Upgrade": vl.rgb(BLUE, 0.35),
        "Late fees": vl.rgb(VERMILLION, 0.9),
    }
    for bar, theme in zip(_bars(scene), SHOWN_ORDER, strict=True):
        # the upper part of the bar, inset from its edges (the whisker crosses its middle)
        x0, x1 = (ox + bar["x"] + 2) * scale, (ox + bar["x"] + bar["width"] - 2) * scale
        y0, y1 = (oy + bar["y"] + 2) * scale, (oy + bar["y"] + bar["height"] / 2 - 2) * scale
        region = image[int(y0) : int(y1), int(x0) : int(x1)]
        assert region.size, theme
        assert vl.colour_share(region, expected[theme]) > 0.95, theme


def _trend(n_weeks: int = 6) -> pd.DataFrame:
    rng = np.random.default_rng(3)
    names = ("Payment plans", "Late fees", "Moving house")
    lead = rng.choice(3, size=80 * n_weeks, p=[0.5, 0.3, 0.2])
    dates = pd.Series(
        pd.Timestamp("2024-01-01") + pd.to_timedelta(np.repeat(np.arange(n_weeks) * 7, 80), "D")
    )
    return lead_share_by_period(lead, period_start(dates, "week"), 3, n_boot=50, names=names)


def test_every_theme_s_line_is_drawn_inside_the_trend_plot() -> None:
    spec = trend_chart(_trend()).to_dict()
    scene = vl.scene(spec)
    image = vl.render(spec)
    assert len(scene.of_type("line")) == 1
    x0, y0, x1, y1 = (int(v) for v in scene.groups["concat_0_group"])
    plot = image[y0:y1, x0:x1]
    # themes by average share take the series colours in order
    for colour in SERIES_COLOURS[:3]:
        drawn = np.abs(plot - vl.rgb(colour)).sum(axis=-1) <= 40
        columns = np.flatnonzero(drawn.any(axis=0))
        # a line runs from the first week to the last: across most of the plot's width
        assert columns.size and columns.max() - columns.min() > 0.8 * (x1 - x0), colour
    # and below the plot, a grey bar per week counts the transcripts
    (_, bars), *_ = scene.of_type("rect")
    assert len(bars) == 6 and all(b["width"] > 0 and b["height"] > 0 for b in bars)
    bx0, by0, bx1, by1 = (int(v) for v in scene.groups["concat_1_group"])
    assert vl.colour_share(image[by0:by1, bx0:bx1], vl.rgb(LINE_SOFT)) > 0.3


def test_png_and_offline_html(tmp_path: Path) -> None:
    chart = movers_chart(MOVERS)
    png = vl.decode(chart_png(chart, scale=1.0))
    assert png.shape[1] == vl.scene(chart.to_dict()).width
    assert vl.not_paper_share(png) > 0.05  # ink on the page, not a blank canvas
    page = chart_html(chart)
    # nothing is loaded from anywhere: no script or style sheet by address
    assert re.search(r"<script[^>]*\bsrc\s*=|<link\b", page, re.I) is None
    assert re.search(r"""\b(?:src|href)\s*=\s*["']?\s*(?:https?:)?//""", page, re.I) is None
    assert "Themes that rose or fell the most" in page
    files = save_chart(chart, tmp_path / "movers.png")
    assert files == [tmp_path / "movers.png", tmp_path / "movers.html"]
    assert vl.decode(files[0].read_bytes()).shape[2] == 3
    assert files[1].read_text(encoding="utf-8") == page
