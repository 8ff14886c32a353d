"""Shared fixtures of the refresh tests: one invented demo corpus with October held back,
a workspace with a published NMF version of the earlier months, built once per session
and copied for each test that changes it."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from talkthemes.demo.records import DemoFiles
from talkthemes.demo.writer import write_demo
from talkthemes.workspace import Workspace

#: Demo calls: enough that October holds ~170 calls, ~18 of them about the price change.
DEMO_SIZE = 1000
#: NMF finds the demo's reasons cleanly at K=12 (the sweep tests show it),
#: which keeps the new-theme assertion robust across demo seeds (checked for 3, 7, 11).
FAMILY, K = "nmf", 12

PRICE_WORDS = {"price", "fix_price", "tariff", "increase", "unit_rate", "fix_deal"}


@pytest.fixture(scope="session")
def demo_files(tmp_path_factory: pytest.TempPathFactory) -> DemoFiles:
    return write_demo(
        tmp_path_factory.mktemp("demo") / "src", size=DEMO_SIZE, seed=7, hold_back_last_month=True
    )


@pytest.fixture(scope="session")
def published_root(tmp_path_factory: pytest.TempPathFactory, demo_files: DemoFiles) -> Path:
    """A workspace holding May–September, prepared, with version 1 (NMF K=12) published."""
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep.run import load_current_prep
    from talkthemes.versions.fit import fit_version
    from talkthemes.versions.write import write_version

    ws = Workspace(tmp_path_factory.mktemp("published") / "ws")
    ws.init()
    with ws.lock("test"):
        ingest(ws, [demo_files.exports], manifests=[demo_files.manifest])
        run_prepare(ws)
        prep, folder = load_current_prep(ws)
        corpus = PreparedCorpus.load(folder)
        fitted = fit_version(ws, corpus, family=FAMILY, k=K, seed=0, prep_hash=prep.hash)
        write_version(ws, fitted)
    return ws.root


@pytest.fixture
def published(published_root: Path, tmp_path: Path) -> Workspace:
    """A private copy of the published workspace."""
    dest = tmp_path / "ws"
    shutil.copytree(published_root, dest)
    return Workspace(dest)
