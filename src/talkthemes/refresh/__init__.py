"""Refreshing the themes as transcripts arrive, keeping theme identities.

- :mod:`~talkthemes.refresh.run` — the run: ingest, prepare, check, fit, align, write;
- :mod:`~talkthemes.refresh.coherence` — do the current themes still fit the new transcripts;
- :mod:`~talkthemes.refresh.calibration` — the fits the same-theme cut-off is calibrated on;
- :mod:`~talkthemes.refresh.drift_step` — the drift report, theme plan and drift files.
"""

from __future__ import annotations

from talkthemes.refresh.coherence import MIN_NEW_FOR_CHECK, coherence_check
from talkthemes.refresh.run import PAUSE_STAGES, RefreshResult, refresh

# compat: re-exports until the merge (a private helper the tests imported from here)
from talkthemes.refresh.run import _ingest_paths as _ingest_paths

__all__ = ["MIN_NEW_FOR_CHECK", "PAUSE_STAGES", "RefreshResult", "coherence_check", "refresh"]
