"""The themes and sweep tables on an 80-column terminal (issue 11, item 13).

Every number printed is the JSON value rounded as shown (never cut: ``-0.8…``), no line is
wider than the terminal, and a theme's terms stay on one line, shortened at the end.
"""

from __future__ import annotations

import io
import json
import math
import re

import numpy as np
import pandas as pd
import pytest
from rich.console import Console
from rich.text import Text
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.preps import install_prep
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.cli._shared import SweepTable, ThemesTable
from talkthemes.workspace import Workspace

NUMBER = re.compile(r"(?<![\w.])-?\d[\d,]*(?:\.\d+)?%?")
THEME_ROW = re.compile(
    r"^\s*(?P<id>\d+)\s+(?P<name>.*?)\s+(?P<cov>\S+%)\s+(?P<share>\S+%)\s+(?P<npmi>\S+)"
    r"(?:\s\s+(?P<terms>.*?))?\s*$"
)
SWEEP_ROW = re.compile(r"^\s*(?P<family>lda|nmf)\s+(?P<k>\d+)(?: ★)?\s+(?P<rest>.*)$")


def render(renderable: object, width: int) -> str:
    console = Console(file=io.StringIO(), width=width)
    console.print(renderable)
    return console.file.getvalue()  # type: ignore[attr-defined]


def close(shown: str, value: float, decimals: int) -> bool:
    """``shown`` is ``value`` rounded to ``decimals`` places (a percentage when it ends in %)."""
    number = float(shown.rstrip("%").replace(",", ""))
    if shown.endswith("%"):
        number /= 100
        decimals += 2
    return abs(number - value) <= 0.5 * 10**-decimals + 1e-12


def decimals(shown: str) -> int:
    digits = shown.rstrip("%").split(".")
    return len(digits[1]) if len(digits) == 2 else 0


def check_width(text: str, width: int) -> None:
    assert max(Text(line).cell_len for line in text.splitlines()) <= width
    assert not re.search(r"(?<!\w)-?\d[\d,.]*…", text), "a number was cut"


# -- themes ---------------------------------------------------------------------------------
TERM_WORDS = ("payment", "plan", "arrears", "instalment", "direct_debit", "balance", "month")
LONG_NAME = "Payment plans and arrears for customers who moved"


def theme_rows(n: int, seed: int = 0) -> list[dict]:
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        rows.append(
            {
                "theme_id": 100 + i * 37,
                "name": LONG_NAME if i % 3 == 0 else f"theme {i}",
                "hidden": i == 2,
                "coverage": float(rng.uniform(0, 1)),
                "mean_share": float(rng.uniform(0, 1)),
                "coherence": {"c_npmi": float(rng.uniform(-0.999, 0.999))},
                "top_terms": [f"t{i}_{word}" for word in TERM_WORDS],
            }
        )
    return rows


def parse_themes(text: str) -> dict[int, dict[str, str]]:
    rows = {}
    for line in text.splitlines():
        m = THEME_ROW.match(line)
        if m and NUMBER.fullmatch(m["cov"]):
            rows[int(m["id"])] = m.groupdict()
    return rows


@pytest.mark.parametrize("width", [80, 100, 250])
def test_themes_table_numbers_whole_and_terms_on_one_line(width: int) -> None:
    themes = theme_rows(12)
    text = render(ThemesTable(themes), width)
    check_width(text, width)
    rows = parse_themes(text)
    assert set(rows) == {t["theme_id"] for t in themes}
    for t in themes:
        row = rows[t["theme_id"]]
        assert decimals(row["cov"]) == 1 and close(row["cov"], t["coverage"], 1)
        assert decimals(row["share"]) == 1 and close(row["share"], t["mean_share"], 1)
        npmi = t["coherence"]["c_npmi"]
        assert decimals(row["npmi"]) == 3 and close(row["npmi"], npmi, 3)
        joined = ", ".join(t["top_terms"])
        terms = row["terms"] or ""
        assert terms == joined or (terms.endswith("…") and joined.startswith(terms[:-1]))
        assert len(terms) >= 12
        # the terms are on the row's own line and nowhere else
        assert sum(t["top_terms"][0] in line for line in text.splitlines()) == 1
    if width >= 250:
        assert all(parse_themes(text)[t["theme_id"]]["terms"] == ", ".join(t["top_terms"])
                   for t in themes)  # fmt: skip


def test_themes_command_at_80_columns_matches_its_json(published: Workspace) -> None:
    runner = CliRunner()
    w = str(published.root)
    long_label = "Refunds, credits and the balance left after a house move"
    assert runner.invoke(app, ["label", "2", long_label, "-w", w]).exit_code == 0
    doc = json.loads(runner.invoke(app, ["themes", "--json", "-w", w]).stdout)
    res = runner.invoke(app, ["themes", "-w", w], env={"COLUMNS": "80"})
    assert res.exit_code == 0
    check_width(res.stdout, 80)
    rows = parse_themes(res.stdout)
    for t in doc["themes"]:
        row = rows[t["theme_id"]]
        assert close(row["cov"], t["coverage"], 1) and decimals(row["cov"]) == 1
        assert close(row["share"], t["mean_share"], 1)
        assert close(row["npmi"], t["coherence"]["c_npmi"], 3) and decimals(row["npmi"]) == 3
        assert ", ".join(t["top_terms"]).startswith((row["terms"] or "").rstrip("…"))
    # the long label wraps inside its column, whole
    assert " ".join(res.stdout.split()).count("Refunds, credits and the balance left") <= 1
    assert all(word in res.stdout for word in long_label.replace(",", "").split())


# -- sweep ----------------------------------------------------------------------------------
def sweep_cells(seed: int = 0) -> pd.DataFrame:
    """Invented sweep cells with the magnitudes real sweeps have (negative U_Mass, large
    perplexity), two families, five K, three seeds; perplexity for LDA only,
    reconstruction error for NMF only."""
    rng = np.random.default_rng(seed)
    rows = []
    for family in ("lda", "nmf"):
        for k in (4, 8, 12, 16, 20):
            for s in range(3):
                rows.append(
                    {
                        "family": family,
                        "k": k,
                        "seed": s,
                        "c_npmi": rng.uniform(-0.9, 0.4),
                        "c_v": rng.uniform(0.3, 0.7),
                        "u_mass": rng.uniform(-14.0, -0.5),
                        "stability": rng.uniform(0.2, 1.0),
                        "diversity": rng.uniform(0.5, 1.0),
                        "perplexity": rng.uniform(900, 25000) if family == "lda" else np.nan,
                        "reconstruction_error": np.nan if family == "lda" else rng.uniform(5, 150),
                        "fit_seconds": rng.uniform(0.2, 240.0),
                    }
                )
    return pd.DataFrame(rows)


METRICS = [
    "c_npmi", "c_v", "u_mass", "stability", "diversity", "perplexity",
    "reconstruction_error", "fit_seconds",
]  # fmt: skip


def parse_sweep(text: str) -> dict[tuple[str, int], list[str]]:
    """Per (family, K): the tokens of its rows across every table, in order."""
    found: dict[tuple[str, int], list[str]] = {}
    for line in text.splitlines():
        m = SWEEP_ROW.match(line)
        if m:
            tokens = re.findall(r"–|±|-?[\d,]+(?:\.\d+)?", m["rest"])
            found.setdefault((m["family"], int(m["k"])), []).extend(tokens)
    return found


def check_sweep_numbers(text: str, cells: pd.DataFrame) -> None:
    rows = parse_sweep(text)
    for (family, k), group in cells.groupby(["family", "k"]):
        tokens = rows[(family, int(k))]
        for metric in METRICS:
            values = group[metric].astype(float)
            mean, sd = values.mean(), values.std(ddof=1)
            shown = tokens.pop(0)
            if math.isnan(mean):
                assert shown == "–", (family, k, metric)
                continue
            places = 0 if abs(mean) >= 100 else 3
            assert decimals(shown) == places and close(shown, mean, places), (metric, shown)
            if tokens and tokens[0] == "±":
                tokens.pop(0)
                spread = tokens.pop(0)
                assert decimals(spread) == places and close(spread, sd, places), (metric, spread)
            else:  # the seeds agree exactly: no spread shown
                assert math.isnan(sd) or sd < 1e-12, (metric, sd)
        assert tokens == []


@pytest.mark.parametrize("width", [80, 120, 250])
def test_sweep_table_numbers_are_whole_at_any_width(width: int) -> None:
    cells = sweep_cells()
    text = render(SweepTable(cells, {"lda": 8, "nmf": 12}, "Sweep 1"), width)
    check_width(text, width)
    check_sweep_numbers(text, cells)
    stars = [line for line in text.splitlines() if "★" in line and SWEEP_ROW.match(line)]
    assert stars and all(re.match(r"^\s*(lda\s+8|nmf\s+12) ★", line) for line in stars)
    assert ("(continued)" in text) == (width < 250)
    assert text.count("mean ± sd over seeds") == 1


@pytest.mark.slow
def test_sweep_command_at_80_columns_matches_its_json(published: Workspace) -> None:
    """A real (tiny) sweep: the table a user sees against ``sweep --json`` of the same sweep.

    The prep is 80 documents of the bars corpus (25 terms: the sweep needs at least its
    ``topn`` terms).
    """
    _, _, texts = make_bars_corpus(80, seed=5)
    install_prep(published, pixel_names(), texts)
    runner = CliRunner()
    args = ["sweep", "--k", "3", "--family", "lda,nmf", "--seeds", "2", "--workers", "1"]
    w = ["-w", str(published.root)]
    res = runner.invoke(app, [*args, *w], env={"COLUMNS": "80"})
    assert res.exit_code == 0, res.stderr
    check_width(res.stdout, 80)
    doc = json.loads(runner.invoke(app, [*args, *w, "--json"]).stdout)
    assert doc["cached"]
    cells = pd.DataFrame(doc["cells"])
    for metric in METRICS:
        if metric not in cells.columns:
            cells[metric] = np.nan
    check_sweep_numbers(res.stdout, cells)


def test_sweep_rows_in_json_order() -> None:
    cells = sweep_cells(1)
    text = render(SweepTable(cells, {}, "Sweep 2"), 80)
    first_table = text.split("(continued)")[0]
    keys = [(m["family"], int(m["k"])) for m in map(SWEEP_ROW.match, first_table.splitlines()) if m]
    assert keys == sorted(set(zip(cells["family"], cells["k"], strict=True)))
