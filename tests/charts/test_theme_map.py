"""The theme map: a point selection on the theme, area by coverage, distances unstretched,
names that never print over each other, and a caption stating what the MDS kept."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
import tests.charts.spec as vl
from tests.support.layout import retained_share

from talkthemes.charts.style import BLACK, ORANGE, SKY_BLUE
from talkthemes.charts.theme_map import _place_labels, theme_map_caption, theme_map_chart
from talkthemes.errors import InputError
from talkthemes.view.theme_map import theme_layout


def _themes(hidden: bool = True) -> pd.DataFrame:
    frame = pd.DataFrame(
        {
            "theme_id": [0, 1, 2, 5],
            "x": [-0.3, 0.1, 0.25, 0.0],
            "y": [0.0, 0.2, -0.1, 0.05],
            "coverage": [0.4, 0.3, 0.2, 0.1],
            "name": ["Payment plans", "Late fees", "modem · reset · router", "Moving house"],
        }
    )
    if hidden:
        frame["hidden"] = [False, False, False, True]
    return frame


def test_theme_map_selection_size_and_axes() -> None:
    spec = theme_map_chart(_themes()).to_dict()
    params = vl.params(spec)
    assert params["theme"]["select"]["type"] == "point"
    assert params["theme"]["select"]["fields"] == ["theme_id"]
    assert "value" not in params["theme"]
    circles = vl.by_mark(spec, "circle")[0]
    enc = circles["encoding"]
    # area ∝ coverage: a linear size scale through zero
    assert enc["size"]["field"] == "coverage"
    assert enc["size"]["scale"]["domain"] == [0.0, 0.4]
    assert enc["size"]["scale"]["range"][0] == 0.0
    assert "type" not in enc["size"]["scale"]  # linear
    # no axes: distances only matter relatively
    assert enc["x"]["axis"] is None and enc["y"]["axis"] is None
    tooltip = {t["field"]: t for t in enc["tooltip"]}
    assert tooltip["coverage"]["format"] == ".1%"
    assert {"name", "theme_id"} <= set(tooltip)
    text = vl.by_mark(spec, "text")[-1]
    assert text["encoding"]["text"]["field"] == "name"
    assert text["encoding"]["y"]["field"] == "label_y"
    vl.assert_palette(spec)


def test_theme_map_keeps_distances_unstretched_and_labels_below() -> None:
    width, height = 500, 300
    spec = theme_map_chart(_themes(), width=width, height=height).to_dict()
    enc = vl.by_mark(spec, "circle")[0]["encoding"]
    (x0, x1), (y0, y1) = enc["x"]["scale"]["domain"], enc["y"]["scale"]["domain"]
    assert (x1 - x0) / width == pytest.approx((y1 - y0) / height)
    rows = spec["datasets"][spec["data"]["name"]]
    assert all(r["label_y"] < r["y"] for r in rows)
    # the biggest circle's label sits further below its centre than the smallest's
    gap = {r["theme_id"]: r["y"] - r["label_y"] for r in rows}
    assert gap[0] > gap[5]


def test_theme_map_highlights_the_selected_theme_and_fades_hidden() -> None:
    spec = theme_map_chart(_themes(), selected=2).to_dict()
    assert vl.params(spec)["theme"]["value"] == [{"theme_id": 2}]
    enc = vl.by_mark(spec, "circle")[0]["encoding"]
    assert enc["fill"]["condition"][0] == {"param": "theme", "value": ORANGE, "empty": False}
    assert enc["fill"]["value"] == SKY_BLUE
    assert enc["stroke"]["condition"][0]["value"] == BLACK
    assert enc["fillOpacity"]["condition"][0]["test"] == "datum.hidden"
    rows = spec["datasets"][spec["data"]["name"]]
    assert [r["hidden"] for r in rows] == [False, False, False, True]
    # the hidden column is optional
    plain = theme_map_chart(_themes(hidden=False)).to_dict()
    assert not any(r["hidden"] for r in plain["datasets"][plain["data"]["name"]])


def test_theme_map_rejects_bad_coverage() -> None:
    bad = _themes()
    bad.loc[1, "coverage"] = 1.7
    with pytest.raises(InputError, match=r"row 1: coverage 1\.7"):
        theme_map_chart(bad)


def test_theme_map_labels_never_print_over_each_other() -> None:

    # five themes piled on one spot: the biggest keeps the spot below, others move or drop
    x = np.zeros(5)
    y = np.zeros(5)
    names = [f"theme number {i}" for i in range(5)]
    cov = np.array([0.4, 0.3, 0.15, 0.1, 0.05])
    _, ly, align, show = _place_labels(x, y, np.full(5, 10.0), names, cov, per_px=0.01)
    assert show[0] and ly[0] < 0 and align[0] == "center"
    assert show.sum() == 4 and not show[4]  # below, above, right, left — then no room
    spec = theme_map_chart(
        pd.DataFrame({"theme_id": range(5), "x": x, "y": y, "coverage": cov, "name": names})
    ).to_dict()
    rows = spec["datasets"][spec["data"]["name"]]
    shown = [(r["label_x"], r["label_y"], r["label_align"]) for r in rows if r["show_label"]]
    assert len(shown) == len(set(shown))  # no two names at the same place
    texts = [layer for layer in spec["layer"] if vl.mark(layer) == "text"]
    assert {t["mark"]["align"] for t in texts} == {"center", "left", "right"}


# --------------------------------------------------------------------------- caption


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_the_caption_states_the_share_the_map_keeps(seed: int) -> None:
    rng = np.random.default_rng(seed)
    topic_terms = rng.dirichlet(np.full(40, 0.1), size=7)  # 7 themes do not fit in a plane
    layout = theme_layout(topic_terms)
    share = retained_share(topic_terms, layout.x, layout.y)
    assert 0.2 < share < 0.99
    caption = theme_map_caption(layout.explained)
    assert re.findall(r"\d+%", caption) == [f"{share:.0%}"]  # the one number it states


def test_the_caption_refuses_a_share_outside_0_to_1() -> None:
    with pytest.raises(InputError, match="variance_kept must be in 0–1"):
        theme_map_caption(1.5)
    with pytest.raises(InputError):
        theme_map_caption(float("nan"))
