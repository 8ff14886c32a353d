"""Refreshing the themes as transcripts arrive, keeping theme identities.

- :mod:`~talkthemes.refresh.run` — the run: ingest, prepare, check, fit, align, write;
- :mod:`~talkthemes.refresh.coherence` — do the current themes still fit the new transcripts;
- :mod:`~talkthemes.refresh.calibration` — the fits the same-theme cut-off is calibrated on;
- :mod:`~talkthemes.refresh.alert_step` — what the alerts read from the store and the
  previous model, and their example sentences;
- :mod:`~talkthemes.refresh.drift_step` — the drift report, theme plan and drift files.
"""

from __future__ import annotations
