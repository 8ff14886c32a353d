"""A tiny published workspace for the command-line tests, built once per session.

Six invented calls ingested with a manifest (so ``status`` has metadata), and a prep of 36
token lists over three blocks of eight invented terms installed directly (no chain), fitted
with NMF at K = 3 and published as version 1. Building it takes about a second.
"""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import pytest
from tests.support.preps import install_prep

from talkthemes.workspace import Workspace

BLOCKS = (
    ("meter", "reading", "estimate", "photo", "digits", "register", "submit", "actual"),
    ("refund", "credit", "balance", "overpaid", "cheque", "transfer", "account", "statement"),
    ("outage", "power", "crew", "street", "restore", "fault", "cable", "storm"),
)


def _tokens(n_docs: int) -> list[list[str]]:
    docs = []
    for d in range(n_docs):
        own, other = BLOCKS[d % 3], BLOCKS[(d + 1) % 3]
        docs.append([own[(d + i) % 8] for i in range(24)] + [other[(d + i) % 8] for i in range(4)])
    return docs


def copy_workspace(root: Path, dest: Path) -> Workspace:
    """A private copy of a workspace (a test may change it)."""
    shutil.copytree(root, dest, ignore=shutil.ignore_patterns(".lock"))
    return Workspace(dest)


@pytest.fixture(scope="session")
def published_root(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The tiny published workspace (read-only: copy it with :func:`copy_workspace`)."""
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.sweep.run import load_current_prep
    from talkthemes.versions.fit import fit_version
    from talkthemes.versions.write import write_version

    base = tmp_path_factory.mktemp("cli-published")
    calls = base / "calls"
    calls.mkdir()
    for i in range(6):
        (calls / f"c{i:03d}.txt").write_text(
            f"Agent: Hello, thanks for calling.\nCustomer: {' '.join(BLOCKS[i % 3])} call {i}\n",
            encoding="utf-8",
        )
    manifest = base / "manifest.csv"
    with manifest.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(["call_id", "date", "queue"])
        for i in range(6):
            writer.writerow([f"c{i:03d}", f"2026-0{4 + i % 3}-1{i}", ("billing", "faults")[i % 2]])
    ws = Workspace(base / "ws")
    ws.init()
    with ws.lock("test"):
        ingest(ws, [calls], manifests=[manifest])
        vocabulary = [t for block in BLOCKS for t in block]
        install_prep(ws, vocabulary, _tokens(36))
        prep, folder = load_current_prep(ws)
        fitted = fit_version(
            ws, PreparedCorpus.load(folder), family="nmf", k=3, seed=0, prep_hash=prep.hash
        )
        write_version(ws, fitted)
    return ws.root


@pytest.fixture
def published(published_root: Path, tmp_path: Path) -> Workspace:
    """A private copy of the tiny published workspace."""
    return copy_workspace(published_root, tmp_path / "ws")
