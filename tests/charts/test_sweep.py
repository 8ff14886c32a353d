"""The Choose K chart, read through its spec: panels, mean and seed band, recommended K."""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
import pytest
import tests.charts.spec as vl

from talkthemes.charts.style import BLUE, FAMILY_COLOURS, VERMILLION
from talkthemes.charts.sweep import sweep_chart
from talkthemes.errors import InputError


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
    marks = [vl.mark(u) for u in first["layer"]]
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
    rows = vl.values(spec, first["layer"][1], first)
    lda4 = next(r for r in rows if r["family"] == "lda" and r["k"] == 4)
    assert lda4["mean"] == pytest.approx(0.141)
    assert (lda4["lo"], lda4["hi"], lda4["seeds"]) == (pytest.approx(0.14), pytest.approx(0.142), 3)
    assert len(rows) == 6  # 2 families × 3 K, not one row per seed
    params = vl.params(spec)
    assert params["cell"]["select"]["type"] == "point"
    assert params["cell"]["select"]["fields"] == ["family", "k"]
    vl.assert_palette(spec)


def test_sweep_chart_marks_the_recommended_k(sweep_spec: dict[str, Any]) -> None:
    spec = sweep_spec
    first = spec["concat"][0]
    rules = [u for u in first["layer"] if vl.mark(u) == "rule"]
    assert len(rules) == 1
    rule_rows = vl.values(spec, rules[0])
    assert {(r["family"], r["k"]) for r in rule_rows} == {("lda", 8), ("nmf", 12)}
    texts = [u for u in first["layer"] if vl.mark(u) == "text"]
    labels = {vl.values(spec, t)[0]["label"]: t["mark"]["color"] for t in texts}
    assert labels == {"K = 8": FAMILY_COLOURS["lda"], "K = 12": FAMILY_COLOURS["nmf"]}
    rings = [
        u for u in first["layer"] if vl.mark(u) == "point" and u["mark"].get("filled") is False
    ]
    assert {(r["family"], r["k"]) for r in vl.values(spec, rings[0])} == {("lda", 8), ("nmf", 12)}
    # Panels of a metric one family lacks mark only the other family's K.
    perplexity = spec["concat"][3]
    rule = next(u for u in perplexity["layer"] if vl.mark(u) == "rule")
    assert [r["family"] for r in vl.values(spec, rule)] == ["lda"]
    assert "LDA K = 8, NMF K = 12" in " ".join(spec["title"]["subtitle"])


def test_sweep_chart_without_recommendation_has_no_rules() -> None:
    spec = sweep_chart(_cells()).to_dict()
    assert not vl.by_mark(spec, "rule") and not vl.by_mark(spec, "text")


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
    assert not vl.by_mark(spec, "area")  # no band without a seed spread
    line = vl.by_mark(spec, "line")[0]
    assert line["encoding"]["color"]["scale"] == {"domain": ["NMF"], "range": [VERMILLION]}
    rule = vl.by_mark(spec, "rule")[0]
    assert [r["family"] for r in vl.values(spec, rule)] == ["nmf"]  # absent family ignored


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
