"""A small published workspace built through the public API itself, once per session.

200 invented demo calls are ingested with their manifest, prepared by the real chain, and
an NMF model with K = 4 is published without a sweep (a few seconds in all). Tests that
change the workspace work on a private copy.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

import talkthemes as tt
from talkthemes.demo.records import DemoFiles
from talkthemes.demo.writer import write_demo

FAMILY, K = "nmf", 4


@pytest.fixture(scope="session")
def demo(tmp_path_factory: pytest.TempPathFactory) -> DemoFiles:
    """The invented corpus, October held back in ``inbox``."""
    return write_demo(
        tmp_path_factory.mktemp("api-demo") / "src", size=200, seed=3, hold_back_last_month=True
    )


@pytest.fixture(scope="session")
def published_root(tmp_path_factory: pytest.TempPathFactory, demo: DemoFiles) -> Path:
    """The workspace with version 1 published (read-only: use :func:`published`)."""
    ws = tt.Workspace.create(tmp_path_factory.mktemp("api-published") / "ws")
    ws.ingest(demo.exports, manifests=demo.manifest)
    ws.prepare()
    ws.publish(k=K, family=FAMILY)
    return ws.root


@pytest.fixture
def published(published_root: Path, tmp_path: Path) -> tt.Workspace:
    """A private copy of the published workspace."""
    dest = tmp_path / "ws"
    shutil.copytree(published_root, dest, ignore=shutil.ignore_patterns(".lock"))
    return tt.Workspace.open(dest)
