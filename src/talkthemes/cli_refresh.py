"""compat: re-exports until the merge.

``refresh`` and ``assign`` now live in :mod:`talkthemes.cli.refresh` and are registered
with :data:`talkthemes.cli.app` like every other command; :func:`register` is kept for the
tests that still call it and changes nothing.
"""

from __future__ import annotations

from typing import Any

__all__ = ["register"]


def register(app: Any) -> None:
    """Nothing to do: ``refresh`` and ``assign`` are part of the app already."""
