"""Writing versions with a theme plan, keeping the last N, leftovers, and the store's refresh
log — on a tiny corpus of invented bars."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.preps import install_prep
from typer.testing import CliRunner

from talkthemes import cli
from talkthemes.config import render_settings, settings_from_dict
from talkthemes.errors import InputError, StoreError
from talkthemes.store import SCHEMA_VERSION, Store
from talkthemes.versions.fit import FittedVersion, fit_version
from talkthemes.versions.load import load_version
from talkthemes.versions.prune import prune_versions, remove_leftovers
from talkthemes.versions.write import ThemePlan, write_version
from talkthemes.workspace import Workspace, atomic_write_text


@pytest.fixture(scope="module")
def fitted(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, FittedVersion]:
    ws = Workspace(tmp_path_factory.mktemp("bars") / "ws")
    ws.init()
    _, _, texts = make_bars_corpus(120, seed=5)
    corpus = install_prep(ws, pixel_names(), texts)
    fit = fit_version(ws, corpus, family="nmf", k=4, seed=0, prep_hash=corpus.info["hash"])
    return ws.root, fit


@pytest.fixture
def ws(tmp_path: Path) -> Workspace:
    w = Workspace(tmp_path / "ws")
    w.init()
    return w


def _current(store: Store) -> int | None:
    """The current version's number."""
    record = store.current_version()
    return None if record is None else record.n


def _keep(ws: Workspace, n: int) -> None:
    data = ws.settings().model_dump()
    data["refresh"]["keep_versions"] = n
    atomic_write_text(ws.settings_path, render_settings(settings_from_dict(data)))


def test_theme_plan_is_written_in_full_and_current_in_one_go(
    ws: Workspace, fitted: tuple[Path, FittedVersion]
) -> None:
    fit = fitted[1]
    first = write_version(ws, fit)
    v1 = load_version(ws, first)
    assert [t.status for t in v1.themes] == ["new"] * 4 and v1.theme_ids == [1, 2, 3, 4]
    assert (v1.folder / "prep.json").is_file() and (v1.folder / "model" / "params.json").is_file()
    with ws.store() as store:
        store.set_label(2, label="Two")
    seen: list[str] = []

    def extra(folder: Path, n: int, ids: list[int]) -> None:
        seen.append(f"files {n} {ids}")
        (folder / "extra.txt").write_text("x")

    plan = ThemePlan(
        [2, None, 1, None], ["carried", "new", "carried", "new"],
        [{"distance": 0.1}, {}, {"distance": 0.2}, {}],
        retired=[{"theme_id": 3, "info": {"why": "gone"}}, {"theme_id": 4}],
    )  # fmt: skip

    def checkpoint(stage: str) -> None:
        with ws.store() as store:
            current = store.current_version()
        seen.append(f"{stage} current={None if current is None else current.n}")

    n = write_version(ws, fit, plan=plan, extra_info={"note": "hi"}, extra_files=extra,
                      checkpoint=checkpoint)  # fmt: skip
    assert seen == [
        "files 2 [2, 5, 1, 6]",
        "version-files current=1",
        "version-folder current=1",
        "version-current current=2",
    ]
    v2 = load_version(ws, n)
    assert v2.theme_ids == [2, 5, 1, 6]
    assert [t.status for t in v2.themes] == ["carried", "new", "carried", "new"]
    assert v2.themes[0].label == "Two" and v2.themes[0].distance == 0.1
    assert v2.themes[0].info == {"distance": 0.1} and v2.themes[1].distance is None
    assert (v2.folder / "extra.txt").read_text() == "x"
    info = json.loads((v2.folder / "version.json").read_text())
    assert info["note"] == "hi" and info["retired_theme_ids"] == [3, 4]
    with ws.store() as store:
        retired = store.retired_themes(n)
        assert [(r.theme_id, r.info) for r in retired] == [(3, {"why": "gone"}), (4, {})]
        assert store.reserve_theme_ids(1) == [7]  # ids are never handed out twice
    with pytest.raises(InputError, match="4 themes"):
        write_version(ws, fit, plan=ThemePlan([None], ["new"], [{}]))


def test_a_failure_while_writing_leaves_the_previous_version(
    ws: Workspace, fitted: tuple[Path, FittedVersion]
) -> None:
    write_version(ws, fitted[1])

    def boom(folder: Path, n: int, ids: list[int]) -> None:
        raise RuntimeError("disk full")

    with pytest.raises(RuntimeError, match="disk full"):
        write_version(ws, fitted[1], extra_files=boom)
    with ws.store() as store:
        assert _current(store) == 1 and store.version_numbers() == [1]
    assert sorted(p.name for p in ws.versions_dir.iterdir()) == ["1"]


def test_keep_the_last_n_versions_and_never_the_current(
    ws: Workspace, fitted: tuple[Path, FittedVersion]
) -> None:
    _keep(ws, 2)
    write_version(ws, fitted[1])
    with ws.store() as store:
        store.set_label(1, label="kept")  # theme 1 is in version 1 only
    for _ in range(2):
        write_version(ws, fitted[1])
    with ws.store() as store:
        assert store.version_numbers() == [2, 3]
        labels = store._conn.execute("SELECT theme_id, label FROM labels").fetchall()
        assert labels == [(1, "kept")]  # labels belong to theme ids and outlive versions
        store.set_current_version(2)
    assert sorted(p.name for p in ws.versions_dir.iterdir()) == ["2", "3"]
    write_version(ws, fitted[1])  # version 4 becomes current; 2 is now the oldest
    with ws.store() as store:
        store.set_current_version(3)
    assert prune_versions(ws, 1) == []  # keeps 4 (newest) and 3 (current)
    with ws.store() as store:
        assert store.version_numbers() == [3, 4]
        assert _current(store) == 3
        with pytest.raises(StoreError, match="no version 2"):
            store.set_current_version(2)
        with pytest.raises(StoreError, match="current"):
            store.delete_versions([3])
    res = CliRunner().invoke(cli.app, ["publish", "--version", "1", "-w", str(ws.root)])
    assert res.exit_code == 2 and "--version 1: no such version (kept: 3, 4)" in res.stderr
    assert load_version(ws).n == 3


def test_leftovers_are_removed_and_versions_kept(
    ws: Workspace, fitted: tuple[Path, FittedVersion]
) -> None:
    write_version(ws, fitted[1])
    for name in (".2.abc123.tmp", ".1.old-4242", "7"):
        (ws.versions_dir / name).mkdir()
        (ws.versions_dir / name / "version.json").write_text("{}")
    (ws.versions_dir / "notes.txt").write_text("mine")
    assert remove_leftovers(ws) == [".1.old-4242", ".2.abc123.tmp", "7"]
    assert sorted(p.name for p in ws.versions_dir.iterdir()) == ["1", "notes.txt"]
    assert load_version(ws).n == 1


def test_refresh_log_and_publish_in_one_transaction(tmp_path: Path) -> None:
    with Store.open(tmp_path / "s.db") as store:
        first = store.start_refresh(None, {"paths": ["a"]})
        second = store.start_refresh(None, {"paths": ["b"]})
        log = store.refreshes()
        assert [(r.id, r.status) for r in log] == [
            (second, "running"),
            (first, "interrupted"),
        ]
        store.finish_refresh(second, "nothing_new", {"new_transcripts": 0})
        third = store.start_refresh(None, {})
        ids = store.reserve_theme_ids(2)
        themes = [{"theme_id": t, "position": i, "status": "new"} for i, t in enumerate(ids)]
        store.publish_version(
            1, {"k": 2}, themes, retired=[{"theme_id": 99}], refresh_id=third,
            refresh_info={"counts": {"new": 2}},
        )  # fmt: skip
        log = store.refreshes(limit=2)
        assert [(r.status, r.version) for r in log] == [
            ("published", 1),
            ("nothing_new", None),
        ]
        assert log[0].counts == {"new": 2} and log[0].finished_at
        assert log[1].new_transcripts == 0 and log[0].previous_version is None
        assert _current(store) == 1
        assert store.retired_themes(1)[0].theme_id == 99
        # a failing publish changes nothing: the refresh row stays running
        fourth = store.start_refresh(1, {})
        with pytest.raises(Exception, match="UNIQUE"):
            store.publish_version(
                2, {}, [{"theme_id": 1, "position": 0, "status": "carried"},
                        {"theme_id": 1, "position": 1, "status": "carried"}],
                refresh_id=fourth,
            )  # fmt: skip
        assert _current(store) == 1 and store.version_numbers() == [1]
        assert store.refreshes(limit=1)[0].status == "running"
        assert store.integrity_problems() == []


def test_turns_for_keeps_the_order_asked(tmp_path: Path) -> None:
    from talkthemes.calls.model import Transcript, Turn

    with Store.open(tmp_path / "s.db") as store:
        store.add_transcripts(
            [Transcript(t, [Turn("Agent", "agent", f"hello {t}"), Turn("Caller", "customer", t)],
                        f"{t}.txt", "txt") for t in ("a", "b", "c")],
            None,
        )  # fmt: skip
        got = store.turns_for(["c", "zz", "a", "c"])
    assert got == [("c", [("agent", "hello c"), ("customer", "c")]),
                   ("a", [("agent", "hello a"), ("customer", "a")])]  # fmt: skip


def test_migration_to_the_refresh_log_keeps_versions(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import talkthemes.store as store_mod

    path = tmp_path / "old.db"
    monkeypatch.setattr(store_mod, "_MIGRATIONS", store_mod._MIGRATIONS[:2])
    monkeypatch.setattr(store_mod, "SCHEMA_VERSION", 2)
    with Store.open(path) as old:
        old.add_version(1, {"k": 1}, [{"theme_id": 1, "position": 0, "status": "new"}])
        assert old.schema_version() == 2
    monkeypatch.undo()
    with Store.open(path) as new:
        assert new.schema_version() == SCHEMA_VERSION >= 3
        assert _current(new) == 1 and new.refreshes() == []
        new.start_refresh(1, {})
        assert new.retired_themes(1) == []


def test_write_version_stores_float32_arrays(
    ws: Workspace, fitted: tuple[Path, FittedVersion]
) -> None:
    n = write_version(ws, fitted[1])
    v = load_version(ws, n)
    assert v.topic_terms.dtype == np.float32 and v.doc_topics.dtype == np.float32
    np.testing.assert_allclose(v.topic_terms, fitted[1].topic_terms, rtol=1e-6, atol=1e-7)
