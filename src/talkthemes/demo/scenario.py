"""The demo scenario: its calendar, its call reasons and the phrase banks behind them.

Six months of calls (2026-05-01 to 2026-10-31) over ten call reasons, plus a newly
announced price change that only occurs in October 2026 and a storm week (2026-09-07 to
2026-09-13) in which power outage calls surge. About a quarter of the calls carry a second
reason. The phrase banks are data (``talkthemes/data/demo_scenario.json``), loaded once.

The utility also has a Spanish line (language ``es``): its phrase banks
(``talkthemes/data/demo_scenario_es.json``) were written in Spanish for it, with eight call
reasons of their own, some shared with the English line (same keys: ``billing_dispute``,
``power_outage``, ...), two that only the Spanish line gets (``letters_in_spanish``,
``account_holder``). Same calendar, storm week and price-change month.
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

from talkthemes.errors import InputError

__all__ = [
    "FIRST_DAY",
    "FORMATS",
    "KINDS",
    "LANGUAGES",
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
    "reason_keys",
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
#: Languages the demo can write calls in: the English line and the Spanish line.
LANGUAGES = ("en", "es")
FORMATS = ("txt", "vtt", "csv")

_OUTAGE, _PRICE = "power_outage", "price_change"
_STORM_OUTAGE_SHARE = 0.45  # share of storm-week calls led by an outage
_SECOND_REASON_RATE = 0.27  # of regular calls, so about a quarter of all calls
_WEEKDAY_WEIGHT = (1.25, 1.1, 1.0, 1.0, 0.95, 0.35, 0.12)
_STORM_BOOST = (2.6, 2.2, 1.8, 1.5, 1.3, 1.3, 1.3)


def _check_language(language: str) -> None:
    if language not in LANGUAGES:
        raise InputError(
            f"demo language {language!r} is not supported; supported: {', '.join(LANGUAGES)}"
        )


@functools.lru_cache(maxsize=len(LANGUAGES))
def load_scenario(language: str = "en") -> dict[str, Any]:
    """Return the phrase banks of one line of the demo, loaded once.

    Parameters
    ----------
    language : str
        ``en`` (``talkthemes/data/demo_scenario.json``) or ``es``
        (``talkthemes/data/demo_scenario_es.json``).

    Raises
    ------
    InputError
        When the language is not one of :data:`LANGUAGES`.
    """
    _check_language(language)
    name = "demo_scenario.json" if language == "en" else f"demo_scenario_{language}.json"
    data = resources.files("talkthemes").joinpath(f"data/{name}")
    return json.loads(data.read_text(encoding="utf-8"))


def reason_keys(language: str = "en") -> tuple[str, ...]:
    """The call reasons of one line of the demo, in a fixed order (``REASONS`` for ``en``)."""
    return REASONS if language == "en" else tuple(load_scenario(language)["reasons"])


def demo_reasons(language: str = "en") -> dict[str, str]:
    """Return one line's call reasons, key to human label (in that line's language)."""
    reasons = load_scenario(language)["reasons"]
    return {key: reasons[key]["label"] for key in reason_keys(language)}


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


@functools.lru_cache(maxsize=64)
def _reason_cum(month: int, storm: bool, october: bool, language: str = "en") -> list[float]:
    sc, keys = load_scenario(language), reason_keys(language)
    reasons = sc["reasons"]
    weights = [reasons[k]["weight"] * sc["season"].get(k, {}).get(str(month), 1.0) for k in keys]
    for key, share, active in ((_PRICE, reasons[_PRICE]["october_weight"], october),
                               (_OUTAGE, _STORM_OUTAGE_SHARE, storm)):  # fmt: skip
        if active and key in keys:
            i = keys.index(key)
            weights[i] = (sum(weights) - weights[i]) * share / (1 - share)
    return list(itertools.accumulate(weights))


def choose_reasons(rng: Random, day: dt.date, storm: bool, language: str = "en") -> tuple[str, ...]:
    """Draw a call's lead reason for its day and, for about a quarter of calls, a second one."""
    cum = _reason_cum(day.month, storm, month_key(day) == PRICE_CHANGE_MONTH, language)
    keys = reason_keys(language)
    first = rng.choices(keys, cum_weights=cum)[0]
    if rng.random() >= _SECOND_REASON_RATE:
        return (first,)
    if rng.random() < 0.5:
        return first, pick(rng, load_scenario(language)["second_affinity"][first])
    while True:
        second = rng.choices(keys, cum_weights=cum)[0]
        if second != first:
            return first, second
