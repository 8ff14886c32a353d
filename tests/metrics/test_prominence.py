"""Boilerplate-like themes: a large average share, almost never the lead."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.metrics.prominence import boilerplate_like, lead_ratio


def test_a_theme_in_every_call_that_leads_none_is_flagged() -> None:
    # Planted: 200 calls, three reason themes each leading a third, and a courtesy theme
    # taking 15% of every call and leading none.
    rng = np.random.default_rng(0)
    reasons = rng.integers(0, 3, 200)
    shares = np.zeros((200, 4))
    shares[np.arange(200), reasons] = 0.7
    shares[:, :3] += 0.05
    shares[:, 3] = 0.15
    lead = shares.argmax(axis=1)
    coverage = np.bincount(lead, minlength=4) / 200
    flags = boilerplate_like(coverage, shares.mean(axis=0))
    assert flags.tolist() == [False, False, False, True]


def test_small_themes_and_themes_that_lead_are_not_flagged() -> None:
    assert boilerplate_like([0.0, 0.001], [0.004, 0.066]).tolist() == [False, True]  # 0.4%
    assert boilerplate_like([0.10, 0.12], [0.10, 0.10]).tolist() == [False, False]
    assert boilerplate_like([0.01], [0.066], max_lead_ratio=0.1).tolist() == [False]


def test_lead_ratio() -> None:
    assert lead_ratio([0.2, 0.0], [0.1, 0.0]).tolist() == [2.0, np.inf]
    with pytest.raises(ValueError, match="same length"):
        lead_ratio([0.1], [0.1, 0.2])
