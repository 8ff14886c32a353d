"""docs/api.md is executed: its ``python`` blocks run in order in a fresh folder, and the
numbers they leave behind are checked (the example is a whole run: ingest to refresh)."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import numpy as np
import pytest

import talkthemes as tt

DOC = Path(__file__).resolve().parents[2] / "docs" / "api.md"
BLOCK = re.compile(r"^```python\n(.*?)^```", re.S | re.M)


def python_blocks(text: str) -> list[str]:
    """The fenced ``python`` blocks of a Markdown text, in order."""
    return BLOCK.findall(text)


def test_blocks_are_found_in_order() -> None:
    text = "a\n```python\nx = 1\n```\n```\nnot run\n```\n```python\ny = x\n```\n"
    assert python_blocks(text) == ["x = 1\n", "y = x\n"]


@pytest.mark.slow
def test_the_worked_example_runs(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    blocks = python_blocks(DOC.read_text(encoding="utf-8"))
    assert len(blocks) >= 15
    ns: dict[str, Any] = {"__name__": "api_md"}
    for i, block in enumerate(blocks):
        code = compile(block, f"docs/api.md block {i + 1}", "exec")
        exec(code, ns)  # our own documentation

    ws = ns["ws"]
    assert isinstance(ws, tt.Workspace) and ws.root == Path("demo-work")
    assert ns["report"].total("added") > 200 and ns["report"].exit_code == 0
    sweep = ns["sweep"]
    assert sorted(set(sweep.cells["k"])) == [4, 6, 8] and len(sweep.cells) == 6
    assert ns["published"].k == ns["recommendation"].k
    themes = ns["themes"]
    assert len(themes) == ns["recommendation"].k
    assert np.isclose(themes["coverage"].sum(), 1)
    shares = ns["shares"]
    summary = ns["prep"].summary  # the themed transcripts, then the unthemed group
    assert len(shares) == summary["transcripts"] + summary["excluded"]
    assert (shares["lead_theme_label"] == "unthemed").sum() == summary["excluded"] > 0
    # the label was set, shown as the name, and carried by the refresh
    assert ns["refreshed"].status == "published" and ns["refreshed"].version == 2
    after = ns["after"].set_index("theme_id")
    carried = after[after["status"] == "carried"]
    assert ns["meter"] in carried.index
    assert after.loc[ns["meter"], "name"] == "Meter readings"
    # the spreadsheet round trip set the note, and the change is in the curation log
    applied = ns["applied"]
    assert applied.applied and [c.theme_id for c in applied.changed] == [ns["meter"]]
    assert applied.changed[0].note == "Estimated bills, readings sent in"
    assert ns["sheet"].rows == len(themes) + 1 and Path("themes.csv").is_file()  # + unthemed
    # the two whole calls have a lead theme; the wrong number is unthemed, saying why
    assigned = ns["assigned"]
    assert assigned["lead_theme_id"].notna().tolist() == [True, True, False]
    assert assigned["lead_theme_label"].iloc[2] == "unthemed"
    assert "fewer than min_tokens = 20" in assigned["reason"].iloc[2]
    assert ns["status"].stages["published"]["version"] == 2
    assert Path("shares.csv").is_file() and ns["exported"].rows == len(ws.shares())
