"""Compatibility path: the K rule moved to :mod:`talkthemes.sweep.recommend`."""

# compat: re-exports until the merge
from talkthemes.sweep.recommend import (
    RANKABLE,
    Recommendation,
    best_family,
    recommend,
    summarise_by_k,
)

__all__ = ["RANKABLE", "Recommendation", "best_family", "recommend", "summarise_by_k"]
