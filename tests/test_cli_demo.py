"""`talkthemes demo` runs the whole pipeline on the invented corpus (small size here)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from talkthemes.cli._common import app


def test_demo_runs_ingest_prepare_sweep_publish(tmp_path: Path) -> None:
    ws = tmp_path / "demo"
    r = CliRunner().invoke(
        app,
        [
            "demo",
            "--size",
            "400",
            "--k",
            "8,12",
            "--seeds",
            "2",
            "--no-serve",
            "-w",
            str(ws),
            "--json",
        ],
    )
    assert r.exit_code == 0, r.stderr
    doc = json.loads(r.stdout)
    held_back = doc["refresh"]["new_transcripts"]
    assert held_back > 0  # the last month arrives with the refresh
    assert doc["ingest"]["added"] + doc["refresh"]["ingest"]["totals"]["added"] == 400
    assert doc["ingest"]["rejected"] == 0
    assert doc["published"]["version"] == 1
    assert doc["published"]["k"] in (8, 12)
    assert doc["refresh"]["status"] == "published" and doc["refresh"]["version"] == 2
    assert not (ws / "demo-source" / "exports" / "truth.csv").exists()  # truth is never ingested
    r = CliRunner().invoke(app, ["status", "--json", "-w", str(ws)])
    stages = json.loads(r.stdout)["stages"]
    assert stages["prepared"] and stages["swept"] and stages["published"]["version"] == 2

    # a second run keeps what is there (labels, versions) instead of publishing again
    r = CliRunner().invoke(app, ["demo", "--no-serve", "-w", str(ws), "--json"])
    assert r.exit_code == 0, r.stderr
    assert json.loads(r.stdout)["existing_version"] == 2


@pytest.mark.slow
def test_the_demo_refresh_shows_the_new_price_change_theme(tmp_path: Path) -> None:
    # `demo --refresh` promises a new theme: October brings the price-change calls (about a
    # fifth of the month) that no earlier month has. At K = 10 (the scenario's ten reasons)
    # the refit has no theme to spare; the room check gives the new reason its own.
    ws = tmp_path / "demo"
    args = ["demo", "--size", "1500", "--k", "10", "--seeds", "1", "--no-serve", "-w", str(ws)]
    r = CliRunner().invoke(app, [*args, "--json"])
    assert r.exit_code == 0, r.stderr
    refresh = json.loads(r.stdout)["refresh"]
    assert refresh["room"]["raised"] and refresh["k"] == 11
    (new,) = [t for t in refresh["new_themes"] if t["alert"]]
    assert refresh["alerts"]["new"] == [new["theme_id"]] and new["verdict"] == "new"
    assert {"price", "unit_rate"} <= set(new["top_terms"][:5])
    assert "price" in new["name"].lower()  # named by its suggested name, not raw terms


def test_the_demo_with_a_spanish_line_themes_each_language(tmp_path: Path) -> None:
    # `make demo DEMO_LANGUAGES=en,es`: a quarter of the calls come from the Spanish line;
    # they get a lane of their own, swept, published and refreshed, and the English themes
    # hold no Spanish call.
    ws = tmp_path / "demo"
    args = ["demo", "--size", "1200", "--k", "6:10:2", "--seeds", "1", "--no-serve"]
    r = CliRunner().invoke(app, [*args, "--languages", "en,es", "-w", str(ws), "--json"])
    assert r.exit_code == 0, r.stderr
    doc = json.loads(r.stdout)
    assert doc["languages"]["es"]["version"] == 1
    assert doc["refresh"]["languages"]["es"]["status"] == "published"
    import talkthemes as tt

    main = tt.Workspace.open(ws)
    states = {s.code: s for s in main.languages()}
    assert states["es"].kind == "lane" and states["es"].calls > 250
    assert not [t for t in main.shares()["transcript_id"] if str(t).startswith("ES-")]
    es_ids = set(main.language("es").shares()["transcript_id"].astype(str))
    assert es_ids and all(t.startswith("ES-") for t in es_ids)
    terms = {w for t in main.language("es").version().summary() for w in t["top_terms"]}
    assert {"contador", "carta"} & terms  # Spanish words in the Spanish themes
