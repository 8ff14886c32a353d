"""The test hook that lets a test stop a run at a known point and kill it there.

With the environment variable ``TALKTHEMES_TEST_PAUSE_AT`` set to a stage name,
:func:`pause_at` sleeps at that stage for ``TALKTHEMES_TEST_PAUSE_SECONDS`` seconds
(default 120) and logs a warning; when the variable is unset or names another stage it does
nothing. The stages: ``ingest-batch`` (after each batch an ingest commits), ``sweep-cell``
(after the first cell a sweep records), ``sweep-fit`` (on the worker, before a cell fits),
and the refresh's
(:data:`talkthemes.refresh.run.PAUSE_STAGES`). The crash-safety tests kill a run while it
sleeps and check that the previous state stayed current.
"""

from __future__ import annotations

import logging
import os
import time

__all__ = ["PAUSE_ENV", "PAUSE_SECONDS_ENV", "pause_at"]

PAUSE_ENV = "TALKTHEMES_TEST_PAUSE_AT"
PAUSE_SECONDS_ENV = "TALKTHEMES_TEST_PAUSE_SECONDS"

log = logging.getLogger(__name__)


def pause_at(stage: str, run: str) -> None:
    """Sleep here when ``TALKTHEMES_TEST_PAUSE_AT`` names ``stage`` (``run`` names the run
    in the warning: ``ingest``, ``sweep``, ``refresh``)."""
    if os.environ.get(PAUSE_ENV) == stage:
        seconds = float(os.environ.get(PAUSE_SECONDS_ENV, "120"))
        log.warning("%s paused at stage %s for %.0f s (%s)", run, stage, seconds, PAUSE_ENV)
        time.sleep(seconds)
