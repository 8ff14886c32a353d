"""Compatibility path: the drift report moved to :mod:`talkthemes.versions.drift` (its
Markdown page to :mod:`talkthemes.versions.drift_markdown`)."""

# compat: re-exports until the merge
from talkthemes.text import md_inline as md_escape
from talkthemes.versions.drift import (
    ThemeSide,
    best_examples,
    drift_frame,
    drift_report,
)
from talkthemes.versions.drift_markdown import render_markdown

__all__ = [
    "ThemeSide",
    "best_examples",
    "drift_frame",
    "drift_report",
    "md_escape",
    "render_markdown",
]
