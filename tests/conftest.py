"""Shared fixtures."""

from __future__ import annotations

from pathlib import Path

import pytest

from talkthemes.workspace import Workspace


@pytest.fixture
def ws(tmp_path: Path) -> Workspace:
    """A fresh, initialised workspace in a temporary folder."""
    w = Workspace(tmp_path / "ws")
    w.init()
    return w


@pytest.fixture(scope="session", autouse=True)
def _lexicon_cache(tmp_path_factory: pytest.TempPathFactory):
    """The chain's cache of derived lemma tables in a folder of the test session, not the
    user's cache (talkthemes.prepare.lexicon_cache)."""
    import os

    old = os.environ.get("TALKTHEMES_CACHE_DIR")
    os.environ["TALKTHEMES_CACHE_DIR"] = str(tmp_path_factory.mktemp("cache"))
    yield
    if old is None:
        os.environ.pop("TALKTHEMES_CACHE_DIR", None)
    else:
        os.environ["TALKTHEMES_CACHE_DIR"] = old
