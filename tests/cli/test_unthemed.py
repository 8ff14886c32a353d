"""The unthemed group on the command line: ``themes`` (table and ``--json``), ``status`` and
``export`` say how many transcripts are too short to carry a theme, with the same count.

The tiny published workspace's prep left nothing out, so this test writes two exclusions
into version 1's ``prep.json`` the way a prep records them (``[id, reason]`` pairs): two
transcripts of 38 (5.3%).
"""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.workspace import Workspace

runner = CliRunner()

EXCLUDED = [
    ["h001", "3 tokens in the vocabulary, fewer than min_tokens = 20"],
    ["h002", "only boilerplate sentences"],
]


def _with_unthemed(ws: Workspace) -> Workspace:
    path = ws.versions_dir / "1" / "prep.json"
    info = json.loads(path.read_text(encoding="utf-8"))
    info["excluded"] = EXCLUDED
    path.write_text(json.dumps(info), encoding="utf-8")
    return ws


def _run(ws: Workspace, *args: str) -> str:
    result = runner.invoke(app, [*args, "-w", str(ws.root)])
    assert result.exit_code == 0, result.output
    return " ".join(result.stdout.split())


def test_themes_and_status_show_the_unthemed_count(published: Workspace) -> None:
    ws = _with_unthemed(published)
    doc = json.loads(_run(ws, "themes", "--json"))
    assert doc["unthemed"] == {
        "count": 2,
        "share": round(2 / 38, 6),
        "by_reason": {"only greetings and other set phrases": 1, "too short after preparation": 1},
    }
    assert sum(t["coverage"] for t in doc["themes"]) == 1.0  # the themes' shares: the others
    text = _run(ws, "themes")
    assert (
        "Unthemed: 2 transcripts (5.3%), only greetings and other set phrases (1), "
        "too short after preparation (1)." in text
    )
    status = json.loads(_run(ws, "status", "--json"))
    assert status["stages"]["published"]["unthemed"] == doc["unthemed"]
    assert "version 1 at" in _run(ws, "status") and "; 2 unthemed (5.3%)" in _run(ws, "status")


def test_without_unthemed_calls_the_themes_say_none(published: Workspace) -> None:
    assert "Unthemed: none." in _run(published, "themes")
    doc = json.loads(_run(published, "themes", "--json"))
    assert doc["unthemed"]["count"] == 0


def test_export_writes_a_row_for_each_unthemed_call(published: Workspace, tmp_path: Path) -> None:
    ws = _with_unthemed(published)
    out = tmp_path / "shares.csv"
    doc = json.loads(_run(ws, "export", "--out", str(out), "--json"))
    frame = pd.read_csv(out, keep_default_na=False, dtype=str)
    assert doc["rows"] == len(frame) == 38 and frame.columns[-1] == "reason"
    rows = frame[frame["transcript_id"].isin(["h001", "h002"])]
    assert rows["transcript_id"].tolist() == ["h001", "h002"]  # after the themed ones
    assert (rows["lead_theme_label"] == "unthemed").all()
    assert (rows["lead_theme_suggested_name"] == "unthemed").all()
    assert (rows["lead_theme_id"] == "").all() and (rows["lead_share"] == "").all()
    assert rows["reason"].tolist() == [r for _, r in EXCLUDED]
    themed = frame[~frame.index.isin(rows.index)]
    assert (themed["lead_theme_id"] != "").all() and (themed["reason"] == "").all()
