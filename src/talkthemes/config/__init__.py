"""Settings for a workspace, read from ``talkthemes.toml``.

Every default lives in this package and only here, one module per section. ``init`` writes
a commented file listing each setting with its default; a setting left out of the file keeps
its default. Invalid settings fail at load with one message naming the key, the value and
what is allowed.
"""

from talkthemes.config.faces import ServiceSettings, ViewSettings
from talkthemes.config.ingest import IngestSettings
from talkthemes.config.prepare import PrepareSettings
from talkthemes.config.refresh import RefreshSettings
from talkthemes.config.settings import (
    SETTINGS_FILE,
    Settings,
    load_settings,
    render_settings,
    settings_from_dict,
)
from talkthemes.config.sweep import SweepSettings

__all__ = [
    "SETTINGS_FILE",
    "IngestSettings",
    "PrepareSettings",
    "RefreshSettings",
    "ServiceSettings",
    "Settings",
    "SweepSettings",
    "ViewSettings",
    "load_settings",
    "render_settings",
    "settings_from_dict",
]
