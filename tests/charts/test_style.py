"""The shared look: the Okabe–Ito palette, aggregated inputs only, names made unique."""

from __future__ import annotations

import pandas as pd
import pytest

from talkthemes.charts import style as chart_style
from talkthemes.charts.style import FAMILY_COLOURS, OKABE_ITO, SERIES_COLOURS, unique_names
from talkthemes.charts.terms import term_chart
from talkthemes.errors import InputError


def test_palette_is_okabe_ito() -> None:
    # Okabe & Ito (2002), the eight colours of their colour-universal palette as
    # #RRGGBB — the values are commonly published; checked here from memory.
    assert OKABE_ITO == (
        "#E69F00",  # orange
        "#56B4E9",  # sky blue
        "#009E73",  # bluish green
        "#F0E442",  # yellow
        "#0072B2",  # blue
        "#D55E00",  # vermillion
        "#CC79A7",  # reddish purple
        "#000000",  # black
    )
    assert sorted(SERIES_COLOURS) == sorted(OKABE_ITO)
    assert SERIES_COLOURS[-1] == "#F0E442"  # yellow, weakest on white, last
    assert set(FAMILY_COLOURS.values()) <= set(OKABE_ITO)


def _terms(n: int) -> pd.DataFrame:
    return pd.DataFrame(
        {
            "term": [f"w{i}" for i in range(n)],
            "relevance": [1.0] * n,
            "weight": [0.1] * n,
            "corpus_weight": [0.05] * n,
            "rank": range(1, n + 1),
        }
    )


def test_charts_refuse_unaggregated_sizes(monkeypatch: pytest.MonkeyPatch) -> None:
    term_chart(_terms(5), "fits")
    monkeypatch.setattr(chart_style, "MAX_CHART_ROWS", 5)
    with pytest.raises(InputError, match=r"6 rows is more than a chart takes.*aggregate first"):
        term_chart(_terms(6), "too many")


def test_charts_say_which_column_is_missing() -> None:
    with pytest.raises(InputError, match="term_chart: terms is missing column\\(s\\) 'rank'"):
        term_chart(_terms(3).drop(columns=["rank"]), "x")
    with pytest.raises(InputError, match="term_chart: terms has no rows"):
        term_chart(_terms(0), "x")
    with pytest.raises(InputError, match="must be a pandas DataFrame, not list"):
        term_chart([], "x")  # type: ignore[arg-type]


def test_a_repeated_name_gets_its_theme_id() -> None:
    frame = pd.DataFrame({"theme_id": [4, 9, 4, 2], "name": ["Bills", "Bills", "Bills", "Moves"]})
    assert unique_names(frame).tolist() == ["Bills (#4)", "Bills (#9)", "Bills (#4)", "Moves"]
