"""Where the map places themes: alike themes together."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.view.theme_map import theme_layout


def test_theme_layout_places_alike_themes_together() -> None:
    tt = np.array([[0.7, 0.2, 0.1, 0.0], [0.69, 0.21, 0.1, 0.0], [0.0, 0.1, 0.2, 0.7]])
    layout = theme_layout(tt)
    d01 = np.hypot(layout.x[0] - layout.x[1], layout.y[0] - layout.y[1])
    d02 = np.hypot(layout.x[0] - layout.x[2], layout.y[0] - layout.y[2])
    assert d01 < 0.05 * d02
    assert layout.explained == pytest.approx(1.0)  # three points always fit in a plane
