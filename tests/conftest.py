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
