"""Charts: pure functions from a small, aggregated DataFrame to an Altair chart.

The Streamlit viewer and the static HTML report draw the same charts from these functions.
Each chart is a value (Altair 6 / Vega-Lite 6): nothing is rendered or written by the chart
functions, and tests read the specification through ``chart.to_dict()``. Themes are always
shown by the name their caller passes in the frame (the label, or the suggested name).

One module per chart family:

* :mod:`.style` — the shared look, the Okabe–Ito palette and the input checks;
* :mod:`.sweep` — Choose K (:func:`sweep_chart`);
* :mod:`.theme_map` — the theme map (:func:`theme_map_chart`, :func:`theme_map_caption`);
* :mod:`.terms` — a theme's words (:func:`term_chart`);
* :mod:`.trends` — over time (:func:`trend_chart`, :func:`segment_chart`,
  :func:`movers_chart`);
* :mod:`.drift` — what a refresh changed (:func:`drift_chart`);
* :mod:`.history` — the versions' timeline (:func:`timeline_chart`);
* :mod:`.render` — writing a chart as PNG or offline HTML.

Import a chart from its module: ``from talkthemes.charts.trends import trend_chart``.
"""

from __future__ import annotations
