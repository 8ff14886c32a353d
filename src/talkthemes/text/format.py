"""Numbers as people read them (one formatter per kind, shared by every face)."""

from __future__ import annotations

import math

__all__ = ["percent"]


def percent(value: float | None, digits: int = 1) -> str:
    """A share as a percentage: ``0.123`` → ``"12.3%"``; ``None`` or NaN → ``"–"``."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "–"
    return f"{value:.{digits}%}"
