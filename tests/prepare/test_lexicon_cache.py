"""The derived lemma tables kept on disk: the same as built, rebuilt when stale or broken."""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest

import talkthemes.prepare.headwords as headwords_module
import talkthemes.prepare.lexicon_cache as cache_module
from talkthemes.prepare.headwords import (
    Headwords,
    headwords_for,
    load_lemma_index,
    load_lemma_rules,
)
from talkthemes.prepare.lexicon import load_lemma_table
from talkthemes.prepare.lexicon_cache import cache_folder, cached


@pytest.fixture
def folder(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    monkeypatch.setenv("TALKTHEMES_CACHE_DIR", str(tmp_path / "cache"))
    return tmp_path / "cache" / "lexicon"


@pytest.fixture
def table(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A language "xx" whose lookup table is a file of the test."""
    path = tmp_path / "xx_lemma_lookup.json"
    path.write_text(json.dumps({"Cats": "cat", "dogs": "dog"}), encoding="utf-8")
    monkeypatch.setattr(cache_module, "lookup_tables", lambda: {"xx": {"lemma_lookup": path}})
    return path


class Builds:
    """A derivation that counts its calls: the lower-cased keys of the table."""

    def __init__(self, table: Path) -> None:
        self.table = table
        self.calls = 0

    def __call__(self) -> list[str]:
        self.calls += 1
        return sorted(k.lower() for k in json.loads(self.table.read_text(encoding="utf-8")))


def words(value):
    if not isinstance(value, list) or not all(isinstance(w, str) for w in value):
        raise TypeError("not words")
    return value


def derive(build: Builds) -> list[str]:
    return cached("keys", "xx", ("lemma_lookup",), build, list, words)


def test_a_second_run_reads_the_file(folder: Path, table: Path):
    build = Builds(table)
    assert derive(build) == ["cats", "dogs"]
    assert derive(build) == ["cats", "dogs"]
    assert build.calls == 1
    assert [p.name[:8] for p in folder.iterdir()] == ["xx-keys-"]


def test_a_changed_table_is_scanned_again_and_the_old_file_removed(folder: Path, table: Path):
    build = Builds(table)
    derive(build)
    before = sorted(folder.iterdir())
    table.write_text(json.dumps({"Cats": "cat", "dogs": "dog", "Mice": "mouse"}), "utf-8")
    assert derive(build) == ["cats", "dogs", "mice"]
    assert build.calls == 2
    after = sorted(folder.iterdir())
    assert len(after) == 1 and after != before


@pytest.mark.parametrize(
    "content", ['["cats", "dog', "not json at all", '{"a": 1}', '["cats", 7]', ""]
)
def test_a_broken_file_is_built_again_without_a_crash(
    folder: Path, table: Path, content: str, caplog: pytest.LogCaptureFixture
):
    build = Builds(table)
    derive(build)
    (path,) = folder.iterdir()
    path.write_text(content, encoding="utf-8")
    assert derive(build) == ["cats", "dogs"]
    assert build.calls == 2
    assert "building it again" in caplog.text
    assert json.loads(path.read_text(encoding="utf-8")) == ["cats", "dogs"]  # rewritten


def test_a_folder_that_cannot_be_written_only_costs_the_scan(
    tmp_path: Path, table: Path, monkeypatch: pytest.MonkeyPatch
):
    blocker = tmp_path / "a-file"
    blocker.write_text("", encoding="utf-8")
    monkeypatch.setenv("TALKTHEMES_CACHE_DIR", str(blocker))  # a file, not a folder
    build = Builds(table)
    assert derive(build) == ["cats", "dogs"]
    assert derive(build) == ["cats", "dogs"]
    assert build.calls == 2


def test_the_folder_follows_the_environment(monkeypatch: pytest.MonkeyPatch, tmp_path: Path):
    monkeypatch.delenv("TALKTHEMES_CACHE_DIR", raising=False)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    assert cache_folder() == tmp_path / "talkthemes" / "lexicon"


@pytest.mark.parametrize("lang", ["en", "es"])
def test_cached_headwords_are_the_ones_built(folder: Path, lang: str, monkeypatch):
    built = Headwords.build(
        load_lemma_table(lang),
        index=load_lemma_index(lang),
        rules=load_lemma_rules(lang),
        lang=lang,
        ratio=1.5,
    )
    first = headwords_for(lang, 1.5)
    assert any(folder.iterdir())

    def fail(*args, **kwargs):
        raise AssertionError("scanned the table again")

    monkeypatch.setattr(headwords_module.Headwords, "build", fail)
    second = headwords_for(lang, 1.5)
    for got in (first, second):
        assert got == built
        assert list(got.contested) == list(built.contested)  # the same order too
    assert headwords_for(lang, 0) == Headwords(ratio=0)
    assert os.listdir(folder)
