"""talkthemes: topic and theme discovery for transcript corpora.

Ingest transcripts, prepare them with a chain built for speech, sweep topic counts for
LDA and NMF, publish a version of themes, label them, assign new calls to them, and refresh
them as new calls arrive. From Python (a worked example is in ``docs/api.md``)::

    import talkthemes as tt

    ws = tt.Workspace.create("work")          # or tt.Workspace.open("work")
    ws.ingest(["calls/"], manifests=["calls/manifest.csv"])
    ws.prepare()
    result = ws.sweep(k="4:16:2", families="nmf", seeds=2)
    ws.publish(recommended=True)
    ws.themes()                               # DataFrame, one row per theme
    ws.assign(["my bill went up again"])      # a row per text; this one: too short, unthemed

Every error raised on purpose derives from one root::

    TalkthemesError
    ├── ConfigError         settings or an argument invalid           (CLI exit 2)
    ├── InputError          an input file or argument cannot be used  (CLI exit 2)
    ├── NotReadyError       an earlier stage has not been run yet     (CLI exit 2)
    ├── WorkspaceBusyError  another writer holds the workspace lock   (CLI exit 2)
    ├── StoreError          the store is unreadable or inconsistent   (CLI exit 1)
    └── DiskFullError       too little disk room for a write          (CLI exit 1)

Importing this package stays light (no numpy, pandas, gensim or Dask): the result types and
:class:`Version`, whose modules need them, are imported on first access through the
module-level ``__getattr__`` below (PEP 562), and the API's methods import the domain
modules when first called (``talkthemes/api/_deferred.py``).
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"

from talkthemes.api.results import Export, Label, LabelSheet, Merge, Status, ThemesSheet, Unmerge
from talkthemes.api.workspace import Workspace
from talkthemes.calls.model import Reject, Transcript, Turn, Warning_
from talkthemes.config import Settings, load_settings
from talkthemes.errors import (
    ConfigError,
    DiskFullError,
    InputError,
    NotReadyError,
    StoreError,
    TalkthemesError,
    WorkspaceBusyError,
)
from talkthemes.progress import Progress

if TYPE_CHECKING:  # imported on first access at run time (see the module notes)
    from talkthemes.api.progress import rich_progress, tqdm_progress
    from talkthemes.assign import AssignResult
    from talkthemes.ingest.run import IngestReport
    from talkthemes.prepare.run import PrepareResult
    from talkthemes.refresh.run import RefreshResult
    from talkthemes.sweep.recommend import Recommendation
    from talkthemes.sweep.run import SweepResult
    from talkthemes.versions.load import Version
    from talkthemes.versions.publish import PublishResult
    from talkthemes.versions.unthemed import UnthemedGroup

#: Public names whose modules are heavy, and the module each is imported from on first use.
_DEFERRED = {
    "AssignResult": "talkthemes.assign",
    "IngestReport": "talkthemes.ingest.run",
    "PrepareResult": "talkthemes.prepare.run",
    "PublishResult": "talkthemes.versions.publish",
    "Recommendation": "talkthemes.sweep.recommend",
    "RefreshResult": "talkthemes.refresh.run",
    "SweepResult": "talkthemes.sweep.run",
    "UnthemedGroup": "talkthemes.versions.unthemed",
    "Version": "talkthemes.versions.load",
    "rich_progress": "talkthemes.api.progress",
    "tqdm_progress": "talkthemes.api.progress",
}

__all__ = [
    "AssignResult",
    "ConfigError",
    "DiskFullError",
    "Export",
    "IngestReport",
    "InputError",
    "Label",
    "LabelSheet",
    "Merge",
    "NotReadyError",
    "PrepareResult",
    "Progress",
    "PublishResult",
    "Recommendation",
    "RefreshResult",
    "Reject",
    "Settings",
    "Status",
    "StoreError",
    "SweepResult",
    "TalkthemesError",
    "ThemesSheet",
    "Transcript",
    "Turn",
    "Unmerge",
    "UnthemedGroup",
    "Version",
    "Warning_",
    "Workspace",
    "WorkspaceBusyError",
    "__version__",
    "load_settings",
    "rich_progress",
    "tqdm_progress",
]


def __getattr__(name: str) -> Any:
    module = _DEFERRED.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value  # found directly from now on
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_DEFERRED))
