"""Why this call: one small bar chart per theme, each term's pull on the call."""

from __future__ import annotations

import pandas as pd
import pytest
import tests.charts.spec as vl

from talkthemes.charts.style import BLUE
from talkthemes.charts.why import WHY_CAPTION, why_chart
from talkthemes.errors import InputError


def _frame() -> pd.DataFrame:
    rows = [
        (7, "Late fees", 0.62, 1, "late_fee", 3, 0.2, 0.6, 1),
        (7, "Late fees", 0.62, 1, "charge", 2, 0.1, 0.2, 2),
        (9, "Refunds", 0.21, 2, "refund", 1, 0.3, 0.75, 1),
    ]
    cols = ["theme_id", "name", "share", "theme_rank", "term", "count", "weight", "pull", "rank"]
    return pd.DataFrame(rows, columns=cols)


def test_one_panel_per_theme_largest_share_first_bars_by_pull() -> None:
    spec = why_chart(_frame()).to_dict()
    assert spec["title"]["text"] == "Why this call"
    assert " ".join(spec["title"]["subtitle"]) == WHY_CAPTION
    panels = spec["vconcat"]
    assert [p["title"]["text"] for p in panels] == [
        "Late fees · 62% of the call",
        "Refunds · 21% of the call",
    ]
    first_bars = next(u for u in vl.units(panels[0]) if vl.mark(u) == "bar")
    assert first_bars["encoding"]["y"]["sort"] == ["late fee", "charge"]  # largest pull on top
    assert first_bars["encoding"]["x"]["field"] == "pull"
    texts = next(u for u in vl.units(panels[0]) if vl.mark(u) == "text")
    assert [r["pull_text"] for r in vl.values(spec, texts, panels[0])] == ["60%", "20%"]
    assert vl.colours_in(spec) - vl.NEUTRALS == {BLUE}
    vl.assert_palette(spec)


def test_the_bars_are_drawn_with_their_lengths() -> None:
    scene = vl.scene(why_chart(_frame()).to_dict())
    rects = [item for _, items in scene.of_type("rect") for item in items if item.get("width")]
    widths = sorted(float(r["width"]) for r in rects)
    assert len(widths) == 3 and all(w > 1 for w in widths)
    # within the first panel the 60% bar is three times the 20% one
    first = sorted(float(r["width"]) for r in rects[:2])
    assert first[1] == pytest.approx(3 * first[0], rel=0.02)


def test_why_chart_refuses_what_it_cannot_draw() -> None:
    bad = _frame()
    bad.loc[1, "pull"] = 1.5
    with pytest.raises(InputError, match="row 1: pull must lie in"):
        why_chart(bad)
    with pytest.raises(InputError, match="missing column"):
        why_chart(_frame().drop(columns=["share"]))
