"""The demo scenario: its calendar, its call reasons and the phrase banks behind them.

Six months of calls (2026-05-01 to 2026-10-31) over ten call reasons, plus a newly
announced price change that only occurs in October 2026 and a storm week (2026-09-07 to
2026-09-13) in which power outage calls surge. About a quarter of the calls carry a second
reason. The phrase banks are data (``talkthemes/data/demo_scenario.json``), loaded once.
"""

from __future__ import annotations

import datetime as dt
import functools
import itertools
import json
from collections.abc import Sequence
from importlib import resources
from random import Random
from typing import Any, TypeVar

__all__ = [
    "FIRST_DAY",
    "FORMATS",
    "KINDS",
    "LAST_DAY",
    "PRICE_CHANGE_MONTH",
    "REASONS",
    "STORM_WEEK",
    "choose_reasons",
    "day_weight",
    "demo_reasons",
    "load_scenario",
    "month_key",
    "pick",
    "weighted",
]

T = TypeVar("T")

FIRST_DAY = dt.date(2026, 5, 1)
LAST_DAY = dt.date(2026, 10, 31)
STORM_WEEK = (dt.date(2026, 9, 7), dt.date(2026, 9, 13))
PRICE_CHANGE_MONTH = "2026-10"
REASONS = (
    "billing_dispute",
    "payment_plan",
    "move_service",
    "power_outage",
    "meter_reading",
    "water_leak",
    "new_connection",
    "online_account",
    "solar_credit",
    "direct_debit",
    "price_change",
)
KINDS = ("regular", "off_topic", "short")
FORMATS = ("txt", "vtt", "csv")

_OUTAGE, _PRICE = "power_outage", "price_change"
_STORM_OUTAGE_SHARE = 0.45  # share of storm-week calls led by an outage
_SECOND_REASON_RATE = 0.27  # of regular calls, so about a quarter of all calls
_WEEKDAY_WEIGHT = (1.25, 1.1, 1.0, 1.0, 0.95, 0.35, 0.12)
_STORM_BOOST = (2.6, 2.2, 1.8, 1.5, 1.3, 1.3, 1.3)


@functools.lru_cache(maxsize=1)
def load_scenario() -> dict[str, Any]:
    """Return the demo's phrase banks (``talkthemes/data/demo_scenario.json``), loaded once."""
    data = resources.files("talkthemes").joinpath("data/demo_scenario.json")
    return json.loads(data.read_text(encoding="utf-8"))


def demo_reasons() -> dict[str, str]:
    """Return the demo scenario's call reasons, key to human label, in a fixed order."""
    reasons = load_scenario()["reasons"]
    return {key: reasons[key]["label"] for key in REASONS}


def pick(rng: Random, seq: Sequence[T]) -> T:
    """Like ``rng.choice``, cheaper: one float draw."""
    return seq[int(rng.random() * len(seq))]


def weighted(rng: Random, table: dict[str, float]) -> str:
    """Draw a key of ``table`` with probability proportional to its value."""
    return rng.choices(list(table), list(table.values()))[0]


def month_key(day: dt.date) -> str:
    """``yyyy-mm`` of a date."""
    return f"{day.year}-{day.month:02d}"


def day_weight(day: dt.date) -> float:
    """Relative call volume of a day: weekday pattern, storm surge, price-change month."""
    weight = _WEEKDAY_WEIGHT[day.weekday()]
    if STORM_WEEK[0] <= day <= STORM_WEEK[1]:
        weight *= _STORM_BOOST[(day - STORM_WEEK[0]).days]
    if month_key(day) == PRICE_CHANGE_MONTH:
        weight *= 1.08
    return weight


@functools.lru_cache(maxsize=32)
def _reason_cum(month: int, storm: bool, october: bool) -> list[float]:
    sc = load_scenario()
    reasons = sc["reasons"]
    weights = [reasons[k]["weight"] * sc["season"].get(k, {}).get(str(month), 1.0) for k in REASONS]
    for key, share, active in ((_PRICE, reasons[_PRICE]["october_weight"], october),
                               (_OUTAGE, _STORM_OUTAGE_SHARE, storm)):  # fmt: skip
        if active:
            i = REASONS.index(key)
            weights[i] = (sum(weights) - weights[i]) * share / (1 - share)
    return list(itertools.accumulate(weights))


def choose_reasons(rng: Random, day: dt.date, storm: bool) -> tuple[str, ...]:
    """Draw a call's lead reason for its day and, for about a quarter of calls, a second one."""
    cum = _reason_cum(day.month, storm, month_key(day) == PRICE_CHANGE_MONTH)
    first = rng.choices(REASONS, cum_weights=cum)[0]
    if rng.random() >= _SECOND_REASON_RATE:
        return (first,)
    if rng.random() < 0.5:
        return first, pick(rng, load_scenario()["second_affinity"][first])
    while True:
        second = rng.choices(REASONS, cum_weights=cum)[0]
        if second != first:
            return first, second
