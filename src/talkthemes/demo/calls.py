"""The stream of demo calls: dates, reasons, kinds and formats, one call after another.

One ``random.Random(seed)`` stream drives everything, so a (size, seed) pair always gives
the same corpus.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import itertools
import math
from collections.abc import Iterator
from random import Random

from talkthemes.calls.model import normalised_hash
from talkthemes.demo.builder import Builder, regular, scripted, short
from talkthemes.demo.records import DemoCall, DemoTurn, RenderStyle
from talkthemes.demo.scenario import (
    FIRST_DAY,
    FORMATS,
    KINDS,
    LAST_DAY,
    STORM_WEEK,
    choose_reasons,
    day_weight,
    load_scenario,
    month_key,
    pick,
    weighted,
)
from talkthemes.errors import InputError

__all__ = ["iter_demo_calls"]

_KIND_WEIGHTS = (0.925, 0.035, 0.04)
_FORMAT_WEIGHTS = (0.5, 0.25, 0.25)


def _style(rng: Random, fmt: str) -> RenderStyle:
    if fmt == "txt":
        stamps = rng.choices(("none", "bracket", "plain"), (0.5, 0.35, 0.15))[0]
        return RenderStyle(timestamps=stamps, wrap=rng.random() < 0.2)
    if fmt == "vtt":
        return RenderStyle(cue_ids=rng.random() < 0.5, close_voice=rng.random() < 0.2,
                           curly=rng.random() < 0.15, note=rng.random() < 0.3)  # fmt: skip
    return RenderStyle()


def _make_call(rng: Random, call_id: str, day: dt.date) -> DemoCall:
    sc = load_scenario()
    storm = STORM_WEEK[0] <= day <= STORM_WEEK[1]
    site = weighted(rng, sc["site_weights"])
    roster = sc["sites"][site]
    agent_i = rng.randrange(len(roster))
    agent = roster[agent_i]
    fmt = rng.choices(FORMATS, _FORMAT_WEIGHTS)[0]
    styles = sc["label_styles"][fmt]
    labels = rng.choices([s[0] for s in styles], [s[1] for s in styles])[0]
    memo = {"agent": agent, "customer": pick(rng, sc["customers"]), "company": sc["company"]}
    roles = {"agent": labels[0].replace("{agent}", agent), "customer": labels[1]}
    b = Builder(rng, day, roles, memo)
    greetings = sc["scripts"]["greeting"]  # each agent has a favourite variant
    b.greeting = greetings[agent_i % len(greetings)] if rng.random() < 0.8 else pick(rng, greetings)
    kind = rng.choices(KINDS, _KIND_WEIGHTS)[0]
    reasons, detail = choose_reasons(rng, day, storm), ""
    if kind == "regular":
        regular(b, reasons, storm)
        queue = weighted(rng, sc["reasons"][reasons[0]]["queues"])
    elif kind == "off_topic":
        detail = weighted(rng, sc["off_topic_weights"])
        b.local = sc["off_topic"][detail]["slots"]
        scripted(b, sc["off_topic"][detail]["turns"])
        reasons = ()
        queue = weighted(rng, {"general": 0.7, "billing": 0.1, "faults": 0.1, "moves": 0.1})
    else:
        detail = short(b, reasons[0])
        reasons = reasons[:1] if detail == "dropped" else ()
        queue = pick(rng, ("billing", "faults", "general", "moves"))
    channel = rng.choices(("phone", "callback", "app"), (0.85, 0.1, 0.05))[0]
    return DemoCall(
        call_id=call_id, date=day, queue=queue, site=site, channel=channel, agent=agent,
        duration_s=math.ceil(b.t + 1 + rng.random() * 5), turns=tuple(map(DemoTurn._make, b.turns)),
        reasons=reasons, kind=kind, detail=detail, format=fmt, style=_style(rng, fmt),
        words_per_second=round(b.rate, 3),
    )  # fmt: skip


def iter_demo_calls(size: int = 3000, seed: int = 7) -> Iterator[DemoCall]:
    """Yield the calls of the demo scenario in date order, without writing files.

    Parameters
    ----------
    size : int
        Number of calls over the six months (2026-05-01 to 2026-10-31).
    seed : int
        Seed of the single ``random.Random`` stream: the same (size, seed) pair always
        yields the same calls. A different size gives a different corpus.

    Returns
    -------
    Iterator of DemoCall
        Calls in date order; no two have the same text by ingest's duplicate test.

    Raises
    ------
    InputError
        When ``size`` is below 1.
    """
    if size < 1:
        raise InputError(f"demo size must be at least 1 call, got {size}")
    return _calls(size, seed)


def _calls(size: int, seed: int) -> Iterator[DemoCall]:
    rng = Random(seed)
    days = [FIRST_DAY + dt.timedelta(days=i) for i in range((LAST_DAY - FIRST_DAY).days + 1)]
    cum = list(itertools.accumulate(map(day_weight, days)))
    counters: dict[str, int] = {}
    # No two transcripts alike by ingest's duplicate test. Short and off-topic calls can
    # collide; regular calls carry too many random numbers to, so a cheap key will do.
    seen: set[str | bytes] = set()
    for day in sorted(rng.choices(days, cum_weights=cum, k=size)):
        month = month_key(day)
        counters[month] = counters.get(month, 0) + 1
        for _ in range(50):
            call = _make_call(rng, f"C{month}-{counters[month]:06d}", day)
            if call.kind == "regular":
                key = hashlib.blake2b(call.text.lower().encode(), digest_size=12).digest()
            else:
                key = normalised_hash(call.text)
            if key not in seen:
                break
        seen.add(key)
        yield call
