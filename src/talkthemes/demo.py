"""The invented demo scenario: six months of calls to a regional water and power utility.

Every name in it is invented: the utility (Tallowmere Water and Power), its three contact
centre sites, the agents, the callers, the streets and the towns. Account numbers, phone
numbers (555-01xx), e-mail addresses (``example.com`` / ``example.org``, reserved by
RFC 2606) and the Luhn-valid card-like numbers are made up so that the scrub step has
something to find.

The calls run from 2026-05-01 to 2026-10-31 over ten call reasons, plus a newly announced
price change that only occurs in October 2026 and a storm week (2026-09-07 to 2026-09-13)
in which power outage calls surge. About a quarter of the calls carry a second reason; a
few are off topic or very short. The phrase banks are data
(``talkthemes/data/demo_scenario.json``); this module composes calls from them with one
``random.Random(seed)`` stream, so a (size, seed) pair always gives the same corpus.

:func:`write_demo` writes the corpus in mixed formats (``.txt``, WebVTT, a per-turn CSV)
with a manifest, and the answer key ``truth.csv`` outside the folder that gets ingested.
:func:`iter_demo_calls` yields the calls in memory, for benchmarks.
"""

from __future__ import annotations

import contextlib
import csv
import datetime as dt
import functools
import hashlib
import io
import itertools
import json
import logging
import math
import re
import shutil
import unicodedata
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from random import Random
from typing import Any, NamedTuple, TypeVar

from talkthemes.errors import InputError
from talkthemes.ingest.model import normalised_hash
from talkthemes.workspace import atomic_dir, atomic_write_text

__all__ = [
    "FIRST_DAY",
    "LAST_DAY",
    "PRICE_CHANGE_MONTH",
    "REASONS",
    "STORM_WEEK",
    "DemoCall",
    "DemoFiles",
    "DemoTurn",
    "RenderStyle",
    "demo_reasons",
    "iter_demo_calls",
    "render_txt",
    "render_vtt",
    "write_demo",
]

logger = logging.getLogger(__name__)
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
_KIND_WEIGHTS = (0.925, 0.035, 0.04)
_FORMAT_WEIGHTS = (0.5, 0.25, 0.25)
_CARD_REASONS = frozenset({"billing_dispute", "payment_plan", "direct_debit", "price_change"})
_WEEKDAY_WEIGHT = (1.25, 1.1, 1.0, 1.0, 0.95, 0.35, 0.12)
_STORM_BOOST = (2.6, 2.2, 1.8, 1.5, 1.3, 1.3, 1.3)
_MONTHS = ("January", "February", "March", "April", "May", "June", "July", "August",
           "September", "October", "November", "December")  # fmt: skip
_MEMO = frozenset({"acct", "phone", "email", "card", "house", "street", "place", "bank_acct",
                   "branch", "daypart", "percent", "agent", "customer", "company"})  # fmt: skip
_SLOT = re.compile(r"\{(\w+)\}")
_SENTENCE_END = re.compile(r"(?<=[.?!])\s+")
_MANIFEST_COLUMNS = ("call_id", "date", "queue", "site", "duration_s", "channel")
_TURN_COLUMNS = ("call_id", "speaker", "start", "text")
_TRUTH_COLUMNS = ("call_id", "date", "location", "format", "kind", "primary_reason",
                  "secondary_reason", "detail")  # fmt: skip


class DemoTurn(NamedTuple):
    """One turn of a demo call: ``(speaker_label, role, text, start_seconds)``."""

    speaker: str
    role: str
    text: str
    start: float


@dataclass(frozen=True, slots=True)
class RenderStyle:
    """How one call is laid out in its file.

    ``timestamps`` (``none``, ``bracket`` for ``[hh:mm:ss]``, ``plain``) and ``wrap`` (long
    turns continue on unlabelled lines) apply to ``.txt``; ``cue_ids``, ``close_voice``
    (``</v>`` tags), ``curly`` (typographic apostrophes) and ``note`` (a ``NOTE`` block)
    apply to WebVTT.
    """

    timestamps: str = "none"
    wrap: bool = False
    cue_ids: bool = False
    close_voice: bool = False
    curly: bool = False
    note: bool = False


@dataclass(frozen=True, slots=True)
class DemoCall:
    """One invented call, its metadata and its answer key.

    Attributes
    ----------
    call_id : str
        ``C<yyyy>-<mm>-<nnnnnn>``, numbered within the month in date order.
    date : datetime.date
    queue, site, channel, agent : str
    duration_s : int
    turns : tuple of DemoTurn
    reasons : tuple of str
        Lead reason, then the second reason if any; empty for off-topic calls and short
        calls cut off before a reason was given.
    kind : str
        ``regular``, ``off_topic`` or ``short``.
    detail : str
        Sub-kind of off-topic and short calls (``wrong_number``, ``dropped``, ...).
    format : str
        ``txt``, ``vtt`` or ``csv``: how :func:`write_demo` writes it.
    style : RenderStyle
    words_per_second : float
        Speaking rate behind the turn times.
    """

    call_id: str
    date: dt.date
    queue: str
    site: str
    channel: str
    agent: str
    duration_s: int
    turns: tuple[DemoTurn, ...]
    reasons: tuple[str, ...]
    kind: str
    detail: str
    format: str
    style: RenderStyle = field(default_factory=RenderStyle)
    words_per_second: float = 2.6

    @property
    def text(self) -> str:
        """All turns' text joined by newlines."""
        return "\n".join(t.text for t in self.turns)

    @property
    def word_count(self) -> int:
        """Number of whitespace-separated words over all turns."""
        return sum(len(t.text.split()) for t in self.turns)


@dataclass(frozen=True, slots=True)
class DemoFiles:
    """Where :func:`write_demo` put things, and how many calls of each format.

    Attributes
    ----------
    root : Path
        The output folder.
    exports : Path
        The folder to ingest: ``calls/``, ``turns.csv`` and ``manifest.csv``.
    manifest, truth : Path
        ``exports/manifest.csv`` and ``root/truth.csv`` (the answer key, never ingested).
    turns : Path or None
        ``exports/turns.csv``, or ``None`` when no call was written as CSV rows. Beyond
        :data:`CSV_CALLS_PER_FILE` such calls, the rest go to ``turns-002.csv``, ….
    inbox : Path or None
        ``root/inbox`` with October's calls when they were held back, else ``None``.
    counts, inbox_counts : dict of str to int
        Calls per format (``txt``, ``vtt``, ``csv``) in ``exports`` and in ``inbox``.
    """

    root: Path
    exports: Path
    manifest: Path
    truth: Path
    turns: Path | None
    inbox: Path | None
    counts: dict[str, int]
    inbox_counts: dict[str, int]

    @property
    def total(self) -> int:
        """All calls written, exports and inbox together."""
        return sum(self.counts.values()) + sum(self.inbox_counts.values())


# -- scenario data and slot values ---------------------------------------------------


@functools.lru_cache(maxsize=1)
def _scenario() -> dict[str, Any]:
    data = resources.files("talkthemes").joinpath("data/demo_scenario.json")
    return json.loads(data.read_text(encoding="utf-8"))


_PARTS: dict[str, tuple[str, ...]] = {}  # template -> literal, slot, literal, ... (a cache)


def demo_reasons() -> dict[str, str]:
    """Return the demo scenario's call reasons, key to human label, in a fixed order."""
    reasons = _scenario()["reasons"]
    return {key: reasons[key]["label"] for key in REASONS}


def _ch(rng: Random, seq: Sequence[T]) -> T:
    """Like ``rng.choice``, cheaper: one float draw."""
    return seq[int(rng.random() * len(seq))]


def _ordinal(n: int) -> str:
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


def _luhn_check_digit(payload: str) -> str:
    """Digit that makes ``payload + digit`` pass the Luhn (mod 10) check."""
    total = 0
    for i, ch in enumerate(reversed(payload)):
        d = int(ch) * (2 if i % 2 == 0 else 1)
        total += d - 9 if d > 9 else d
    return str((10 - total % 10) % 10)


def _money(rng: Random, lo: float, hi: float) -> str:
    value, r = lo + rng.random() * (hi - lo), rng.random()
    if r < 0.6:
        return f"${value:,.2f}"
    return f"{round(value)} dollars" if r < 0.85 else f"about {round(value, -1):.0f} dollars"


def _email(b: _Builder) -> str:
    rng = b.rng
    name = unicodedata.normalize("NFKD", b.slot("customer")).encode("ascii", "ignore").decode()
    name, n = name.lower(), rng.randrange(1, 99)
    word = _ch(rng, ("home", "mail", "fern", "brook", "vale", "moss"))
    local = _ch(rng, (f"{name}.{n}", f"{name}{n}", f"{name}_{word}", f"{name[0]}.{word}{n}"))
    domain = "example.com" if rng.random() < 0.6 else "example.org"
    if rng.random() < 0.1:  # said aloud rather than normalised by the transcriber
        return f"{local.replace('.', ' dot ')} at {domain.replace('.', ' dot ')}"
    return f"{local}@{domain}"


def _card(rng: Random) -> str:
    payload = _ch(rng, ("4000", "4111", "5100", "5413")) + f"{rng.randrange(10**11):011d}"
    number = payload + _luhn_check_digit(payload)
    if rng.random() < 0.6:
        return " ".join(number[i : i + 4] for i in range(0, 16, 4))
    return number


def _phone(rng: Random) -> str:
    tail, r = f"{rng.randrange(100):02d}", rng.random()
    if r < 0.08:
        words = ("oh", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine")
        return "five five five, oh one " + " ".join(words[int(c)] for c in tail)
    return f"555-01{tail}" if r < 0.7 else f"555 01{tail}"


def _other_address(b: _Builder) -> str:
    slots = b.sc["slots"]
    return f"{b.rng.randint(1, 140)} {_ch(b.rng, slots['street'])}, {_ch(b.rng, slots['place'])}"


_GENERATED: dict[str, Callable[[_Builder], str]] = {
    "acct": lambda b: (f"AC-{b.rng.randrange(1, 10**6):06d}" if b.rng.random() < 0.7
                       else str(b.rng.randrange(10**7, 10**8))),
    "phone": lambda b: _phone(b.rng),
    "email": _email,
    "card": lambda b: _card(b.rng),
    "amount": lambda b: _money(b.rng, 60, 420),
    "amount_small": lambda b: _money(b.rng, 12, 95),
    "amount_big": lambda b: _money(b.rng, 380, 1450),
    "house": lambda b: str(b.rng.randint(1, 140)),
    "date_day": lambda b: _ordinal(b.rng.randint(1, 28)),
    "month_prev": lambda b: _MONTHS[(b.date.month - 2) % 12],
    "month_next": lambda b: _MONTHS[b.date.month % 12],
    "n_hundreds": lambda b: str(b.rng.randrange(3, 60) * 20),
    "digits": lambda b: f"{b.rng.randrange(10**5):05d}",
    "kwh": lambda b: str(b.rng.randrange(80, 2400)),
    "ref": lambda b: f"{_ch(b.rng, ('TW', 'WP', 'JB', 'FR'))}-{b.rng.randrange(10**5, 10**6)}",
    "daypart": lambda b: "morning" if b.rng.random() < 0.55 else "afternoon",
    "bank_acct": lambda b: str(b.rng.randrange(10**7, 10**8)),
    "branch": lambda b: "-".join(f"{b.rng.randrange(100):02d}" for _ in range(3)),
    "other_addr": _other_address,
}  # fmt: skip


# -- disfluency ----------------------------------------------------------------------


def _lower_first(text: str) -> str:
    first = text.split(" ", 1)[0]
    if first in ("I", "I'm", "I've", "I'll", "I'd") or first[:2].isupper():
        return text
    return text[:1].lower() + text[1:]


def _disfluent(text: str, rng: Random, fillers: dict[str, list[str]]) -> str:
    """Add fillers, a repetition or a false start, the way people speak."""
    words = text.split(" ")
    n = len(words)
    if n > 8 and rng.random() < 0.4:
        i = rng.randrange(3, n - 2)
        if words[i - 1][-1:].isalpha():
            words[i - 1] += ","
            words.insert(i, _ch(rng, fillers["mid"]) + ",")
    if n > 5 and rng.random() < 0.17:
        i = rng.randrange(1, n - 1)
        if len(words[i]) <= 4 and words[i].isalpha():
            words.insert(i, words[i])
    text = " ".join(words)
    if n > 4 and rng.random() < 0.28:
        head = words[0]
        for word in words[1 : rng.randint(1, 3)]:
            if head[-1] in ",.?!":
                break
            head += " " + word
        text = f"{head.rstrip(',.?!')}- {_lower_first(text)}"
    if rng.random() < 0.5:
        text = f"{_ch(rng, fillers['start'])} {_lower_first(text)}"
    return text


# -- one call ------------------------------------------------------------------------


class _Deck:
    """Draws without replacement, so a call does not repeat itself."""

    def __init__(self, rng: Random, items: Sequence[Any]) -> None:
        self.rng, self.items = rng, list(items)

    def draw(self) -> Any:
        return self.items.pop(int(self.rng.random() * len(self.items)))


class _Builder:
    """Composes one call: fills templates, adds turns, keeps the clock and word count."""

    def __init__(self, rng: Random, date: dt.date, labels: dict[str, str], memo: dict[str, str]):
        self.rng, self.date, self.labels, self.memo = rng, date, labels, memo
        self.sc = _scenario()
        self.fillers = self.sc["fillers"]
        self.local: dict[str, list[str]] = {}
        self.turns: list[list[Any]] = []
        self.rate = 2.3 + rng.random() * 0.6
        self.t = 0.5 + rng.random() * 2.5
        self.words = 0
        self.greeting = ""
        self.generic = _Deck(rng, self.sc["generic_pairs"])

    def fill(self, template: str, depth: int = 0) -> str:
        parts = _PARTS.get(template)
        if parts is None:
            parts = _PARTS[template] = tuple(_SLOT.split(template))
        if len(parts) == 1:
            return template
        out = list(parts)
        for i in range(1, len(parts), 2):
            out[i] = self.slot(parts[i], depth)
        return "".join(out)

    def slot(self, name: str, depth: int = 0) -> str:
        if name in self.memo:
            return self.memo[name]
        gen = _GENERATED.get(name)
        if gen is not None:
            value = gen(self)
        else:
            options = self.local.get(name) or self.sc["slots"].get(name)
            if options is None or depth > 4:
                raise KeyError(f"demo scenario: no values for slot {{{name}}}")
            value = self.fill(_ch(self.rng, options), depth + 1)
        if name in _MEMO:
            self.memo[name] = value
        return value

    def say(self, role: str, text: str, *, pause: float | None = None) -> None:
        n = text.count(" ") + 1
        if pause is None and self.turns and self.turns[-1][1] == role:
            self.turns[-1][2] += " " + text
        else:
            if self.turns:
                self.t += pause if pause is not None else 0.2 + self.rng.random() * 1.2
            self.turns.append([self.labels[role], role, text, round(self.t, 1)])
        self.t += n / self.rate
        self.words += n

    def customer(self, template: str) -> None:
        text = self.fill(template)
        if not template.startswith("{"):  # a slot value keeps its own case (e-mails)
            text = text[:1].upper() + text[1:]
        if self.rng.random() < 0.85:
            text = _disfluent(text, self.rng, self.fillers)
        self.say("customer", text)

    def agent(self, template: str, *, script: bool = False) -> None:
        text = self.fill(template)
        if not script and self.rng.random() < 0.12:
            text = _disfluent(text, self.rng, self.fillers)
        self.say("agent", text)

    def script(self, name: str) -> str:
        return _ch(self.rng, self.sc["scripts"][name])

    def backchannel(self, role: str) -> None:
        self.say(role, _ch(self.rng, self.fillers[f"backchannel_{role}"]), pause=0.3)

    def use_reason(self, key: str, storm: bool) -> dict[str, Any]:
        reason = self.sc["reasons"][key]
        self.local = reason["slots"]
        if storm and "storm_slots" in reason:
            self.local = {**reason["slots"], **reason["storm_slots"]}
        return reason


def _section(b: _Builder, key: str, budget: float, storm: bool) -> None:
    """Talk through one call reason until about ``budget`` words have been spoken."""
    rng, reason = b.rng, b.use_reason(key, storm)
    qa, details = _Deck(rng, reason["qa"]), _Deck(rng, reason["details"])
    explain = _Deck(rng, reason["agent_explain"])
    start, held, n = b.words, False, 0
    card = key in _CARD_REASONS and rng.random() < 0.2
    while n < 2 or (b.words - start < budget and n < 30):
        x, n = rng.random(), n + 1
        if not held and n > 1 and x < 0.16 and explain.items:
            held = True
            b.agent(b.script("hold"), script=True)
            b.customer(b.script("hold_ok"))
            b.say("agent", b.fill(b.script("hold_return")), pause=30 + rng.random() * 210)
            b.agent(explain.draw())
        elif card and x < 0.24:
            card = False
            b.customer(b.script("card_offer"))
            b.agent(b.script("card_warning"), script=True)
            b.backchannel("customer")
        elif qa.items and (x < 0.55 or not (details.items and explain.items)):
            question, answers = qa.draw()
            b.agent(question)
            b.customer(_ch(rng, answers))
            if details.items and rng.random() < 0.3:
                b.backchannel("agent")
                b.customer(details.draw())
        elif details.items and explain.items and (x < 0.9 or not b.generic.items):
            b.customer(details.draw())
            b.agent(explain.draw())
            if explain.items and rng.random() < 0.35:
                b.backchannel("customer")
                b.agent(explain.draw())
        elif b.generic.items:
            pair = b.generic.draw()
            b.customer(_ch(rng, pair[0]))
            b.agent(_ch(rng, pair[1]))
        else:
            break
    b.agent(_ch(rng, reason["agent_actions"]))
    react = _ch(rng, reason["customer_reacts"])
    if isinstance(react, list):
        b.customer(react[0])
        b.agent(react[1])
        if rng.random() < 0.4:
            b.customer("{ack}")
    else:
        b.customer(react)
        if rng.random() < 0.5:
            b.agent(b.script("agent_welcome"), script=True)


def _regular(b: _Builder, reasons: tuple[str, ...], storm: bool) -> None:
    rng = b.rng
    target = math.exp(rng.gauss(math.log(400), 0.38))
    if rng.random() < 0.06:
        target *= 1.7 + rng.random()
    greeting = b.greeting
    if rng.random() < 0.15:
        greeting = f"{b.script('recorded')} {greeting}"
    b.agent(greeting, script=True)
    reason = b.use_reason(reasons[0], storm)
    hello = b.script("customer_hello") + " " if rng.random() < 0.7 else ""
    b.customer(hello + _ch(rng, reason["openings"]))
    if rng.random() < 0.3:
        b.agent(b.script("name_ask"), script=True)
        b.customer(b.script("name_give"))
    b.agent(b.script("verify_ask"), script=True)
    if rng.random() < 0.85:
        b.customer(b.script("verify_give"))
    else:
        b.customer(b.script("verify_no_acct"))
        b.agent(b.script("verify_alt_ask"), script=True)
        b.customer(b.script("verify_alt_give"))
    if rng.random() < 0.3:
        b.agent(b.script("email_ask"), script=True)
        b.customer(b.script("email_give"))
    b.agent(f"{b.script('verify_done')} {b.script('section_start')}", script=True)
    remaining = max(target - b.words - 45, 60.0)
    share = 0.62 if len(reasons) > 1 else 1.0
    _section(b, reasons[0], remaining * share, storm)
    if len(reasons) > 1:
        second = b.use_reason(reasons[1], storm)
        bridge, ask = b.script("second_bridge"), b.fill(_ch(rng, second["second"]))
        if bridge.endswith((". ", "? ")):
            ask = ask[:1].upper() + ask[1:]
        b.customer(bridge + ask)
        b.agent(b.script("section_start"), script=True)
        _section(b, reasons[1], remaining * (1 - share), storm)
    b.agent(b.script("closing"), script=True)
    b.customer(b.script("closing_no"))
    farewell = b.script("farewell")
    if rng.random() < 0.2:
        farewell = f"{b.script('survey')} {farewell}"
    b.agent(farewell, script=True)
    if rng.random() < 0.6:
        b.customer(b.script("bye"))


def _scripted(b: _Builder, turns: list[list[Any]]) -> None:
    """Play a fixed sequence of ``[role, variants]`` turns (off-topic and short calls)."""
    for role, variants in turns:
        template = _ch(b.rng, variants)
        if template == "{greeting}":
            b.agent(b.greeting, script=True)
        elif role == "customer":
            b.customer(template)
        else:
            b.say("agent", b.fill(template), pause=0.3 + b.rng.random() * 5.7)


def _short(b: _Builder, reason: str) -> str:
    rng, weights = b.rng, b.sc["short_weights"]
    detail = rng.choices(list(weights), list(weights.values()))[0]
    if detail != "dropped":
        _scripted(b, b.sc["short"][detail])
        return detail
    b.agent(b.greeting, script=True)
    words = b.fill(_ch(rng, b.use_reason(reason, False)["openings"])).split(" ")
    cut = " ".join(words[: rng.randint(4, max(4, min(9, len(words) - 1)))]).rstrip(",.")
    b.customer(f"{b.script('customer_hello')} {cut}-")
    if rng.random() < 0.6:
        b.say("agent", "Hello? Are you still there? I think we've lost the line.", pause=2.0)
        if rng.random() < 0.4:
            b.say("customer", "Hello?", pause=1.0)
    return detail


# -- the stream of calls -------------------------------------------------------------


def _month_key(day: dt.date) -> str:
    return f"{day.year}-{day.month:02d}"


def _day_weight(day: dt.date) -> float:
    weight = _WEEKDAY_WEIGHT[day.weekday()]
    if STORM_WEEK[0] <= day <= STORM_WEEK[1]:
        weight *= _STORM_BOOST[(day - STORM_WEEK[0]).days]
    if _month_key(day) == PRICE_CHANGE_MONTH:
        weight *= 1.08
    return weight


@functools.lru_cache(maxsize=32)
def _reason_cum(month: int, storm: bool, october: bool) -> list[float]:
    sc = _scenario()
    reasons = sc["reasons"]
    weights = [reasons[k]["weight"] * sc["season"].get(k, {}).get(str(month), 1.0) for k in REASONS]
    for key, share, active in ((_PRICE, reasons[_PRICE]["october_weight"], october),
                               (_OUTAGE, _STORM_OUTAGE_SHARE, storm)):  # fmt: skip
        if active:
            i = REASONS.index(key)
            weights[i] = (sum(weights) - weights[i]) * share / (1 - share)
    return list(itertools.accumulate(weights))


def _choose_reasons(rng: Random, day: dt.date, storm: bool) -> tuple[str, ...]:
    cum = _reason_cum(day.month, storm, _month_key(day) == PRICE_CHANGE_MONTH)
    first = rng.choices(REASONS, cum_weights=cum)[0]
    if rng.random() >= _SECOND_REASON_RATE:
        return (first,)
    if rng.random() < 0.5:
        return first, _ch(rng, _scenario()["second_affinity"][first])
    while True:
        second = rng.choices(REASONS, cum_weights=cum)[0]
        if second != first:
            return first, second


def _weighted(rng: Random, table: dict[str, float]) -> str:
    return rng.choices(list(table), list(table.values()))[0]


def _style(rng: Random, fmt: str) -> RenderStyle:
    if fmt == "txt":
        stamps = rng.choices(("none", "bracket", "plain"), (0.5, 0.35, 0.15))[0]
        return RenderStyle(timestamps=stamps, wrap=rng.random() < 0.2)
    if fmt == "vtt":
        return RenderStyle(cue_ids=rng.random() < 0.5, close_voice=rng.random() < 0.2,
                           curly=rng.random() < 0.15, note=rng.random() < 0.3)  # fmt: skip
    return RenderStyle()


def _make_call(rng: Random, call_id: str, day: dt.date) -> DemoCall:
    sc = _scenario()
    storm = STORM_WEEK[0] <= day <= STORM_WEEK[1]
    site = _weighted(rng, sc["site_weights"])
    roster = sc["sites"][site]
    agent_i = rng.randrange(len(roster))
    agent = roster[agent_i]
    fmt = rng.choices(FORMATS, _FORMAT_WEIGHTS)[0]
    styles = sc["label_styles"][fmt]
    labels = rng.choices([s[0] for s in styles], [s[1] for s in styles])[0]
    memo = {"agent": agent, "customer": _ch(rng, sc["customers"]), "company": sc["company"]}
    roles = {"agent": labels[0].replace("{agent}", agent), "customer": labels[1]}
    b = _Builder(rng, day, roles, memo)
    greetings = sc["scripts"]["greeting"]  # each agent has a favourite variant
    b.greeting = greetings[agent_i % len(greetings)] if rng.random() < 0.8 else _ch(rng, greetings)
    kind = rng.choices(KINDS, _KIND_WEIGHTS)[0]
    reasons, detail = _choose_reasons(rng, day, storm), ""
    if kind == "regular":
        _regular(b, reasons, storm)
        queue = _weighted(rng, sc["reasons"][reasons[0]]["queues"])
    elif kind == "off_topic":
        detail = _weighted(rng, sc["off_topic_weights"])
        b.local = sc["off_topic"][detail]["slots"]
        _scripted(b, sc["off_topic"][detail]["turns"])
        reasons = ()
        queue = _weighted(rng, {"general": 0.7, "billing": 0.1, "faults": 0.1, "moves": 0.1})
    else:
        detail = _short(b, reasons[0])
        reasons = reasons[:1] if detail == "dropped" else ()
        queue = _ch(rng, ("billing", "faults", "general", "moves"))
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
    cum = list(itertools.accumulate(map(_day_weight, days)))
    counters: dict[str, int] = {}
    # No two transcripts alike by ingest's duplicate test. Short and off-topic calls can
    # collide; regular calls carry too many random numbers to, so a cheap key will do.
    seen: set[str | bytes] = set()
    for day in sorted(rng.choices(days, cum_weights=cum, k=size)):
        month = _month_key(day)
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


# -- rendering -----------------------------------------------------------------------


def _clock(seconds: float, millis: bool = False) -> str:
    # %-formatting: about twice as fast as f-strings with format specs in this hot path
    ms = int(seconds * 1000 + 0.5)
    s = ms // 1000
    if millis:
        return "%02d:%02d:%02d.%03d" % (s // 3600, s // 60 % 60, s % 60, ms % 1000)  # noqa: UP031
    return "%02d:%02d:%02d" % (s // 3600, s // 60 % 60, s % 60)  # noqa: UP031


def _turn_ends(call: DemoCall) -> list[float]:
    ends = []
    for i, turn in enumerate(call.turns):
        end = turn.start + max(0.8, (turn.text.count(" ") + 1) / call.words_per_second)
        if i + 1 < len(call.turns):
            end = min(end, max(turn.start + 0.1, call.turns[i + 1].start - 0.05))
        ends.append(round(end, 3))
    return ends


def render_txt(call: DemoCall) -> str:
    """Render a call as a speaker-labelled text transcript (``Speaker: text`` lines).

    Follows ``call.style``: optional ``[hh:mm:ss]`` or bare ``hh:mm:ss`` prefixes, and long
    turns wrapped onto unlabelled continuation lines.
    """
    style, lines = call.style, []
    for turn in call.turns:
        prefix = ""
        if style.timestamps == "bracket":
            prefix = f"[{_clock(turn.start)}] "
        elif style.timestamps == "plain":
            prefix = f"{_clock(turn.start)} "
        words = turn.text.split(" ")
        if style.wrap and len(words) > 45:
            chunks = [" ".join(words[i : i + 30]) for i in range(0, len(words), 30)]
        else:
            chunks = [turn.text]
        lines.append(f"{prefix}{turn.speaker}: {chunks[0]}")
        lines.extend(chunks[1:])
    return "\n".join(lines) + "\n"


def _cues(text: str) -> list[str]:
    """Split a long turn into caption-sized cues (about 20 words, at sentence ends if possible)."""
    if text.count(" ") < 20:
        return [text]
    cues: list[str] = []
    size = 0
    for sentence in _SENTENCE_END.split(text):
        words = sentence.split(" ")
        for i in range(0, len(words), 16):
            piece = words[i : i + 16]
            if cues and size + len(piece) <= 20:
                cues[-1] += " " + " ".join(piece)
                size += len(piece)
            else:
                cues.append(" ".join(piece))
                size = len(piece)
    return cues


def render_vtt(call: DemoCall) -> str:
    """Render a call as W3C WebVTT with ``<v Speaker>`` voice spans, one or more cues a turn.

    Follows ``call.style``: cue numbers, ``</v>`` closing tags, typographic apostrophes and
    a ``NOTE`` block. Text is escaped (``&``, ``<``, ``>``).
    """
    style = call.style
    out = ["WEBVTT", ""]
    if style.note:
        out += [f"NOTE {call.call_id}, exported for quality review", ""]
    close = "</v>" if style.close_voice else ""
    number = 0
    for turn, end in zip(call.turns, _turn_ends(call), strict=True):
        text = turn.text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
        if style.curly:
            text = text.replace("'", "\u2019")
        pieces = _cues(text)
        per_word = (end - turn.start) / (text.count(" ") + 1)
        t, t_text = turn.start, _clock(turn.start, True)
        for piece in pieces:
            t += per_word * (piece.count(" ") + 1)
            end_text = _clock(t, True)
            number += 1
            if style.cue_ids:
                out.append(str(number))
            out += [f"{t_text} --> {end_text}", f"<v {turn.speaker}>{piece}{close}", ""]
            t_text = end_text
    return "\n".join(out)


# -- writing -------------------------------------------------------------------------


#: Calls per per-turn CSV file: about 17 MB, well under the default ingest size limit.
CSV_CALLS_PER_FILE = 5000


class _Sink:
    """One output folder (``exports`` or ``inbox``): call files, ``turns*.csv``, manifest."""

    def __init__(self, root: Path, stack: contextlib.ExitStack) -> None:
        self.root, self.stack = root, stack
        self.manifest: list[tuple[str, ...]] = []
        self.counts = dict.fromkeys(FORMATS, 0)
        self.turns: Any = None
        self.turns_file: Any = None
        self.months: set[str] = set()

    def add(self, call: DemoCall) -> None:
        month = _month_key(call.date)
        if call.format == "csv":
            if self.counts["csv"] % CSV_CALLS_PER_FILE == 0:  # a new part, under size limits
                part = self.counts["csv"] // CSV_CALLS_PER_FILE + 1
                name = "turns.csv" if part == 1 else f"turns-{part:03d}.csv"
                if self.turns_file is not None:
                    self.turns_file.close()
                self.turns_file = self.stack.enter_context(
                    (self.root / name).open("w", encoding="utf-8", newline="")
                )
                self.turns = csv.writer(self.turns_file, lineterminator="\n")
                self.turns.writerow(_TURN_COLUMNS)
            self.turns.writerows((call.call_id, t.speaker, f"{t.start:.1f}", t.text)
                                 for t in call.turns)  # fmt: skip
        else:
            folder = self.root / "calls" / month
            if month not in self.months:
                folder.mkdir(parents=True, exist_ok=True)
                self.months.add(month)
            text = render_txt(call) if call.format == "txt" else render_vtt(call)
            (folder / f"{call.call_id}.{call.format}").write_text(
                text, encoding="utf-8", newline="\n"
            )
        self.counts[call.format] += 1
        self.manifest.append((call.call_id, call.date.isoformat(), call.queue, call.site,
                              str(call.duration_s), call.channel))  # fmt: skip

    def finish(self) -> None:
        with (self.root / "manifest.csv").open("w", encoding="utf-8", newline="") as fh:
            writer = csv.writer(fh, lineterminator="\n")
            writer.writerow(_MANIFEST_COLUMNS)
            writer.writerows(self.manifest)


def _csv_text(header: Sequence[str], rows: list[tuple[str, ...]]) -> str:
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows([header, *rows])
    return buffer.getvalue()


def _check_out_dir(out_dir: Path) -> None:
    if not out_dir.exists():
        return
    if not out_dir.is_dir():
        raise InputError(f"{out_dir}: not a folder; the demo needs an empty or new folder")
    marker = out_dir / "demo.json"
    if any(out_dir.iterdir()) and not marker.is_file():
        raise InputError(
            f"{out_dir}: folder is not empty and holds no earlier demo output (demo.json); "
            "choose an empty or new folder"
        )


def write_demo(
    out_dir: Path, *, size: int = 3000, seed: int = 7, hold_back_last_month: bool = False
) -> DemoFiles:
    """Write the demo corpus: mixed-format exports, a manifest and the answer key.

    Layout::

        out_dir/exports/calls/<yyyy-mm>/<call_id>.txt|.vtt   (about half / a quarter)
        out_dir/exports/turns.csv      one row per turn: call_id, speaker, start, text
                                       (then turns-002.csv, ... every 5,000 such calls)
        out_dir/exports/manifest.csv   call_id, date, queue, site, duration_s, channel
        out_dir/inbox/...              October's calls, same layout, when held back
        out_dir/truth.csv              answer key for tests; never ingested or shown
        out_dir/demo.json              size, seed and counts of this run

    Parameters
    ----------
    out_dir : Path
        A new or empty folder, or one holding earlier demo output (it is replaced).
    size : int
        Number of calls.
    seed : int
        Random seed; the same arguments always give byte-identical files.
    hold_back_last_month : bool
        Put the calls of October 2026 in ``out_dir/inbox`` instead of ``exports``, for
        the refresh demo.

    Returns
    -------
    DemoFiles

    Raises
    ------
    InputError
        When ``size`` is below 1 or ``out_dir`` holds something other than demo output.
    """
    out_dir = Path(out_dir)
    if size < 1:
        raise InputError(f"demo size must be at least 1 call, got {size}")
    _check_out_dir(out_dir)
    truth: list[tuple[str, ...]] = []
    with contextlib.ExitStack() as stack:
        exports = _Sink(stack.enter_context(atomic_dir(out_dir / "exports")), stack)
        inbox = None
        if hold_back_last_month:
            inbox = _Sink(stack.enter_context(atomic_dir(out_dir / "inbox")), stack)
        for call in iter_demo_calls(size, seed):
            held = inbox is not None and _month_key(call.date) == PRICE_CHANGE_MONTH
            (inbox if held and inbox is not None else exports).add(call)
            second = call.reasons[1] if len(call.reasons) > 1 else ""
            truth.append((call.call_id, call.date.isoformat(), "inbox" if held else "exports",
                          call.format, call.kind, call.reasons[0] if call.reasons else "",
                          second, call.detail))  # fmt: skip
        for sink in (exports, inbox):
            if sink is not None:
                sink.finish()
        # the stack closes turns.csv (entered last) before the folders are moved into place
    if not hold_back_last_month and (out_dir / "inbox").is_dir():
        shutil.rmtree(out_dir / "inbox")  # left by an earlier demo run that held it back
    atomic_write_text(out_dir / "truth.csv", _csv_text(_TRUTH_COLUMNS, truth))
    info = {"generator": "talkthemes.demo", "size": size, "seed": seed,
            "hold_back_last_month": hold_back_last_month, "first_day": FIRST_DAY.isoformat(),
            "last_day": LAST_DAY.isoformat(), "storm_week": [d.isoformat() for d in STORM_WEEK],
            "price_change_month": PRICE_CHANGE_MONTH, "exports": exports.counts,
            "inbox": inbox.counts if inbox else {}}  # fmt: skip
    atomic_write_text(out_dir / "demo.json", json.dumps(info, indent=2) + "\n")
    logger.info("wrote %d demo calls to %s", size, out_dir)
    root = out_dir / "exports"
    return DemoFiles(
        root=out_dir, exports=root, manifest=root / "manifest.csv", truth=out_dir / "truth.csv",
        turns=root / "turns.csv" if exports.counts["csv"] else None,
        inbox=out_dir / "inbox" if inbox else None, counts=exports.counts,
        inbox_counts=inbox.counts if inbox else {},
    )  # fmt: skip
