"""A workspace of invented English demo calls and invented Spanish calls, with a Spanish
lane; built once per session (published in both languages) and copied per test."""

from __future__ import annotations

import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest
from tests.support.spanish import write_spanish_calls

import talkthemes as tt
from talkthemes.demo.writer import write_demo

EN_CALLS = 300
ES_CALLS = 150
MIN_CALLS = 100


@dataclass(frozen=True)
class Mixed:
    root: Path
    es_ids: list[str]
    en_ids: list[str]
    sources: Path


def _settings(root: Path) -> None:
    (root / "talkthemes.toml").write_text(
        f"[prepare.languages]\nmin_calls = {MIN_CALLS}\n"
        '[prepare.languages.es]\nextra_stop_words = ["oiga"]\n',
        encoding="utf-8",
    )


@pytest.fixture(scope="session")
def mixed_sources(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, list[str], list[str]]:
    src = tmp_path_factory.mktemp("mixed-src")
    demo = write_demo(src / "en", size=EN_CALLS, seed=7)
    es_ids = write_spanish_calls(src / "es", ES_CALLS)
    del demo
    return src, es_ids, []


@pytest.fixture(scope="session")
def ingested_root(
    tmp_path_factory: pytest.TempPathFactory, mixed_sources: tuple[Path, list[str], list[str]]
) -> Mixed:
    """English and Spanish calls ingested (no prep yet)."""
    src, es_ids, en_ids = mixed_sources
    ws = tt.Workspace.create(tmp_path_factory.mktemp("mixed") / "ws")
    _settings(ws.root)
    ws.ingest([src / "en", src / "es"])
    with ws.folder.store() as store:  # the demo's calls come in several formats
        en_ids = sorted(set(store.transcript_ids()) - set(es_ids))
    return Mixed(ws.root, es_ids, en_ids, src)


@pytest.fixture(scope="session")
def published_root(tmp_path_factory: pytest.TempPathFactory, ingested_root: Mixed) -> Mixed:
    """The same, prepared and published in both languages (NMF; K = 6 and 3)."""
    dest = tmp_path_factory.mktemp("mixed-published") / "ws"
    shutil.copytree(ingested_root.root, dest)
    ws = tt.Workspace.open(dest)
    for code, k in (("en", 6), ("es", 3)):
        lane = ws.language(code)
        lane.prepare()
        lane.publish(k=k, family="nmf")
    return Mixed(dest, ingested_root.es_ids, ingested_root.en_ids, ingested_root.sources)


def _copy(m: Mixed, tmp_path: Path) -> Mixed:
    dest = tmp_path / "ws"
    shutil.copytree(m.root, dest)
    return Mixed(dest, m.es_ids, m.en_ids, m.sources)


@pytest.fixture
def ingested(ingested_root: Mixed, tmp_path: Path) -> Mixed:
    return _copy(ingested_root, tmp_path)


@pytest.fixture
def published(published_root: Mixed, tmp_path: Path) -> Mixed:
    return _copy(published_root, tmp_path)
