"""The shareable report: one self-contained HTML file that opens without a network.

:func:`write_report` puts the current version's story on one page: how K was chosen (the
sweep chart, the recommendation and its reasons), the theme map, a card per theme (its
words ranked by relevance, label, note, coverage and three excerpts from the calls it
leads, terms marked) and the themes' shares over time.

Charts are the viewer's (:mod:`talkthemes.charts`), the numbers the viewer's
(:mod:`talkthemes.view`). :mod:`.sections` builds each section from escaped text,
:mod:`.page` assembles the offline page, :mod:`.build` gathers and writes it.

Themes hidden as noise are left out of the trend chart and their cards are listed last,
folded, under "Hidden as noise", so a reader sees what was set aside.
"""

from __future__ import annotations

from talkthemes.report.build import build_report, write_report
from talkthemes.report.page import Report, render_report

__all__ = ["Report", "build_report", "render_report", "write_report"]
