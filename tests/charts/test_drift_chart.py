"""What a refresh changed: new themes first, carried by distance moved, retired last."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import tests.charts.spec as vl

from talkthemes.charts.drift import drift_chart
from talkthemes.errors import InputError


def test_drift_chart_orders_new_carried_retired() -> None:
    drift = pd.DataFrame(
        {
            "theme_id": [1, 2, 3, 4, 5],
            "name": ["Late fees", "Outage", "Modem", "Old promo", "Roaming"],
            "status": ["carried", "new", "carried", "retired", "carried"],
            "distance": [0.1, np.nan, 0.4, np.nan, 0.25],
            "coverage_before": [0.2, np.nan, 0.3, 0.1, 0.4],
            "coverage_after": [0.25, 0.1, 0.2, np.nan, 0.45],
        }
    )
    spec = drift_chart(drift).to_dict()
    left, right = spec["hconcat"]
    assert spec["resolve"]["scale"]["y"] == "shared"
    heads = next(u for u in vl.units(left) if vl.mark(u) == "point")
    assert heads["encoding"]["y"]["sort"] == [
        "Outage",
        "Modem",
        "Roaming",
        "Late fees",
        "Old promo",
    ]
    assert heads["encoding"]["x"]["field"] == "distance"
    assert heads["encoding"]["x"]["scale"]["domain"] == [0.0, 1.0]
    assert heads["encoding"]["color"]["scale"]["domain"] == ["new", "carried", "retired"]
    words = next(u for u in vl.units(left) if vl.mark(u) == "text")
    assert words["encoding"]["text"]["field"] == "status"
    fields = {u["encoding"]["x"]["field"] for u in vl.units(right)}
    assert fields == {"coverage_before", "coverage_after"}
    vl.assert_palette(spec)
    bad = drift.assign(status=["carried", "new", "kept", "retired", "carried"])
    with pytest.raises(InputError, match="row 2: status 'kept'"):
        drift_chart(bad)


# --------------------------------------------------------------------------- render
