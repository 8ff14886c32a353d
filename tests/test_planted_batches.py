"""Planted batches: periods, explicit reason weights, exact quotas and id prefixes (what the
alert harness builds its histories and next months from)."""

from __future__ import annotations

import datetime as dt
from collections import Counter

import pytest

from talkthemes.demo.planted import PlantedSpec, iter_planted_calls, planted_reasons
from talkthemes.errors import InputError


def test_exact_quotas_meet_the_weights_and_dates_stay_in_the_period() -> None:
    spec = PlantedSpec(reasons=4, calls=400, seed=5, weights=(4, 2, 1, 1), short=0.05,
                       exact=True, first_day=dt.date(2027, 5, 1), days=31,
                       prefix="B7")  # fmt: skip
    calls = list(iter_planted_calls(spec))
    keys = list(planted_reasons(4))
    counts = Counter(c.reason for c in calls)
    assert counts[""] == 20 and sum(c.kind == "short" for c in calls) == 20
    assert [counts[k] for k in keys] == [190, 95, 48, 47]  # 380 by 4:2:1:1, largest remainders
    assert all(dt.date(2027, 5, 1) <= c.date <= dt.date(2027, 5, 31) for c in calls)
    assert calls[0].call_id == "B7-00001" and len({c.call_id for c in calls}) == 400
    assert [c.turns for c in iter_planted_calls(spec)] == [c.turns for c in calls]


def test_weights_without_quotas_draw_in_proportion() -> None:
    calls = list(iter_planted_calls(PlantedSpec(reasons=3, calls=900, seed=1,
                                                weights=(8, 1, 1))))  # fmt: skip
    counts = Counter(c.reason for c in calls if c.reason)
    first = next(iter(planted_reasons(3)))
    assert 0.72 < counts[first] / sum(counts.values()) < 0.88


def test_default_specs_are_unchanged_by_the_new_fields() -> None:
    spec = PlantedSpec(reasons=5, calls=50, seed=2)
    same = PlantedSpec(reasons=5, calls=50, seed=2, weights=spec.reason_weights())
    assert [c.turns for c in iter_planted_calls(spec)] == [
        c.turns for c in iter_planted_calls(same)
    ]
    assert spec.first_day == dt.date(2027, 2, 1) and spec.days == 89 and spec.prefix == "AV"


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"reasons": 3, "weights": (1, 2)}, "weights must be 3 positive numbers"),
        ({"reasons": 2, "weights": (1, 0)}, "weights must be 2 positive numbers"),
        ({"days": 0}, "days must be at least 1"),
        ({"prefix": "B-1"}, "prefix must be letters"),
    ],
)
def test_bad_batch_settings_are_refused(kwargs: dict, message: str) -> None:
    with pytest.raises(InputError, match=message):
        PlantedSpec(**kwargs)
