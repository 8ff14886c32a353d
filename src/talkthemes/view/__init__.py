"""The data behind each viewer section and the report: plain frames, no Streamlit, no Altair.

The Streamlit pages (``talkthemes/app/``) and the static report (:mod:`talkthemes.report`)
read the workspace through this package, so every number they show is computed here or
below (versions, trends, metrics) and the pages only arrange it. One module per section:

* :mod:`.readiness` — how far the workspace has got and the next command to run;
* :mod:`.choose_k` — a sweep's scored cells, recommendations and any cell's themes;
* :mod:`.theme_map` — where the map places each theme (classical MDS on Jensen–Shannon
  distances);
* :mod:`.themes` — the theme table and the themes' names;
* :mod:`.metadata` — the transcripts' metadata, each field's kind and readable name;
* :mod:`.counts` — transcripts shown, unthemed and stored later, by reason;
* :mod:`.calls` — a theme's transcripts, filtered, and the list as CSV;
* :mod:`.evidence` — each call's best sentence;
* :mod:`.transcript` — terms highlighted in the original text, turns, HTML, excerpts;
* :mod:`.over_time` — shares per period and per segment, and the movers;
* :mod:`.history` — the versions' timeline and what each refresh changed.

This package re-exports their public names (``from talkthemes import view``).
"""

from __future__ import annotations

from talkthemes.view.calls import CallFilter, calls_csv, calls_table
from talkthemes.view.choose_k import (
    CellThemes,
    SweepView,
    cell_themes,
    load_prep_vocabulary,
    load_sweep,
    scalar_columns,
)
from talkthemes.view.history import (
    TIMELINE_COLUMNS,
    ThemeChange,
    VersionChanges,
    load_drift,
    new_theme_examples,
    report_top_terms,
    version_changes,
    versions_timeline,
)
from talkthemes.view.metadata import (
    MAX_CATEGORIES,
    FieldInfo,
    MetaTable,
    load_metadata,
    metadata_table,
)
from talkthemes.view.over_time import (
    MAX_SEGMENTS,
    Freq,
    movers_frame,
    period_choices,
    segment_fields,
    segment_frame,
    trend_frame,
)
from talkthemes.view.readiness import Need, NextStep, Readiness, readiness
from talkthemes.view.theme_map import ThemeLayout, theme_layout
from talkthemes.view.themes import theme_names, theme_table, with_names
from talkthemes.view.transcript import (
    Segment,
    TermHighlighter,
    TurnView,
    excerpt,
    lemma_table,
    load_transcript,
    segments_html,
    transcript_html,
    turn_views,
    version_lang,
    version_lemmas,
)

__all__ = [
    "MAX_CATEGORIES",
    "MAX_SEGMENTS",
    "TIMELINE_COLUMNS",
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
    "ThemeChange",
    "ThemeLayout",
    "TurnView",
    "VersionChanges",
    "calls_csv",
    "calls_table",
    "cell_themes",
    "excerpt",
    "lemma_table",
    "load_drift",
    "load_metadata",
    "load_prep_vocabulary",
    "load_sweep",
    "load_transcript",
    "metadata_table",
    "movers_frame",
    "new_theme_examples",
    "period_choices",
    "readiness",
    "report_top_terms",
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
    "version_changes",
    "version_lang",
    "version_lemmas",
    "versions_timeline",
    "with_names",
]
