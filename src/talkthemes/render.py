"""Writing charts to files: moved to :mod:`talkthemes.charts.render`.

# compat: re-exports until the merge
"""

from talkthemes.charts.render import chart_html, chart_png, save_chart  # compat

__all__ = ["chart_html", "chart_png", "save_chart"]
