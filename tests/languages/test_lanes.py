"""Calls in several languages: each language themed on its own (docs/languages.md).

The corpus is invented: English demo calls and Spanish calls of three reasons
(tests/support/spanish.py); the lane threshold is lowered to 100 calls.
"""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest
from typer.testing import CliRunner

import talkthemes as tt
from talkthemes.cli import app
from talkthemes.errors import ConfigError, NotReadyError

from .conftest import ES_CALLS, Mixed

runner = CliRunner()


def _cli(*args: str, code: int = 0) -> str:
    result = runner.invoke(app, list(args))
    assert result.exit_code == code, result.output
    return result.output


def test_each_call_gets_its_language_and_spanish_calls_get_a_lane(ingested: Mixed) -> None:
    ws = tt.Workspace.open(ingested.root)
    states = {s.code: s for s in ws.languages()}
    assert states["en"].kind == "main"
    assert states["es"].kind == "lane"
    assert states["es"].calls == ES_CALLS and states["es"].given == 0
    lane = ws.language("es")
    assert lane.root == ingested.root / "languages" / "es"
    with lane.folder.store() as store:
        assert sorted(store.transcript_ids()) == sorted(ingested.es_ids)
    settings = tomllib.loads((lane.root / "talkthemes.toml").read_text("utf-8"))
    assert settings["prepare"]["lang"] == "es"
    assert settings["prepare"]["extra_stop_words"] == ["oiga"]  # its [prepare.languages.es]
    assert lane.settings().refresh.inbox == ""  # only the main workspace ingests


def test_the_main_prep_holds_only_its_language_and_the_lane_only_its_own(
    ingested: Mixed,
) -> None:
    ws = tt.Workspace.open(ingested.root)
    main = ws.prepare()
    es = ws.language("es").prepare()
    main_ids = set(json.loads((main.path / "doc_ids.json").read_text("utf-8")))
    kept = main.summary["transcripts"] + main.summary["excluded"]
    assert kept == len(ingested.en_ids)  # every English call, no Spanish one
    assert es.summary["transcripts"] + es.summary["excluded"] == ES_CALLS
    assert not main_ids & set(ingested.es_ids)


def test_a_language_given_by_the_manifest_wins_and_moves_the_call(ingested: Mixed) -> None:
    ws = tt.Workspace.open(ingested.root)
    moved, unknown = ingested.es_ids[0], ingested.es_ids[1]
    manifest = ingested.root.parent / "manifest.csv"
    manifest.write_text(f"id,language\n{moved},English\n{unknown},Klingon\n", "utf-8")
    report = ws.ingest([], manifests=[manifest])
    assert [lane.to_json()["removed"] for lane in report.lanes] == [1]
    assert any("'Klingon'" in w.message and "detected" in w.message for w in report.warnings)
    with ws.folder.store() as store:
        assert store.languages_of([moved, unknown]) == {moved: "en", unknown: "es"}
    states = {s.code: s for s in ws.languages()}
    assert (states["en"].given, states["es"].calls) == (1, ES_CALLS - 1)
    with ws.language("es").folder.store() as store:
        assert moved not in store.transcript_ids()


def test_detection_off_puts_every_call_in_the_main_language(
    mixed_sources: tuple[Path, list[str], list[str]], tmp_path: Path
) -> None:
    src, _, _ = mixed_sources
    ws = tt.Workspace.create(tmp_path / "ws")
    (ws.root / "talkthemes.toml").write_text("[prepare.languages]\ndetect = false\n", "utf-8")
    ws.ingest([src / "es"])
    assert [(s.code, s.kind) for s in ws.languages()] == [("en", "main")]
    assert not (ws.root / "languages").exists()


def test_a_small_language_is_listed_not_themed(
    mixed_sources: tuple[Path, list[str], list[str]], tmp_path: Path
) -> None:
    src, _, _ = mixed_sources
    ws = tt.Workspace.create(tmp_path / "ws")
    ws.ingest([src / "en", *sorted((src / "es").glob("*.txt"))[:12]])
    states = {s.code: s for s in ws.languages()}
    assert states["es"].kind == "too_few" and states["es"].calls == 12
    with pytest.raises(NotReadyError, match=r"12 calls, fewer than .*min_calls = 200"):
        ws.language("es")
    with pytest.raises(ConfigError, match="not a language code"):
        ws.language("x1")
    out = _cli("themes", "--language", "es", "-w", str(ws.root), code=2)
    assert "fewer than" in out
    status = _cli("status", "-w", str(ws.root))
    assert "By language" in status and "too few calls for themes" in status


def test_status_lists_each_language_with_its_lane_and_version(published: Mixed) -> None:
    out = _cli("status", "-w", str(published.root))
    row = next(line for line in out.splitlines() if line.startswith("│ es "))
    assert f"{ES_CALLS}" in row and "lane languages/es: version 1" in row
    doc = json.loads(_cli("status", "-w", str(published.root), "--json"))
    es = next(entry for entry in doc["languages"] if entry["language"] == "es")
    assert (es["kind"], es["calls"], es["version"]) == ("lane", ES_CALLS, 1)


def test_themes_without_language_shows_every_language(published: Mixed) -> None:
    doc = json.loads(_cli("themes", "-w", str(published.root), "--json"))
    assert sorted(doc["languages"]) == ["en", "es"]
    assert len(doc["languages"]["en"]["themes"]) == 6
    assert len(doc["languages"]["es"]["themes"]) == 3
    only = json.loads(_cli("themes", "--language", "es", "-w", str(published.root), "--json"))
    assert only["k"] == 3 and len(only["themes"]) == 3
    words = {w for t in only["themes"] for w in t["top_terms"]}
    assert not words & {"bill", "meter", "payment"}  # no English in the Spanish themes


def test_assign_routes_each_call_to_its_languages_version(published: Mixed, tmp_path: Path) -> None:
    import pandas as pd

    inputs = tmp_path / "new"
    inputs.mkdir()
    src = published.sources
    es_file = sorted((src / "es").glob("*.txt"))[0]
    en_file = sorted((src / "en").rglob("*.txt"))[0]
    (inputs / "n-es.txt").write_text(es_file.read_text("utf-8"), "utf-8")
    (inputs / "n-en.txt").write_text(en_file.read_text("utf-8"), "utf-8")
    (inputs / "n-fr.txt").write_text(
        "Customer: bonjour, je voudrais comprendre pourquoi ma facture d'électricité a "
        "tellement augmenté ce mois-ci, je ne comprends pas le montant\n",
        "utf-8",
    )
    out = tmp_path / "shares.csv"
    _cli("assign", str(inputs), "--out", str(out), "-w", str(published.root))
    table = pd.read_csv(out).set_index("transcript_id")
    assert table.loc["n-es", "language"] == "es"
    assert table.loc["n-en", "language"] == "en"
    es_cols = [c for c in table.columns if c.startswith("share_es_")]
    en_cols = [c for c in table.columns if c.startswith("share_") and c not in es_cols]
    assert len(es_cols) == 3 and len(en_cols) == 6
    assert table.loc["n-es", es_cols].sum() == pytest.approx(1, abs=0.01)
    assert table.loc["n-es", en_cols].isna().all()
    assert table.loc["n-en", en_cols].sum() == pytest.approx(1, abs=0.01)
    assert pd.isna(table.loc["n-fr", "lead_theme_id"])
    assert "language fr" in table.loc["n-fr", "reason"]
    ws = tt.Workspace.open(published.root)  # the API routes the same way
    frame = ws.assign([es_file.read_text("utf-8")])
    assert list(frame["language"]) == ["es"] and frame.filter(like="share_es_").shape[1] == 3


@pytest.mark.parametrize("chunk", [1, 2, 3])
def test_assign_in_chunks_gives_the_table_of_all_calls_at_once(
    published: Mixed, tmp_path: Path, monkeypatch, chunk: int
) -> None:
    """``assign`` reads, prepares and routes calls a chunk at a time (memory stays bounded);
    the table is the one it makes of all the calls at once, columns and order included —
    also when the first chunks hold English calls only."""
    src = published.sources
    es = sorted((src / "es").glob("*.txt"))[:3]
    en = sorted((src / "en").rglob("*.txt"))[:4]
    inputs = tmp_path / "new"
    inputs.mkdir()
    order = [("a1", en[0]), ("a2", en[1]), ("b1", es[0]), ("c1", en[2]), ("d1", es[1]),
             ("e1", en[3]), ("f1", es[2])]  # fmt: skip
    for name, path in order:
        (inputs / f"{name}.txt").write_text(path.read_text("utf-8"), "utf-8")
    whole, chunked = tmp_path / "whole.csv", tmp_path / "chunked.csv"
    _cli("assign", str(inputs), "--out", str(whole), "-w", str(published.root))
    monkeypatch.setattr("talkthemes.assign.CALLS_PER_CHUNK", chunk)
    _cli("assign", str(inputs), "--out", str(chunked), "-w", str(published.root))
    assert chunked.read_text("utf-8") == whole.read_text("utf-8")
    header = whole.read_text("utf-8").splitlines()[0].split(",")
    assert header[1] == "language" and any(c.startswith("share_es_") for c in header)


def test_refresh_refreshes_each_lane_on_its_new_calls(published: Mixed, tmp_path: Path) -> None:
    from tests.support.spanish import write_spanish_calls

    new = write_spanish_calls(tmp_path / "inbox", 30, seed=11, prefix="es-new-")
    ws = tt.Workspace.open(published.root)
    result = ws.refresh(ingest=[tmp_path / "inbox"])
    assert result.language == "en" and result.status == "nothing_new"
    es = result.languages["es"]
    assert es.status == "published" and es.new_transcripts == len(new)
    assert ws.language("es").current_version() == 2
    doc = result.to_json()
    assert doc["languages"]["es"]["version"] == 2
    out = _cli("refresh", "-w", str(published.root))  # nothing new anywhere now
    assert "Language es" in out and out.count("Nothing new to do") == 2
