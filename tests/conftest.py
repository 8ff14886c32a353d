"""Shared fixtures."""

from __future__ import annotations

from pathlib import Path

import pytest

from talkthemes.workspace import WorkspaceDir


@pytest.fixture
def ws(tmp_path: Path) -> WorkspaceDir:
    """A fresh, initialised workspace in a temporary folder."""
    w = WorkspaceDir(tmp_path / "ws")
    w.init()
    return w
