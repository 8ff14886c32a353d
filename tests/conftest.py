"""Shared fixtures."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from tests.support.strict_records import switch_off

from talkthemes.workspace import Workspace


@pytest.fixture
def strict_records(monkeypatch: pytest.MonkeyPatch) -> None:
    """Store records refuse dict-style access (``record["key"]``) for this test."""
    switch_off(monkeypatch)


@pytest.fixture(autouse=os.environ.get("TALKTHEMES_STRICT_RECORDS") == "1")
def _strict_records_everywhere(monkeypatch: pytest.MonkeyPatch) -> None:
    """With ``TALKTHEMES_STRICT_RECORDS=1``, every test runs with dict-style access to store
    records switched off (to find code still written against the old dicts)."""
    switch_off(monkeypatch)


@pytest.fixture
def ws(tmp_path: Path) -> Workspace:
    """A fresh, initialised workspace in a temporary folder."""
    w = Workspace(tmp_path / "ws")
    w.init()
    return w
