"""Chart specifications, read through ``chart.to_dict()`` (never pixels), plus one render."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import altair as alt
import numpy as np
import pandas as pd
import pytest

from talkthemes import charts
from talkthemes.charts import (
    BLACK,
    BLUE,
    FAMILY_COLOURS,
    OKABE_ITO,
    ORANGE,
    SERIES_COLOURS,
    SKY_BLUE,
    TERM_CAPTION,
    VERMILLION,
    drift_chart,
    movers_chart,
    segment_chart,
    sweep_chart,
    term_chart,
    theme_map_caption,
    theme_map_chart,
    theme_name,
    trend_chart,
)
from talkthemes.errors import InputError
from talkthemes.trends import lead_share_by_period, period_start

# --------------------------------------------------------------------------- helpers


def _units(spec: dict[str, Any]) -> Iterator[dict[str, Any]]:
    """Every single-mark view in a (layered / concatenated) spec."""
    if "mark" in spec:
        yield spec
    for key in ("layer", "concat", "hconcat", "vconcat"):
        for child in spec.get(key, []):
            yield from _units(child)


def _mark(unit: dict[str, Any]) -> str:
    mark = unit["mark"]
    return mark if isinstance(mark, str) else mark["type"]


def _by_mark(spec: dict[str, Any], mark: str) -> list[dict[str, Any]]:
    return [u for u in _units(spec) if _mark(u) == mark]


def _values(spec: dict[str, Any], unit: dict[str, Any], parent: dict[str, Any] | None = None):
    data = unit.get("data") or (parent or {}).get("data")
    return spec["datasets"][data["name"]]


def _params(spec: dict[str, Any]) -> dict[str, dict[str, Any]]:
    found: dict[str, dict[str, Any]] = {}

    def walk(node: dict[str, Any]) -> None:
        for p in node.get("params", []):
            found[p["name"]] = p
        for key in ("layer", "concat", "hconcat", "vconcat"):
            for child in node.get(key, []):
                walk(child)

    walk(spec)
    return found


def _colours_in(spec: dict[str, Any]) -> set[str]:
    """Every colour a spec's data marks use: scale ranges, fixed values and conditions."""
    out: set[str] = set()
    for unit in _units(spec):
        mark = unit["mark"] if isinstance(unit["mark"], dict) else {}
        for key in ("color", "fill", "stroke"):
            if isinstance(mark.get(key), str):
                out.add(mark[key])
        for channel in ("color", "fill", "stroke"):
            enc = unit.get("encoding", {}).get(channel)
            if not enc:
                continue
            rng = enc.get("scale", {}).get("range") if isinstance(enc, dict) else None
            if isinstance(rng, list):
                out.update(rng)
            if isinstance(enc.get("value"), str):
                out.add(enc["value"])
            for cond in enc.get("condition", []) if isinstance(enc.get("condition"), list) else []:
                if isinstance(cond.get("value"), str):
                    out.add(cond["value"])
    return out


_NEUTRALS = {"#ffffff", "#2b2b2b", "#6b6b6b", "#c8c8c8"}  # paper and ink, not data colours


def _assert_palette(spec: dict[str, Any]) -> None:
    used = _colours_in(spec) - _NEUTRALS
    assert used, "no data colours found"
    assert used <= {c.upper() for c in OKABE_ITO} | set(OKABE_ITO), used


def _cells(families=("lda", "nmf"), ks=(4, 8, 12), seeds=(0, 1, 2)) -> pd.DataFrame:
    rows = []
    for fam in families:
        for k in ks:
            for s in seeds:
                rows.append(
                    {
                        "family": fam,
                        "k": k,
                        "seed": s,
                        "c_npmi": 0.1 + 0.01 * k + 0.001 * s,
                        "c_v": 0.4 + 0.005 * k,
                        "stability": 0.9 - 0.01 * k,
                        "perplexity": 900.0 - k if fam == "lda" else np.nan,
                        "reconstruction_error": 30.0 - k if fam == "nmf" else np.nan,
                        "fit_seconds": 0.5 * k,
                    }
                )
    return pd.DataFrame(rows)


# --------------------------------------------------------------------------- palette, names


def test_palette_is_okabe_ito() -> None:
    assert OKABE_ITO == (
        "#E69F00",
        "#56B4E9",
        "#009E73",
        "#F0E442",
        "#0072B2",
        "#D55E00",
        "#CC79A7",
        "#000000",
    )
    assert sorted(SERIES_COLOURS) == sorted(OKABE_ITO)
    assert SERIES_COLOURS[-1] == "#F0E442"  # yellow, weakest on white, last
    assert set(FAMILY_COLOURS.values()) <= set(OKABE_ITO)


def test_theme_name_label_or_three_terms() -> None:
    assert theme_name("Payment plans", ["pay", "plan", "month"]) == "Payment plans"
    assert (
        theme_name("  ", ["late_fee", "charge", "waive", "refund"]) == "late fee · charge · waive"
    )
    assert theme_name(None, ["modem", "reset"]) == "modem · reset"
    with pytest.raises(InputError, match="label or at least one top term"):
        theme_name("", [])


def test_theme_map_caption_in_plain_words() -> None:
    text = theme_map_caption(0.834)
    assert text == (
        "Themes that sit close together use similar words. The two axes keep 83% of the "
        "differences between themes; sizes show how many transcripts each theme leads."
    )
    with pytest.raises(InputError):
        theme_map_caption(1.5)


# --------------------------------------------------------------------------- sweep


@pytest.fixture(scope="module")
def sweep_spec() -> dict[str, Any]:
    """The sweep chart of two families, three K, three seeds, K 8 and 12 recommended."""
    return sweep_chart(_cells(), {"lda": 8, "nmf": 12}).to_dict()


def test_sweep_chart_panels_lines_bands_and_selection(sweep_spec: dict[str, Any]) -> None:
    spec = sweep_spec
    panels = spec["concat"]
    titles = [p["title"]["text"] for p in panels]
    assert titles == [
        "Coherence (C_NPMI, higher is better)",
        "Coherence (C_V, higher is better)",
        "Stability across seeds (average Jaccard, higher is better)",
        "Held-out perplexity (LDA only, lower is better)",
        "Reconstruction error (NMF only, lower is better)",
        "Fit time (lower is faster)",
    ]
    assert spec["resolve"]["scale"]["y"] == "independent"
    first = panels[0]
    marks = [_mark(u) for u in first["layer"]]
    assert marks[:3] == ["area", "line", "point"]
    area, line = first["layer"][0], first["layer"][1]
    assert area["encoding"]["y"]["field"] == "lo" and area["encoding"]["y2"]["field"] == "hi"
    assert line["encoding"]["x"]["field"] == "k" and line["encoding"]["x"]["type"] == "quantitative"
    assert line["encoding"]["y"]["field"] == "mean"
    assert line["encoding"]["color"]["field"] == "family_name"
    assert line["encoding"]["color"]["scale"] == {
        "domain": ["LDA", "NMF"],
        "range": [BLUE, VERMILLION],
    }
    # mean across seeds and min–max band, aggregated before it reaches the chart
    rows = _values(spec, first["layer"][1], first)
    lda4 = next(r for r in rows if r["family"] == "lda" and r["k"] == 4)
    assert lda4["mean"] == pytest.approx(0.141)
    assert (lda4["lo"], lda4["hi"], lda4["seeds"]) == (pytest.approx(0.14), pytest.approx(0.142), 3)
    assert len(rows) == 6  # 2 families × 3 K, not one row per seed
    params = _params(spec)
    assert params["cell"]["select"]["type"] == "point"
    assert params["cell"]["select"]["fields"] == ["family", "k"]
    _assert_palette(spec)


def test_sweep_chart_marks_the_recommended_k(sweep_spec: dict[str, Any]) -> None:
    spec = sweep_spec
    first = spec["concat"][0]
    rules = [u for u in first["layer"] if _mark(u) == "rule"]
    assert len(rules) == 1
    rule_rows = _values(spec, rules[0])
    assert {(r["family"], r["k"]) for r in rule_rows} == {("lda", 8), ("nmf", 12)}
    texts = [u for u in first["layer"] if _mark(u) == "text"]
    labels = {_values(spec, t)[0]["label"]: t["mark"]["color"] for t in texts}
    assert labels == {"K = 8": FAMILY_COLOURS["lda"], "K = 12": FAMILY_COLOURS["nmf"]}
    rings = [u for u in first["layer"] if _mark(u) == "point" and u["mark"].get("filled") is False]
    assert {(r["family"], r["k"]) for r in _values(spec, rings[0])} == {("lda", 8), ("nmf", 12)}
    # Panels of a metric one family lacks mark only the other family's K.
    perplexity = spec["concat"][3]
    rule = next(u for u in perplexity["layer"] if _mark(u) == "rule")
    assert [r["family"] for r in _values(spec, rule)] == ["lda"]
    assert "LDA K = 8, NMF K = 12" in " ".join(spec["title"]["subtitle"])


def test_sweep_chart_without_recommendation_has_no_rules() -> None:
    spec = sweep_chart(_cells()).to_dict()
    assert not _by_mark(spec, "rule") and not _by_mark(spec, "text")


def test_sweep_chart_skips_missing_metrics() -> None:
    cells = _cells(families=("lda",)).drop(columns=["c_v", "stability", "fit_seconds"])
    cells["cell_id"] = "not a metric"  # other columns are ignored
    cells["peak_memory_mb"] = 300.0
    spec = sweep_chart(cells).to_dict()
    titles = [p["title"]["text"] for p in spec["concat"]]
    # c_v, stability, fit_seconds absent; reconstruction_error is all NaN for LDA alone
    assert titles == [
        "Coherence (C_NPMI, higher is better)",
        "Held-out perplexity (LDA only, lower is better)",
        "Peak memory (lower is lighter)",
    ]


def test_sweep_chart_single_seed_and_single_family() -> None:
    cells = _cells(families=("nmf",), seeds=(0,))
    spec = sweep_chart(cells, {"nmf": 8, "lda": 4}).to_dict()
    assert not _by_mark(spec, "area")  # no band without a seed spread
    line = _by_mark(spec, "line")[0]
    assert line["encoding"]["color"]["scale"] == {"domain": ["NMF"], "range": [VERMILLION]}
    rule = _by_mark(spec, "rule")[0]
    assert [r["family"] for r in _values(spec, rule)] == ["nmf"]  # absent family ignored


def test_sweep_chart_bad_input() -> None:
    with pytest.raises(InputError, match="missing column\\(s\\) 'seed'"):
        sweep_chart(_cells().drop(columns=["seed"]))
    with pytest.raises(InputError, match="no metric values"):
        sweep_chart(_cells()[["family", "k", "seed"]])
    bad = _cells()
    bad.loc[4, "family"] = "lsa"
    with pytest.raises(InputError, match="row 4: family 'lsa'"):
        sweep_chart(bad)


# --------------------------------------------------------------------------- theme map


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
    params = _params(spec)
    assert params["theme"]["select"]["type"] == "point"
    assert params["theme"]["select"]["fields"] == ["theme_id"]
    assert "value" not in params["theme"]
    circles = _by_mark(spec, "circle")[0]
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
    text = _by_mark(spec, "text")[-1]
    assert text["encoding"]["text"]["field"] == "name"
    assert text["encoding"]["y"]["field"] == "label_y"
    _assert_palette(spec)


def test_theme_map_keeps_distances_unstretched_and_labels_below() -> None:
    width, height = 500, 300
    spec = theme_map_chart(_themes(), width=width, height=height).to_dict()
    enc = _by_mark(spec, "circle")[0]["encoding"]
    (x0, x1), (y0, y1) = enc["x"]["scale"]["domain"], enc["y"]["scale"]["domain"]
    assert (x1 - x0) / width == pytest.approx((y1 - y0) / height)
    rows = spec["datasets"][spec["data"]["name"]]
    assert all(r["label_y"] < r["y"] for r in rows)
    # the biggest circle's label sits further below its centre than the smallest's
    gap = {r["theme_id"]: r["y"] - r["label_y"] for r in rows}
    assert gap[0] > gap[5]


def test_theme_map_highlights_the_selected_theme_and_fades_hidden() -> None:
    spec = theme_map_chart(_themes(), selected=2).to_dict()
    assert _params(spec)["theme"]["value"] == [{"theme_id": 2}]
    enc = _by_mark(spec, "circle")[0]["encoding"]
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


# --------------------------------------------------------------------------- terms


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
    assert spec["title"]["text"] == "Payment plans"
    assert " ".join(spec["title"]["subtitle"]) == TERM_CAPTION
    rule, points, text = (
        _by_mark(spec, "rule")[0],
        _by_mark(spec, "point")[0],
        _by_mark(spec, "text")[0],
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
    long = _values(spec, points)
    assert len(long) == 8
    lifts = {r["term"]: r["lift_text"] for r in _values(spec, text)}
    assert lifts == {"late_fee": "×25", "payment": "×6.0", "plan": "×4.0", "month": "×0.5"}
    assert text["encoding"]["text"]["field"] == "lift_text"
    _assert_palette(spec)


def test_term_chart_needs_positive_weights() -> None:
    bad = _terms()
    bad.loc[2, "corpus_weight"] = 0.0
    with pytest.raises(InputError, match="row 2 \\('month'\\): corpus_weight must be positive"):
        term_chart(bad, "x")


# --------------------------------------------------------------------------- over time


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
    units = list(_units(main))
    assert [_mark(u) for u in units] == ["area", "line", "point"]
    band, line, point = units
    assert band["encoding"]["y"]["field"] == "lo" and band["encoding"]["y2"]["field"] == "hi"
    assert line["encoding"]["y"]["field"] == "share"
    assert line["encoding"]["y"]["axis"]["format"] == ".0%"
    assert line["encoding"]["x"]["field"] == "period"
    assert line["encoding"]["x"]["type"] == "temporal"
    assert line["mark"]["invalid"] == "break-paths-filter-domains"  # empty periods break lines
    assert line["encoding"]["color"]["field"] == "theme"
    params = _params(spec)
    assert params["themes"]["bind"] == "legend"
    assert params["themes"]["select"]["fields"] == ["theme"]
    assert params["themes"]["value"] == [{"theme": "Late fees"}]
    assert line["encoding"]["opacity"]["condition"][0]["param"] == "themes"
    tooltip = {t["field"]: t for t in point["encoding"]["tooltip"]}
    assert tooltip["share"]["format"] == ".1%" and "n" in tooltip and "interval" in tooltip
    bars = _by_mark(volume, "bar")[0]
    assert bars["encoding"]["y"]["field"] == "n"
    assert len(_values(spec, bars)) == 3  # one bar per week
    assert bars["encoding"]["x"]["title"] == "Week starting"
    _assert_palette(spec)


def test_trend_chart_many_rows_with_default_transformer() -> None:
    assert alt.data_transformers.active == "default"
    many = _trend(n_weeks=120, names=[f"t{i}" for i in range(45)])  # 5,400 rows > 5,000
    spec = trend_chart(many).to_dict()
    line = _by_mark(spec, "line")[0]
    assert len(_values(spec, line, spec["vconcat"][0])) == len(many)
    colours = line["encoding"]["color"]["scale"]["range"]
    assert len(colours) == 45 and set(colours) <= set(OKABE_ITO)


def test_trend_chart_monthly_axis_and_bad_input() -> None:
    monthly = _trend()
    monthly["period"] = pd.to_datetime(["2024-01-01", "2024-02-01", "2024-03-01"]).repeat(3)
    spec = trend_chart(monthly).to_dict()
    assert _by_mark(spec, "bar")[0]["encoding"]["x"]["title"] == "Month"
    forced = trend_chart(monthly, freq="week").to_dict()
    assert _by_mark(forced, "bar")[0]["encoding"]["x"]["title"] == "Week starting"
    doubled = pd.concat([_trend(), _trend()])
    with pytest.raises(InputError, match="not one per transcript"):
        trend_chart(doubled)
    with pytest.raises(InputError, match="not in the data: \\[9\\]"):
        trend_chart(_trend(), highlight=[9])


def test_charts_refuse_unaggregated_sizes(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(charts.style, "MAX_CHART_ROWS", 5)
    with pytest.raises(InputError, match="aggregate first"):
        trend_chart(_trend())


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
    rule, point = _by_mark(spec, "rule")[0], _by_mark(spec, "point")[0]
    layer_enc = spec["encoding"] if "encoding" in spec else point["encoding"]
    enc = {**layer_enc, **point["encoding"]}
    assert enc["y"]["field"] == "theme" and enc["y"]["sort"] == ["Modem", "Late fees"]
    assert enc["yOffset"]["field"] == "segment"
    assert enc["color"]["field"] == "segment" and enc["color"]["title"] == "queue"
    assert point["encoding"]["x"]["field"] == "share"
    assert point["encoding"]["x"]["axis"]["format"] == ".0%"
    assert rule["encoding"]["x"]["field"] == "lo" and rule["encoding"]["x2"]["field"] == "hi"
    _assert_palette(spec)


def test_movers_chart_diverging_and_ranked() -> None:
    mv = pd.DataFrame(
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
    spec = movers_chart(mv).to_dict()
    bar = _by_mark(spec, "bar")[0]
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
    rows = {r["theme"]: r for r in _values(spec, bar, spec)}
    assert rows["Outage"]["shares"] == "5.0% → 15.0%"
    assert rows["Outage"]["clear"] and not rows["Upgrade"]["clear"]
    assert bar["encoding"]["opacity"]["condition"][0]["test"] == "datum.clear"
    whisker = next(u for u in _by_mark(spec, "rule") if u["encoding"]["x"]["field"] == "lo")
    assert whisker["encoding"]["x2"]["field"] == "hi"
    _assert_palette(spec)


def test_drift_chart_orders_new_carried_retired() -> None:
    drift = pd.DataFrame(
        {
            "theme_id": [1, 2, 3, 4, 5],
            "name": ["Late fees", "Outage", "Modem", "Old promo", "Roaming"],
            "status": ["carried", "new", "carried", "retired", "carried"],
            "distance": [0.1, np.nan, 0.4, np.nan, 0.25],
            "coverage_before": [0.2, np.nan, 0.3, 0.1, 0.4],
            "coverage_after": [0.25, 0.1, 0.2, np.nan, 0.45],
        }
    )
    spec = drift_chart(drift).to_dict()
    left, right = spec["hconcat"]
    assert spec["resolve"]["scale"]["y"] == "shared"
    heads = next(u for u in _units(left) if _mark(u) == "point")
    assert heads["encoding"]["y"]["sort"] == [
        "Outage",
        "Modem",
        "Roaming",
        "Late fees",
        "Old promo",
    ]
    assert heads["encoding"]["x"]["field"] == "distance"
    assert heads["encoding"]["x"]["scale"]["domain"] == [0.0, 1.0]
    assert heads["encoding"]["color"]["scale"]["domain"] == ["new", "carried", "retired"]
    words = next(u for u in _units(left) if _mark(u) == "text")
    assert words["encoding"]["text"]["field"] == "status"
    fields = {u["encoding"]["x"]["field"] for u in _units(right)}
    assert fields == {"coverage_before", "coverage_after"}
    _assert_palette(spec)
    bad = drift.assign(status=["carried", "new", "kept", "retired", "carried"])
    with pytest.raises(InputError, match="row 2: status 'kept'"):
        drift_chart(bad)


# --------------------------------------------------------------------------- render


def test_a_chart_compiles_and_renders_to_png() -> None:
    vl_convert = pytest.importorskip("vl_convert")
    png = vl_convert.vegalite_to_png(trend_chart(_trend(), highlight=[0]).to_json())
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    assert len(png) > 10_000


def test_theme_map_labels_never_print_over_each_other() -> None:
    from talkthemes.charts.theme_map import _place_labels

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
    texts = [layer for layer in spec["layer"] if _mark(layer) == "text"]
    assert {t["mark"]["align"] for t in texts} == {"center", "left", "right"}
