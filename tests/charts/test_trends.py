"""Themes over time, by segment, and the movers between two periods, read through the spec."""

from __future__ import annotations

import altair as alt
import numpy as np
import pandas as pd
import pytest
import tests.charts.spec as vl

from talkthemes.charts.style import BLUE, OKABE_ITO, VERMILLION
from talkthemes.charts.trends import movers_chart, segment_chart, trend_chart
from talkthemes.errors import InputError
from talkthemes.trends import lead_share_by_period, period_start


def _trend(n_weeks: int = 3, names=("Payment plans", "Late fees", "Moving house")) -> pd.DataFrame:
    rng = np.random.default_rng(0)
    k = len(names)
    lead = rng.integers(0, k, size=60 * n_weeks)
    dates = pd.Series(
        pd.Timestamp("2024-01-01") + pd.to_timedelta(np.repeat(np.arange(n_weeks) * 7, 60), "D")
    )
    return lead_share_by_period(lead, period_start(dates, "week"), k, n_boot=50, names=names)


def test_trend_chart_lines_bands_and_legend_selection() -> None:
    spec = trend_chart(_trend(), highlight=[1]).to_dict()
    main, volume = spec["vconcat"]
    units = list(vl.units(main))
    assert [vl.mark(u) for u in units] == ["area", "line", "point"]
    band, line, point = units
    assert band["encoding"]["y"]["field"] == "lo" and band["encoding"]["y2"]["field"] == "hi"
    assert line["encoding"]["y"]["field"] == "share"
    assert line["encoding"]["y"]["axis"]["format"] == ".0%"
    assert line["encoding"]["x"]["field"] == "period"
    assert line["encoding"]["x"]["type"] == "temporal"
    assert line["mark"]["invalid"] == "break-paths-filter-domains"  # empty periods break lines
    assert line["encoding"]["color"]["field"] == "theme"
    params = vl.params(spec)
    assert params["themes"]["bind"] == "legend"
    assert params["themes"]["select"]["fields"] == ["theme"]
    assert params["themes"]["value"] == [{"theme": "Late fees"}]
    assert line["encoding"]["opacity"]["condition"][0]["param"] == "themes"
    tooltip = {t["field"]: t for t in point["encoding"]["tooltip"]}
    assert tooltip["share"]["format"] == ".1%" and "n" in tooltip and "interval" in tooltip
    bars = vl.by_mark(volume, "bar")[0]
    assert bars["encoding"]["y"]["field"] == "n"
    assert len(vl.values(spec, bars)) == 3  # one bar per week
    assert bars["encoding"]["x"]["title"] == "Week starting"
    vl.assert_palette(spec)


def test_trend_chart_many_rows_with_default_transformer() -> None:
    assert alt.data_transformers.active == "default"
    many = _trend(n_weeks=120, names=[f"t{i}" for i in range(45)])  # 5,400 rows > 5,000
    spec = trend_chart(many).to_dict()
    line = vl.by_mark(spec, "line")[0]
    assert len(vl.values(spec, line, spec["vconcat"][0])) == len(many)
    colours = line["encoding"]["color"]["scale"]["range"]
    assert len(colours) == 45 and set(colours) <= set(OKABE_ITO)


def test_trend_chart_monthly_axis_and_bad_input() -> None:
    monthly = _trend()
    monthly["period"] = pd.to_datetime(["2024-01-01", "2024-02-01", "2024-03-01"]).repeat(3)
    spec = trend_chart(monthly).to_dict()
    assert vl.by_mark(spec, "bar")[0]["encoding"]["x"]["title"] == "Month"
    forced = trend_chart(monthly, freq="week").to_dict()
    assert vl.by_mark(forced, "bar")[0]["encoding"]["x"]["title"] == "Week starting"
    doubled = pd.concat([_trend(), _trend()])
    with pytest.raises(InputError, match="not one per transcript"):
        trend_chart(doubled)
    with pytest.raises(InputError, match="not in the data: \\[9\\]"):
        trend_chart(_trend(), highlight=[9])


def test_segment_chart_dot_plot() -> None:
    seg = pd.DataFrame(
        {
            "segment": ["billing", "billing", "tech", "tech"],
            "theme_id": [0, 1, 0, 1],
            "name": ["Late fees", "Modem", "Late fees", "Modem"],
            "share": [0.2, 0.6, 0.1, 0.8],
            "lo": [0.1, 0.5, 0.05, 0.7],
            "hi": [0.3, 0.7, 0.15, 0.9],
            "n": [50, 50, 40, 40],
        }
    )
    spec = segment_chart(seg, field="queue").to_dict()
    rule, point = vl.by_mark(spec, "rule")[0], vl.by_mark(spec, "point")[0]
    layer_enc = spec["encoding"] if "encoding" in spec else point["encoding"]
    enc = {**layer_enc, **point["encoding"]}
    assert enc["y"]["field"] == "theme" and enc["y"]["sort"] == ["Modem", "Late fees"]
    assert enc["yOffset"]["field"] == "segment"
    assert enc["color"]["field"] == "segment" and enc["color"]["title"] == "queue"
    assert point["encoding"]["x"]["field"] == "share"
    assert point["encoding"]["x"]["axis"]["format"] == ".0%"
    assert rule["encoding"]["x"]["field"] == "lo" and rule["encoding"]["x2"]["field"] == "hi"
    vl.assert_palette(spec)


def _movers() -> pd.DataFrame:
    return pd.DataFrame(
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


def test_movers_chart_diverging_and_ranked() -> None:
    mv = _movers()
    spec = movers_chart(mv).to_dict()
    bar = vl.by_mark(spec, "bar")[0]
    enc = {**spec.get("encoding", {}), **bar["encoding"]}
    assert enc["y"]["sort"] == ["Outage", "Upgrade", "Late fees"]  # rise on top, fall below
    assert bar["encoding"]["x"]["field"] == "change"
    assert bar["encoding"]["x2"] == {"datum": 0}
    assert bar["encoding"]["color"]["scale"] == {
        "domain": ["rose", "fell"],
        "range": [BLUE, VERMILLION],
    }
    assert "pp" in bar["encoding"]["x"]["axis"]["labelExpr"]
    domain = bar["encoding"]["x"]["scale"]["domain"]
    assert domain[0] == pytest.approx(-domain[1])  # symmetric around zero
    rows = {r["theme"]: r for r in vl.values(spec, bar, spec)}
    assert rows["Outage"]["shares"] == "5.0% → 15.0%"
    assert rows["Outage"]["clear"] and not rows["Upgrade"]["clear"]
    assert bar["encoding"]["opacity"]["condition"][0]["test"] == "datum.clear"
    whisker = next(u for u in vl.by_mark(spec, "rule") if u["encoding"]["x"]["field"] == "lo")
    assert whisker["encoding"]["x2"]["field"] == "hi"
    vl.assert_palette(spec)


def test_movers_bars_have_width_as_the_viewer_lays_them_out() -> None:
    """The viewer's page lays a chart out with its own defaults unless the spec says how:
    left to them, long theme names and the shares column took the whole width and the
    bars had none. Laid out as the page prepares it, each bar is as long as its change."""
    from streamlit.elements.vega_charts import _prepare_vega_lite_spec

    spec = _prepare_vega_lite_spec(
        movers_chart(_movers(), width=420, compared="from May to June").to_dict(),
        use_container_width=False,
    )
    assert spec["autosize"] == {"type": "pad", "contains": "padding"}
    assert "from May to June" in " ".join(spec["title"]["subtitle"])
    ((_, bars),) = vl.scene(spec).of_type("rect")[:1]
    widths = sorted(round(float(b["width"])) for b in bars)
    assert widths[0] > 0
    # the plot is 420 px wide for 2 × 14 pp (domain ±15.4, made nice to ±20): 10.5 px per pp
    per_pp = 420 / 40
    assert widths == pytest.approx(sorted([10 * per_pp, 8 * per_pp, 1 * per_pp]), abs=2)


@pytest.mark.parametrize("build", ["trend", "segments", "movers"])
def test_every_chart_keeps_its_size_wherever_it_is_drawn(build: str) -> None:
    chart = {
        "trend": lambda: trend_chart(_trend()),
        "segments": lambda: segment_chart(
            _trend().rename(columns={"period": "segment"}).assign(segment="a")
        ),
        "movers": lambda: movers_chart(_movers()),
    }[build]()
    assert chart.to_dict()["autosize"] == {"type": "pad", "contains": "padding"}
