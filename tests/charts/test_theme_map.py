"""The theme map: named tiles on the similarity layout, links only under the cut-off, names
that never print over each other, text readable on its fill (WCAG 2.1, 1.4.3), and a
caption stating what the layout kept."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
import tests.charts.spec as vl
from tests.support.layout import retained_share

from talkthemes.charts.style import BLUE, VERMILLION
from talkthemes.charts.theme_map import (
    BOILERPLATE_INK,
    TILE_STYLES,
    contrast_ratio,
    grid_cells,
    theme_map_caption,
    theme_map_chart,
    tile_geometry,
)
from talkthemes.errors import InputError
from talkthemes.metrics.layout import js_distance_matrix
from talkthemes.view.theme_map import theme_layout, theme_links


def _themes(k: int = 4, seed: int = 0, long: bool = False) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    words = ["payment", "plans", "late", "fees", "modem", "router", "moving", "house"]
    names = [
        " · ".join(rng.choice(words, 6 if long else 2)) + (" and more words" * long)
        for _ in range(k)
    ]
    cov = rng.dirichlet(np.ones(k))
    return pd.DataFrame(
        {
            "theme_id": np.arange(k) * 3 + 1,
            "x": rng.normal(size=k),
            "y": rng.normal(size=k),
            "coverage": cov,
            "name": names,
            "labelled": rng.random(k) < 0.5,
            "hidden": rng.random(k) < 0.2,
            "boilerplate_like": rng.random(k) < 0.2,
            "trend": rng.choice(["rising", "falling", "steady"], k),
            "change": rng.normal(scale=3, size=k),
        }
    )


def _rows(spec: dict) -> list[dict]:
    tiles = vl.by_mark(spec, "rect")[0]
    return vl.values(spec, tiles, spec)


# --------------------------------------------------------------------------- the look


def test_tiles_not_circles_and_no_size_legend() -> None:
    spec = theme_map_chart(_themes(6), selected=4).to_dict()
    assert not vl.by_mark(spec, "circle") and not vl.by_mark(spec, "point")
    for unit in vl.units(spec):
        assert "size" not in unit.get("encoding", {})
        assert unit.get("encoding", {}).get("fillOpacity") is None  # nothing see-through
    params = vl.params(spec)
    assert params["theme"]["select"]["fields"] == ["theme_id"]
    assert params["theme"]["value"] == [{"theme_id": 4}]
    rows = {r["theme_id"]: r for r in _rows(spec)}
    # the selected tile is outlined, its fill is that of its status like any other
    assert rows[4]["sel"] and rows[4]["fill"] == TILE_STYLES[rows[4]["status"]]["fill"]
    tiles = vl.by_mark(spec, "rect")[0]["encoding"]
    assert tiles["strokeWidth"]["condition"][0]["test"] == "datum.sel"


def test_the_static_map_has_no_selection_and_asks_for_no_click() -> None:
    spec = theme_map_chart(_themes(5), interactive=False).to_dict()
    assert "theme" not in vl.params(spec)
    assert "click" not in " ".join(spec["title"]["subtitle"]).lower()


def test_share_is_a_number_and_a_bar_and_the_trend_an_arrow_in_its_colour() -> None:
    frame = _themes(3)
    frame["coverage"] = [0.5, 0.25, 0.25]
    frame["trend"] = ["rising", "falling", "steady"]
    frame["change"] = [4.2, -3.0, 0.4]
    frame["hidden"] = False
    spec = theme_map_chart(frame).to_dict()
    rows = {r["theme_id"]: r for r in _rows(spec)}
    assert rows[1]["fact"] == "leads 50.0% ▲ +4.2 pp" and rows[1]["bar"] == BLUE
    assert rows[4]["fact"] == "leads 25.0% ▼ -3.0 pp" and rows[4]["bar"] == VERMILLION
    assert rows[7]["fact"] == "leads 25.0%"
    full = rows[1]["bx1"] - rows[1]["tx"]
    assert rows[4]["bx1"] - rows[4]["tx"] == pytest.approx(full / 2)  # bar ∝ share led


def test_a_boilerplate_like_theme_carries_the_suggestion() -> None:
    frame = _themes(3)
    frame["boilerplate_like"] = [True, False, True]
    frame["hidden"] = [False, False, True]  # hidden already: no suggestion
    rows = {r["theme_id"]: r for r in _rows(theme_map_chart(frame).to_dict())}
    assert [rows[t]["note"] for t in (1, 4, 7)] == ["boilerplate? hide", "", ""]


@pytest.mark.parametrize("status", list(TILE_STYLES))
def test_text_on_every_fill_passes_wcag_aa(status: str) -> None:
    """WCAG 2.1 success criterion 1.4.3: text needs a contrast ratio of at least 4.5:1."""
    style = TILE_STYLES[status]
    for ink in (style["ink"], style["soft"], BOILERPLATE_INK):
        assert contrast_ratio(ink, style["fill"]) >= 4.5, (status, ink)


def test_every_text_drawn_on_the_map_passes_wcag_aa() -> None:
    spec = theme_map_chart(_themes(12, seed=3)).to_dict()
    for row in _rows(spec):
        assert contrast_ratio(row["ink"], row["fill"]) >= 4.5
        assert contrast_ratio(row["soft"], row["fill"]) >= 4.5
        if row["note"]:
            assert contrast_ratio(row["note_ink"], row["fill"]) >= 4.5


def test_contrast_ratio_matches_the_wcag_definition() -> None:
    # WCAG 2.1 definition: black on white is 21:1, a colour on itself 1:1; the value for
    # #777777 on white (4.48:1) is the commonly quoted just-failing grey (common practice).
    assert contrast_ratio("#000000", "#ffffff") == pytest.approx(21.0)
    assert contrast_ratio("#0072B2", "#0072B2") == pytest.approx(1.0)
    assert contrast_ratio("#777777", "#ffffff") == pytest.approx(4.48, abs=0.01)


# --------------------------------------------------------------------------- layout


def _boxes(spec: dict) -> list[tuple[float, float, float, float, str]]:
    """Every drawn text's box in pixels, as Vega lays it out (width estimated)."""
    out = []
    scene = vl.scene(spec)
    for name, items in scene.of_type("text"):
        ox, oy = scene.offsets[name]
        for it in items:
            text = it.get("text") or ""
            if not text:
                continue
            size = float(it.get("fontSize", 11))
            w = min(len(text) * size * 0.62, float(it.get("limit") or 1e9))
            x = ox + float(it["x"])
            x0 = {"left": x, "right": x - w, "center": x - w / 2}[it.get("align", "left")]
            y = oy + float(it["y"])
            y0 = {"top": y, "bottom": y - size * 1.2, "middle": y - size * 0.6}[
                it.get("baseline", "top")
            ]
            out.append((x0, y0, x0 + w, y0 + size * 1.2, text))
    return out


@pytest.mark.parametrize(("k", "seed"), [(5, 0), (16, 1), (30, 2)])
def test_names_never_overlap_and_stay_inside_their_tiles(k: int, seed: int) -> None:
    frame = _themes(k, seed=seed, long=True)
    frame["x"] = 0.0  # every theme piled on one spot of the layout
    frame.loc[0, "x"] = 1e-9
    spec = theme_map_chart(frame, width=880).to_dict()
    boxes = _boxes(spec)
    assert len(boxes) >= 2 * k
    for i, a in enumerate(boxes):
        for b in boxes[i + 1 :]:
            apart = a[2] <= b[0] or b[2] <= a[0] or a[3] <= b[1] or b[3] <= a[1]
            assert apart, (a, b)
    tiles = [(r["x0"], r["y0"], r["x1"], r["y1"]) for r in _rows(spec)]
    scene = vl.scene(spec)
    (name, _), *_ = scene.of_type("rect")
    ox, oy = scene.offsets[name]
    for x0, y0, x1, y1, text in boxes:
        assert any(
            tx0 + ox <= x0 and x1 <= tx1 + ox + 0.5 and ty0 + oy <= y0 and y1 <= ty1 + oy + 0.5
            for tx0, ty0, tx1, ty1 in tiles
        ), text


def test_the_map_uses_the_width_it_is_given() -> None:
    for width in (600, 880, 940):
        scene = vl.scene(theme_map_chart(_themes(12), width=width).to_dict())
        x0, _, x1, _ = scene.groups["root"]
        assert x1 - x0 == pytest.approx(width, abs=1)  # the plot spans the width asked for
        assert scene.width <= width + 2 * 16 + 6  # plus the padding, nothing squeezed
        columns, tile_w = tile_geometry(width, 12)
        assert 170 <= tile_w <= 240 and columns >= 3


def test_grid_cells_keep_the_arrangement_and_give_each_theme_its_own_cell() -> None:
    # already on a 3 × 2 grid: each theme keeps its place (up on the layout = top row)
    x = np.array([0.0, 1.0, 2.0, 0.0, 1.0, 2.0])
    y = np.array([1.0, 1.0, 1.0, 0.0, 0.0, 0.0])
    col, row = grid_cells(x, y, 3)
    assert col.tolist() == [0, 1, 2, 0, 1, 2] and row.tolist() == [0, 0, 0, 1, 1, 1]
    rng = np.random.default_rng(4)
    x, y = rng.normal(size=25), rng.normal(size=25)
    col, row = grid_cells(x, y, 5)
    assert len(set(zip(col.tolist(), row.tolist(), strict=True))) == 25  # one theme a cell
    # two far-apart groups of themes stay apart: left group left of the right group
    x = np.r_[rng.normal(-10, 0.1, 6), rng.normal(10, 0.1, 6)]
    col, _ = grid_cells(x, rng.normal(size=12), 4)
    assert col[:6].max() < col[6:].min()


# --------------------------------------------------------------------------- links


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_links_join_only_pairs_under_the_cut_off(seed: int) -> None:
    rng = np.random.default_rng(seed)
    topic_terms = rng.dirichlet(np.full(60, 0.2), size=14)
    d = js_distance_matrix(topic_terms)
    ids = list(range(100, 114))
    links, cutoff = theme_links(d, ids)
    pairs = np.sort(d[np.triu_indices(14, k=1)])  # 91 pairs: the closest 19 may link
    assert cutoff == pytest.approx((pairs[18] + pairs[19]) / 2)
    off = d[~np.eye(14, dtype=bool)]
    assert not links.empty and (links["distance"] < cutoff).all()
    for a, b, dist in links.itertuples(index=False):
        assert d[ids.index(a), ids.index(b)] == pytest.approx(dist)
        nearest_a = np.argsort(d[ids.index(a)])[1:3]
        nearest_b = np.argsort(d[ids.index(b)])[1:3]
        assert ids.index(b) in nearest_a or ids.index(a) in nearest_b  # a nearest neighbour
    tight, _ = theme_links(d, ids, cutoff=float(off.min()))
    assert tight.empty  # nothing is strictly under the smallest distance
    frame = _themes(14).assign(theme_id=ids)
    spec = theme_map_chart(frame, links).to_dict()
    drawn = vl.values(spec, vl.by_mark(spec, "rule")[0])
    assert len(drawn) == len(links) and all(r["distance"] < cutoff for r in drawn)


def test_a_link_to_an_unknown_theme_is_refused() -> None:
    links = pd.DataFrame({"theme_a": [1], "theme_b": [99], "distance": [0.5]})
    with pytest.raises(InputError, match="link 1–99"):
        theme_map_chart(_themes(3), links)


def test_theme_map_rejects_bad_coverage() -> None:
    bad = _themes()
    bad.loc[1, "coverage"] = 1.7
    with pytest.raises(InputError, match=r"row 1: coverage 1\.7"):
        theme_map_chart(bad)


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
