"""The store's records: typed, read-only, built from the rows, and read by attribute.

Besides the records themselves: whole pipelines run on them (records have no dict-style
access, so any ``record["key"]`` left in the code fails here), and no module of ``src/``
subscripts what a store query returned.
"""

from __future__ import annotations

import ast
import copy
import dataclasses
import json
import pickle
from pathlib import Path

import pytest
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.fixed_workspace import build_documents
from tests.support.preps import install_prep
from typer.testing import CliRunner

from talkthemes.cli import app
from talkthemes.store import Store
from talkthemes.store.records import ReadOnlyDict, ThemeRecord
from talkthemes.workspace import Workspace

SRC = Path(__file__).resolve().parents[1] / "src" / "talkthemes"


@pytest.fixture
def store(tmp_path: Path) -> Store:
    s = Store.open(tmp_path / "t.db")
    yield s
    s.close()


def _filled(store: Store) -> None:
    """One of each record: a prep, a sweep with a cell, two versions with themes, labels,
    a retired theme, and refreshes."""
    store.record_prep("p1", {"hash": "p1", "created_at": "2026-01-02T03:04:05+00:00",
                             "path": "prepared/p1", "counts": {"transcripts": 9}})  # fmt: skip
    sid = store.start_sweep("p1", {"grid_key": "g", "k": [3, 4], "families": ["nmf"],
                                   "seeds": 2, "run": {"pid": 7, "host": "h"}})  # fmt: skip
    store.add_cell(sid, "nmf-k003-s0", "nmf", 3, 0,
                   {"fit_seconds": 1.5, "top_terms": [[1, 2], [3, 4], [5, 6]]})  # fmt: skip
    store.finish_sweep(sid, {"grid_key": "g", "recommendations": {"nmf": {"k": 3}}})
    store.publish_version(1, {"family": "nmf", "k": 2, "seed": 0},
                          [{"theme_id": 1, "position": 0, "status": "new"},
                           {"theme_id": 2, "position": 1, "status": "new"}])  # fmt: skip
    store.set_label(1, label="Bills", note="late fees too")
    rid = store.start_refresh(1, {"paths": ["inbox"]})
    store.publish_version(
        2,
        {"family": "nmf", "k": 2, "refresh": {"refresh_id": rid, "previous_version": 1,
                                               "new_transcripts": 40}},
        [{"theme_id": 1, "position": 0, "status": "carried", "info": {"distance": 0.12}},
         {"theme_id": 3, "position": 1, "status": "new",
          "info": {"nearest_previous": {"theme_id": 2, "name": "x", "distance": 0.5},
                   "possible_split_of": [1]}}],
        retired=[{"theme_id": 2, "info": {"top_terms": ["a", "b"], "coverage_before": 0.25,
                                          "nearest_new": {"theme_id": 3, "distance": 0.5}}}],
        refresh_id=rid,
        refresh_info={"new_transcripts": 40, "counts": {"carried": 1, "new": 1, "retired": 1}},
    )  # fmt: skip
    failed = store.start_refresh(2, {})
    store.finish_refresh(failed, "failed", {"error": "disk full"})


def test_records_carry_typed_fields_from_columns_and_documents(store: Store) -> None:
    _filled(store)
    prep = store.current_prep()
    assert prep is not None and (prep.hash, prep.path) == ("p1", "prepared/p1")
    assert prep.created_at == "2026-01-02T03:04:05+00:00"  # the prep's own time, as before
    assert prep.counts == {"transcripts": 9} and prep.frozen_from is None
    sweep = store.get_sweep()
    assert sweep is not None
    assert (sweep.k, sweep.families, sweep.seeds) == ((), (), None)  # finish rewrote the info
    assert sweep.recommendations == {"nmf": {"k": 3}} and sweep.grid_key == "g"
    (cell,) = store.cells(sweep.id)
    assert cell.top_terms == ((1, 2), (3, 4), (5, 6)) and cell.fit_seconds == 1.5
    assert cell.perplexity is None and cell.sweep_id == sweep.id
    v1, v2 = store.versions()
    assert (v1.n, v1.current, v1.family, v1.k, v1.seed, v1.refresh) == (1, False, "nmf", 2, 0, None)
    assert v2.current and v2.refresh is not None
    assert (v2.refresh.previous_version, v2.refresh.new_transcripts) == (1, 40)
    carried, new = store.themes(2)
    assert (carried.theme_id, carried.label, carried.note, carried.distance) == (
        1, "Bills", "late fees too", 0.12,
    )  # fmt: skip
    assert new.nearest_previous is not None and new.nearest_previous.name == "x"
    assert new.possible_split_of == (1,) and new.possible_merge_of == () and new.label == ""
    (retired,) = store.retired_themes(2)
    assert (retired.theme_id, retired.top_terms, retired.coverage_before) == (2, ("a", "b"), 0.25)
    assert retired.nearest_new is not None and retired.nearest_new.name == ""
    failed, published = store.refreshes()
    assert (failed.status, failed.error, failed.previous_version) == ("failed", "disk full", 2)
    assert (published.status, published.version, published.new_transcripts) == (
        "published", 2, 40,
    )  # fmt: skip
    assert published.counts == {"carried": 1, "new": 1, "retired": 1}


def test_records_are_read_only_and_survive_copies(store: Store) -> None:
    _filled(store)
    theme = store.themes(2)[0]
    with pytest.raises(dataclasses.FrozenInstanceError):
        theme.label = "x"  # type: ignore[misc]
    with pytest.raises(TypeError, match="read-only"):
        theme.info["distance"] = 1.0  # type: ignore[index]
    with pytest.raises(TypeError, match="read-only"):
        theme.info.update(distance=1.0)  # type: ignore[attr-defined]
    assert isinstance(theme.info, ReadOnlyDict) and json.dumps(theme.info) == '{"distance": 0.12}'
    for record in [theme, store.current_prep(), store.get_sweep(), store.current_version(),
                   store.summary(), store.stages(), *store.refreshes()]:  # fmt: skip
        assert pickle.loads(pickle.dumps(record)) == record
        assert copy.deepcopy(record) == record
    changed = dict(theme.info) | {"distance": 1.0}  # a copy can change
    assert changed["distance"] == 1.0 and theme.info["distance"] == 0.12


def test_emit_json_prints_a_record_by_its_json_form(store: Store, capsys) -> None:
    from talkthemes.cli._common import emit_json

    _filled(store)
    emit_json({"row": store.set_label(1, hidden=True), "path": Path("a/b")})
    assert json.loads(capsys.readouterr().out) == {
        "row": {"theme_id": 1, "label": "Bills", "note": "late fees too", "hidden": True},
        "path": "a/b",
    }


def test_the_cli_documents_need_no_dict_access(tmp_path: Path) -> None:
    """status, sweep (finished), label, themes, refresh (nothing new) and publish
    --version, on records that have no dict-style access."""
    docs = build_documents(tmp_path)
    assert docs["status"]["stages"]["swept"]["status"] == "interrupted"
    with pytest.raises(TypeError, match="not subscriptable"):
        ThemeRecord(theme_id=1, position=0, status="new")["label"]  # type: ignore[index]


@pytest.mark.slow
def test_sweep_publish_and_views_need_no_dict_access(tmp_path: Path) -> None:
    """A real sweep (then found finished), publish of its recommendation, labels and the
    viewer's data, on records that have no dict-style access."""
    from talkthemes.versions.load import load_version
    from talkthemes.view.choose_k import load_sweep
    from talkthemes.view.history import versions_timeline
    from talkthemes.view.readiness import readiness
    from talkthemes.view.theme_map import theme_layout
    from talkthemes.view.themes import theme_table

    ws = Workspace(tmp_path / "ws")
    ws.init()
    _, _, texts = make_bars_corpus(300, seed=6)
    install_prep(ws, pixel_names(), texts)
    runner = CliRunner()

    def run(*args: str) -> dict:
        result = runner.invoke(app, [*args, "--workspace", str(ws.root), "--json"])
        assert result.exit_code == 0, result.output
        return json.loads(result.stdout)

    grid = ["--k", "9,10", "--family", "nmf", "--seeds", "2", "--workers", "1"]
    first = run("sweep", *grid)
    again = run("sweep", *grid)
    assert (first["cached"], again["cached"]) == (False, True)
    published = run("publish", "--recommended")
    assert published["family"] == "nmf" and published["k"] in (9, 10)
    tid = published["themes"][0]["theme_id"]
    assert run("label", str(tid), "Top bar")["label"] == "Top bar"
    assert run("publish", "--cell", published["cell"], "--k", str(published["k"]))["status"] == (
        "already_current"
    )
    themes = run("themes")
    assert themes["themes"][0]["name"] == "Top bar"
    status = run("status")
    assert status["stages"]["published"]["version"] == 1
    ready = readiness(ws)
    assert ready.version == 1 and ready.sweep_scored
    view = load_sweep(ws)
    assert view.recommended == {"nmf": published["k"]}
    version = load_version(ws)
    table = theme_table(version, theme_layout(version.topic_terms))
    assert table.loc[table["theme_id"] == tid, "name"].tolist() == ["Top bar"]
    with ws.store() as store:
        timeline = versions_timeline(store.versions())
    assert timeline["kind"].tolist() == ["publish"]


def _store_calls(tree: ast.AST) -> set[str]:
    """Names bound directly to what a store query returned (``x = store.themes(n)``)."""
    queries = {"current_prep", "get_prep", "find_sweep", "get_sweep", "cells",
               "current_version", "versions", "themes", "retired_themes", "refreshes",
               "summary", "stages", "set_label"}  # fmt: skip
    names: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Assign) and isinstance(node.value, ast.Call):
            func = node.value.func
            if (
                isinstance(func, ast.Attribute)
                and func.attr in queries
                and isinstance(func.value, ast.Name)
                and func.value.id == "store"
            ):
                names |= {t.id for t in node.targets if isinstance(t, ast.Name)}
    return names


def test_no_module_subscripts_a_store_record() -> None:
    """No ``store.themes(n)[0]["label"]``, ``record["n"]`` or ``record.get("n")`` in src/,
    where ``record`` was bound to a store query's result."""
    found = []
    for path in sorted(SRC.rglob("*.py")):
        if "store" in path.relative_to(SRC).parts[:1]:
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        bound = _store_calls(tree)
        for node in ast.walk(tree):
            target = None
            if (
                isinstance(node, ast.Subscript)
                and isinstance(node.slice, ast.Constant)
                and isinstance(node.slice.value, str)
            ):
                target = node.value
            elif (
                isinstance(node, ast.Call)
                and isinstance(node.func, ast.Attribute)
                and node.func.attr == "get"
            ):
                target = node.func.value
            if target is None:
                continue
            direct = (
                isinstance(target, ast.Call)
                and isinstance(target.func, ast.Attribute)
                and (isinstance(target.func.value, ast.Name) and target.func.value.id == "store")
            )
            if direct or (isinstance(target, ast.Name) and target.id in bound):
                found.append(f"{path.relative_to(SRC)}:{node.lineno}")
    assert not found, "store records read like dicts at " + ", ".join(found)
