"""Freed memory handed back between the corpus steps (glibc's malloc_trim)."""

from __future__ import annotations

import sys

import pytest

from talkthemes import memory


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc only")
def test_release_free_memory_asks_glibc() -> None:
    assert memory.release_free_memory() is True


def test_elsewhere_it_does_nothing(monkeypatch) -> None:
    memory._trim.cache_clear()
    monkeypatch.setattr(memory.sys, "platform", "darwin")
    try:
        assert memory.release_free_memory() is False
    finally:
        memory._trim.cache_clear()
