"""The drift chart of a refresh as PNG bytes: what the faces hand the refresh to draw.

The refresh itself (:mod:`talkthemes.refresh`) is domain code and draws nothing; the public API
passes :func:`drift_png` so every refresh made through it writes ``drift.png`` beside
``drift.json`` and ``drift.md``.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from talkthemes.charts.drift import drift_chart
from talkthemes.charts.render import chart_png
from talkthemes.versions.drift import drift_frame

__all__ = ["drift_png"]


def drift_png(report: Mapping[str, Any]) -> bytes:
    """The drift chart of a drift report (``drift.json``'s document) as PNG bytes.

    Parameters
    ----------
    report : mapping
        The refresh's drift report.

    Returns
    -------
    bytes
        A PNG image (:func:`talkthemes.charts.render.chart_png`).
    """
    return chart_png(drift_chart(drift_frame(report)))
