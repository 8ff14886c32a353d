"""The data behind Refresh history: moved to :mod:`talkthemes.view.history`; the timeline
chart to :mod:`talkthemes.charts.history`.

# compat: re-exports until the merge
"""

from talkthemes.charts.history import timeline_chart  # compat
from talkthemes.view.history import (  # compat
    ThemeChange,
    VersionChanges,
    load_drift,
    new_theme_examples,
    report_top_terms,
    version_changes,
    versions_timeline,
)

__all__ = [
    "ThemeChange",
    "VersionChanges",
    "load_drift",
    "new_theme_examples",
    "report_top_terms",
    "timeline_chart",
    "version_changes",
    "versions_timeline",
]
