"""The stream of demo calls: dates, reasons, kinds and formats, one call after another.

One ``random.Random(seed)`` stream drives the English line, so a (size, seed) pair always
gives the same corpus. With more than one language, the calls are split across the lines
by :data:`LANGUAGE_SHARES` (en and es: 75 % / 25 %); each other line has its own stream,
seeded from the seed and its code, and its calls carry ids prefixed with the code
(``ES-C2026-05-000123``). The lines' calls are merged in date order.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import heapq
import itertools
import math
from collections.abc import Iterator, Sequence
from random import Random

from talkthemes.calls.model import normalised_hash
from talkthemes.demo.builder import Builder, regular, scripted, short
from talkthemes.demo.records import DemoCall, DemoTurn, RenderStyle
from talkthemes.demo.scenario import (
    FIRST_DAY,
    FORMATS,
    KINDS,
    LANGUAGES,
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

__all__ = ["LANGUAGE_SHARES", "iter_demo_calls", "language_sizes"]

#: Relative call volume of each line when several are asked for (en and es: 3 to 1).
LANGUAGE_SHARES = {"en": 3.0, "es": 1.0}
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


def _make_call(rng: Random, call_id: str, day: dt.date, language: str = "en") -> DemoCall:
    sc = load_scenario(language)
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
    b = Builder(rng, day, roles, memo, language)
    greetings = sc["scripts"]["greeting"]  # each agent has a favourite variant
    b.greeting = greetings[agent_i % len(greetings)] if rng.random() < 0.8 else pick(rng, greetings)
    kind = rng.choices(KINDS, _KIND_WEIGHTS)[0]
    reasons, detail = choose_reasons(rng, day, storm, language), ""
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


def language_sizes(size: int, languages: Sequence[str] = ("en",)) -> dict[str, int]:
    """Split ``size`` calls across the demo's lines by :data:`LANGUAGE_SHARES`.

    Parameters
    ----------
    size : int
        Number of calls in all.
    languages : sequence of str
        Codes from :data:`~talkthemes.demo.scenario.LANGUAGES`; duplicates count once.

    Returns
    -------
    dict of str to int
        Calls per language, in the order of ``LANGUAGES``, summing to ``size`` (largest
        remainders; ``("en", "es")`` with 3000 calls gives 2250 and 750).

    Raises
    ------
    InputError
        When a code is not supported or none is given.
    """
    unknown = [code for code in languages if code not in LANGUAGES]
    if unknown or not languages:
        what = f"unknown demo language {unknown[0]!r}" if unknown else "no demo language given"
        raise InputError(f"{what}; supported: {', '.join(LANGUAGES)}")
    codes = [code for code in LANGUAGES if code in languages]
    total = sum(LANGUAGE_SHARES[code] for code in codes)
    exact = {code: size * LANGUAGE_SHARES[code] / total for code in codes}
    sizes = {code: math.floor(exact[code]) for code in codes}
    by_remainder = sorted(codes, key=lambda c: (sizes[c] - exact[c], codes.index(c)))
    for code in by_remainder[: size - sum(sizes.values())]:
        sizes[code] += 1
    return sizes


def iter_demo_calls(
    size: int = 3000, seed: int = 7, *, languages: Sequence[str] = ("en",)
) -> Iterator[DemoCall]:
    """Yield the calls of the demo scenario in date order, without writing files.

    Parameters
    ----------
    size : int
        Number of calls over the six months (2026-05-01 to 2026-10-31), all lines together.
    seed : int
        Seed of the ``random.Random`` streams: the same (size, seed, languages) always
        yields the same calls. A different size gives a different corpus.
    languages : sequence of str
        Lines of the demo to call: ``en`` (the default), ``es`` or both. The calls are split
        by :func:`language_sizes`; the English calls are those of
        ``iter_demo_calls(<English share>, seed)``, and each other line's ids start with its
        code (``ES-C2026-05-000123``).

    Returns
    -------
    Iterator of DemoCall
        Calls in date order; no two have the same text by ingest's duplicate test.

    Raises
    ------
    InputError
        When ``size`` is below 1 or a language is not supported.
    """
    if size < 1:
        raise InputError(f"demo size must be at least 1 call, got {size}")
    sizes = language_sizes(size, languages)
    streams = [_calls(n, seed, code) for code, n in sizes.items() if n]
    if len(streams) == 1:
        return streams[0]
    return heapq.merge(*streams, key=lambda call: call.date)


def _calls(size: int, seed: int, language: str = "en") -> Iterator[DemoCall]:
    # The English line keeps the stream it always had; another line seeds its own from
    # the seed and its code (a str seed is hashed, so the streams are unrelated).
    rng = Random(seed) if language == "en" else Random(f"{seed}/{language}")
    prefix = "" if language == "en" else f"{language.upper()}-"
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
            call = _make_call(rng, f"{prefix}C{month}-{counters[month]:06d}", day, language)
            if call.kind == "regular":
                key = hashlib.blake2b(call.text.lower().encode(), digest_size=12).digest()
            else:
                key = normalised_hash(call.text)
            if key not in seen:
                break
        seen.add(key)
        yield call
