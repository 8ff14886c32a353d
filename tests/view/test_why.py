"""Why this call: each term's pull (count × theme weight, normalised) on the top themes."""

from __future__ import annotations

import numpy as np
import pytest
from tests.view.data import make_version

from talkthemes.errors import InputError
from talkthemes.view.why import why_frame

VOCAB = ["bill", "pay", "power", "outage", "meter", "read"]
PHI = np.array(
    [
        [0.4, 0.4, 0.05, 0.05, 0.05, 0.05],
        [0.05, 0.05, 0.4, 0.4, 0.05, 0.05],
        [0.1, 0.1, 0.1, 0.1, 0.3, 0.3],
    ]
)


def test_pulls_are_counts_times_weights_normalised_per_theme() -> None:
    version = make_version(np.array([[0.6, 0.3, 0.1]]), topic_terms=PHI, vocabulary=VOCAB)
    counts = np.array([3.0, 0.0, 1.0, 2.0, 0.0, 0.0])
    frame = why_frame(version, counts, np.array([0.6, 0.3, 0.1]), names=["A", "B", "C"])
    assert frame["theme_id"].drop_duplicates().tolist() == [11, 12, 13]  # by share
    first = frame[frame["theme_id"] == 11]
    total = 3 * 0.4 + 1 * 0.05 + 2 * 0.05
    assert first["term"].tolist() == ["bill", "outage", "power"]  # largest pull first
    assert first["pull"].tolist() == pytest.approx([1.2 / total, 0.1 / total, 0.05 / total])
    assert first["count"].tolist() == [3, 2, 1] and first["rank"].tolist() == [1, 2, 3]
    for _, group in frame.groupby("theme_id"):
        assert group["pull"].sum() == pytest.approx(1.0)  # every term of the call shown here
    second = frame[frame["theme_id"] == 12]
    assert second["term"].tolist()[0] == "outage"  # the call's words that pulled it to B


def test_small_shares_and_term_limits() -> None:
    version = make_version(np.array([[0.9, 0.08, 0.02]]), topic_terms=PHI, vocabulary=VOCAB)
    counts = np.array([1.0, 1.0, 1.0, 1.0, 1.0, 1.0])
    frame = why_frame(version, counts, np.array([0.9, 0.08, 0.02]), terms=2)
    assert frame["theme_id"].drop_duplicates().tolist() == [11, 12]  # 2% is below the least
    assert (frame.groupby("theme_id").size() == 2).all()
    assert frame["name"].iloc[0] == version.names()[0]
    empty = why_frame(version, np.zeros(6), np.array([0.9, 0.08, 0.02]))
    assert empty.empty and list(empty.columns)[:2] == ["theme_id", "name"]
    with pytest.raises(InputError, match="5 counts"):
        why_frame(version, np.zeros(5), np.array([0.9, 0.08, 0.02]))
