"""talkthemes: topic and theme discovery for transcript corpora.

Ingest transcripts, prepare them with a chain built for speech, sweep topic counts for
LDA and NMF, publish a version of themes, view and refresh it as new calls arrive.
"""

from __future__ import annotations

from talkthemes.config import Settings, load_settings
from talkthemes.errors import (
    ConfigError,
    InputError,
    NotReadyError,
    StoreError,
    TalkthemesError,
    WorkspaceBusyError,
)
from talkthemes.ingest.model import Reject, Transcript, Turn
from talkthemes.workspace import WorkspaceDir

__version__ = "0.1.0"

__all__ = [
    "ConfigError",
    "InputError",
    "NotReadyError",
    "Reject",
    "Settings",
    "StoreError",
    "TalkthemesError",
    "Transcript",
    "Turn",
    "WorkspaceBusyError",
    "WorkspaceDir",
    "__version__",
    "load_settings",
]
