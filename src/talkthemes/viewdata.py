"""The data behind the viewer and the report: moved to :mod:`talkthemes.view`.

# compat: re-exports until the merge
"""

from talkthemes.view.calls import CallFilter, calls_csv, calls_table  # compat
from talkthemes.view.choose_k import (  # compat
    CellThemes,
    SweepView,
    cell_themes,
    load_prep_vocabulary,
    load_sweep,
    scalar_columns,
)
from talkthemes.view.metadata import (  # compat
    MAX_CATEGORIES,
    FieldInfo,
    MetaTable,
    load_metadata,
    metadata_table,
)
from talkthemes.view.over_time import (  # compat
    MAX_SEGMENTS,
    Freq,
    movers_frame,
    period_choices,
    segment_fields,
    segment_frame,
    trend_frame,
)
from talkthemes.view.readiness import Need, NextStep, Readiness, readiness  # compat
from talkthemes.view.theme_map import ThemeLayout, theme_layout  # compat
from talkthemes.view.themes import theme_names, theme_table, with_names  # compat
from talkthemes.view.transcript import (  # compat
    Segment,
    TermHighlighter,
    TurnView,
    excerpt,
    load_transcript,
    segments_html,
    transcript_html,
    turn_views,
)

__all__ = [
    "MAX_CATEGORIES",
    "MAX_SEGMENTS",
    "CallFilter",
    "CellThemes",
    "FieldInfo",
    "Freq",
    "MetaTable",
    "Need",
    "NextStep",
    "Readiness",
    "Segment",
    "SweepView",
    "TermHighlighter",
    "ThemeLayout",
    "TurnView",
    "calls_csv",
    "calls_table",
    "cell_themes",
    "excerpt",
    "load_metadata",
    "load_prep_vocabulary",
    "load_sweep",
    "load_transcript",
    "metadata_table",
    "movers_frame",
    "period_choices",
    "readiness",
    "scalar_columns",
    "segment_fields",
    "segment_frame",
    "segments_html",
    "theme_layout",
    "theme_names",
    "theme_table",
    "transcript_html",
    "trend_frame",
    "turn_views",
    "with_names",
]
