"""A theme's words: ranked by relevance, weight in the theme against weight overall."""

from __future__ import annotations

import pandas as pd
import pytest
import tests.charts.spec as vl

from talkthemes.charts.style import BLACK, BLUE
from talkthemes.charts.terms import term_chart
from talkthemes.errors import InputError


def _terms() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "term": ["plan", "late_fee", "month", "payment"],
            "relevance": [0.5, 0.9, 0.2, 0.7],
            "weight": [0.04, 0.05, 0.01, 0.06],
            "corpus_weight": [0.01, 0.002, 0.02, 0.01],
            "rank": [3, 1, 4, 2],
        }
    )


def test_term_chart_dumbbell_on_a_log_scale() -> None:
    spec = term_chart(_terms(), "Payment plans").to_dict()
    assert spec["title"]["text"] == "Payment plans"  # the name the caller passed
    rule, points, text = (
        vl.by_mark(spec, "rule")[0],
        vl.by_mark(spec, "point")[0],
        vl.by_mark(spec, "text")[0],
    )
    order = ["late_fee", "payment", "plan", "month"]  # by rank
    for unit in (rule, points, text):
        assert unit["encoding"]["y"]["field"] == "term"
        assert unit["encoding"]["y"]["sort"] == order
    assert rule["encoding"]["x"]["field"] == "corpus_weight"
    assert rule["encoding"]["x2"]["field"] == "weight"
    assert rule["encoding"]["x"]["scale"]["type"] == "log"
    assert points["encoding"]["x"]["scale"]["type"] == "log"
    # theme weight a filled blue dot, corpus weight a hollow black ring
    assert points["encoding"]["fill"]["scale"]["range"] == [BLUE, "#ffffff"]
    assert points["encoding"]["stroke"]["scale"]["range"] == [BLUE, BLACK]
    long = vl.values(spec, points)
    assert len(long) == 8
    lifts = {r["term"]: r["lift_text"] for r in vl.values(spec, text)}
    assert lifts == {"late_fee": "×25", "payment": "×6.0", "plan": "×4.0", "month": "×0.5"}
    assert text["encoding"]["text"]["field"] == "lift_text"
    vl.assert_palette(spec)


def test_term_chart_needs_positive_weights() -> None:
    bad = _terms()
    bad.loc[2, "corpus_weight"] = 0.0
    with pytest.raises(InputError, match="row 2 \\('month'\\): corpus_weight must be positive"):
        term_chart(bad, "x")


# --------------------------------------------------------------------------- over time
