"""The Choose K data without a sweep, and the scalar columns the chart takes."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from talkthemes.errors import NotReadyError
from talkthemes.view.choose_k import load_sweep, scalar_columns
from talkthemes.workspace import Workspace


def test_load_sweep_without_one(tmp_path: Path) -> None:
    ws = Workspace(tmp_path)
    ws.init()
    with pytest.raises(NotReadyError, match="talkthemes sweep"):
        load_sweep(ws)


def test_scalar_columns_drops_lists() -> None:
    frame = pd.DataFrame({"a": [1, 2], "b": [[1], [2]], "c": ["x", "y"]})
    assert list(scalar_columns(frame)) == ["a", "c"]
