"""Composing planted calls: boilerplate, reason talk, second reasons, short calls and noise.

One ``random.Random(spec.seed)`` stream drives everything, so a spec always gives the same
calls.
"""

from __future__ import annotations

import datetime as dt
import itertools
import math
import re
from collections.abc import Callable, Iterator
from random import Random

from talkthemes.calls.model import normalised_hash
from talkthemes.demo.builder import Deck
from talkthemes.demo.planted.bank import (
    SHORT_KINDS,
    PlantedCall,
    PlantedSpec,
    load_bank,
    planted_reasons,
)
from talkthemes.demo.scenario import pick
from talkthemes.demo.slots import disfluent, ordinal

__all__ = ["iter_planted_calls"]

_WEEKDAY_WEIGHT = (1.2, 1.1, 1.0, 1.0, 1.0, 0.5, 0.3)
_MEMO = frozenset({"agent", "customer", "company", "ref", "email", "plate", "station",
                   "station2", "time", "item", "colour"})  # fmt: skip
_SLOT = re.compile(r"\{(\w+)\}")
_CHOICE = re.compile(r"\[([^\[\]]*\|[^\[\]]*)\]")
_LETTERS = "ABCDEFGHJKLMNPRSTVWXY"


class _Call:
    """Composes one call: fills templates, merges a speaker's consecutive lines."""

    def __init__(self, rng: Random, spec: PlantedSpec, memo: dict[str, str]) -> None:
        self.rng, self.spec, self.memo = rng, spec, memo
        self.bank = load_bank()
        self.local: dict[str, list[str]] = {}
        self.turns: list[list[str]] = []
        self.words = 0

    def slot(self, name: str) -> str:
        if name in self.memo:
            return self.memo[name]
        gen = _GENERATED.get(name)
        if gen is not None:
            value = gen(self.rng, self)
        else:
            options = self.local.get(name) or self.bank["slots"].get(name)
            if options is None:
                raise KeyError(f"planted scenario: no values for slot {{{name}}}")
            value = self.fill(pick(self.rng, options))
        if name in _MEMO:
            self.memo[name] = value
        return value

    def fill(self, template: str) -> str:
        text = _CHOICE.sub(lambda m: pick(self.rng, m.group(1).split("|")), template)
        return _SLOT.sub(lambda m: self.slot(m.group(1)), text)

    def say(self, role: str, template: str) -> None:
        text = self.fill(template)
        text = text[:1].upper() + text[1:]
        if role == "customer" and self.rng.random() < self.spec.fillers:
            text = disfluent(text, self.rng, self.bank["fillers"])
        if self.turns and self.turns[-1][0] == role:
            self.turns[-1][1] += " " + text
        else:
            self.turns.append([role, text])
        self.words += text.count(" ") + 1

    def agent(self, template: str, kind: str) -> None:
        """Say a reason line as the agent, often after a lead-in (agents vary their words)."""
        lead = pick(self.rng, self.bank["lead_ins"][kind])
        if lead and not template.startswith(("I ", "I'", "{")):
            template = template[:1].lower() + template[1:]
        self.say("agent", lead + template)

    def script(self, role: str, name: str) -> None:
        if self.spec.boilerplate:
            self.say(role, pick(self.rng, self.bank["scripts"][name]))


def _plate(rng: Random) -> str:
    letters = [pick(rng, _LETTERS) for _ in range(5)]
    return f"{letters[0]}{letters[1]}{rng.randint(10, 79)} {''.join(letters[2:])}"


def _email(rng: Random, c: _Call) -> str:
    domain = "example.com" if rng.random() < 0.6 else "example.org"
    return f"{c.slot('customer').lower()}{rng.randint(1, 98)}@{domain}"


_GENERATED: dict[str, Callable[[Random, _Call], str]] = {
    "ref": lambda rng, _: f"AV{rng.randrange(10**6):06d}",
    "amount": lambda rng, _: f"${rng.uniform(9, 240):.2f}",
    "amount_small": lambda rng, _: f"${rng.uniform(4, 30):.2f}",
    "minutes": lambda rng, _: str(rng.randrange(15, 125, 5)),
    "digits": lambda rng, _: str(rng.randrange(10**5, 10**6)),
    "date_day": lambda rng, _: ordinal(rng.randint(1, 28)),
    "n_group": lambda rng, _: str(rng.randint(10, 40)),
    "n_adults": lambda rng, _: str(rng.randint(2, 5)),
    "seat": lambda rng, _: str(rng.randint(1, 80)),
    "plate": lambda rng, _: _plate(rng),
    "email": _email,
}


def _section(c: _Call, key: str, budget: float, chat: Deck) -> None:
    """Talk through one reason until about ``budget`` words have been spoken."""
    rng, reason = c.rng, c.bank["reasons"][key]
    c.local = reason["slots"]
    qa, details, explain = (Deck(rng, reason[k]) for k in ("qa", "details", "explain"))
    start, n, held = c.words, 0, False
    while n < 2 or (c.words - start < budget and n < 20):
        x, n = rng.random(), n + 1
        if c.spec.boilerplate and not held and n > 1 and x < 0.1:
            held = True
            c.script("agent", "hold")
            c.script("customer", "hold_ok")
            c.script("agent", "hold_return")
        elif qa.items and (x < 0.45 or not details.items):
            question, answers = qa.draw()
            c.agent(question, "question")
            c.say("customer", pick(rng, answers))
        elif details.items and explain.items and x < 0.92:
            c.say("customer", details.draw())
            c.agent(explain.draw(), "statement")
            if rng.random() < 0.3:
                c.say("customer", pick(rng, c.bank["fillers"]["backchannel_customer"]))
        elif chat.items:
            customer_lines, agent_lines = chat.draw()
            c.say("customer", pick(rng, customer_lines))
            c.say("agent", pick(rng, agent_lines))
        else:
            break
    c.agent(pick(rng, reason["actions"]), "statement")


def _regular(c: _Call, reasons: tuple[str, ...]) -> None:
    rng, bank = c.rng, c.bank
    target = math.exp(rng.gauss(math.log(c.spec.words), 0.3))
    if rng.random() < 0.1:
        c.script("agent", "recorded")
    c.script("agent", "greeting")
    first = bank["reasons"][reasons[0]]
    c.local = first["slots"]
    opening = pick(rng, first["openings"])
    if rng.random() < 0.6:
        if not opening.startswith(("I ", "I'", "{")):
            opening = opening[:1].lower() + opening[1:]
        opening = f"{pick(rng, bank['scripts']['customer_hello'])} {opening}"
    c.say("customer", opening)
    if rng.random() < 0.85:
        c.script("agent", "verify_ask")
        c.script("customer", "verify_give")
    else:
        c.script("agent", "verify_ask")
        c.script("customer", "verify_none")
        c.script("agent", "verify_alt_ask")
        c.script("customer", "verify_alt_give")
    c.script("agent", "verify_done")
    c.script("agent", "section_start")
    remaining = max(target - c.words - 30, 40.0)
    share = 0.65 if len(reasons) > 1 else 1.0
    chat = Deck(rng, bank["chat"])
    _section(c, reasons[0], remaining * share, chat)
    if len(reasons) > 1:
        second = bank["reasons"][reasons[1]]
        c.local = second["slots"]
        bridge = pick(rng, bank["scripts"]["second_bridge"]) if c.spec.boilerplate else "Also I"
        c.say("customer", f"{bridge} {pick(rng, second['second'])}.")
        _section(c, reasons[1], remaining * (1 - share), chat)
    c.say("customer", pick(rng, ["Okay, thank you.", "Great, thanks.", "That's helpful, thanks."]))
    c.script("agent", "closing")
    c.script("customer", "closing_no")
    if rng.random() < 0.15:
        c.script("agent", "survey")
    c.script("agent", "farewell")
    if rng.random() < 0.5:
        c.script("customer", "bye")


def _short(c: _Call) -> str:
    detail = pick(c.rng, SHORT_KINDS)
    c.local = c.bank["short_slots"]
    for role, variants in c.bank["short"][detail]:
        template = pick(c.rng, variants)
        if template == "{greeting}":
            template = pick(c.rng, c.bank["scripts"]["greeting"])
        c.say(role, template)
    return detail


def _noisy(text: str, rng: Random, rate: float, homophones: dict[str, str]) -> str:
    """ASR-like errors: homophones, transposed letters, dropped and doubled words."""
    out: list[str] = []
    for word in text.split(" "):
        if rng.random() >= rate:
            out.append(word)
            continue
        core = word.rstrip(",.?!-")
        tail = word[len(core) :]
        swap = homophones.get(core.lower())
        x = rng.random()
        if swap is not None and x < 0.5:
            out.append(swap + tail)
        elif core.isalpha() and len(core) >= 4 and x < 0.75:
            i = rng.randrange(1, len(core) - 2)
            out.append(core[:i] + core[i + 1] + core[i] + core[i + 2 :] + tail)
        elif x < 0.88 and len(out) > 0:
            continue  # a dropped word
        else:
            out += [core, word]
    return " ".join(out)


def _choose(
    rng: Random, keys: list[str], cum: list[float], spec: PlantedSpec, first: str = ""
) -> tuple[str, ...]:
    first = first or rng.choices(keys, cum_weights=cum)[0]
    if rng.random() >= spec.secondary:
        return (first,)
    related = [k for k in load_bank()["reasons"][first]["related"] if k in keys]
    if related and rng.random() < 0.5:
        return first, pick(rng, related)
    while True:
        second = rng.choices(keys, cum_weights=cum)[0]
        if second != first:
            return first, second


def _quota_deck(rng: Random, keys: list[str], spec: PlantedSpec) -> list[str]:
    """Kind and lead reason of every call when :attr:`PlantedSpec.exact`: ``round(short ×
    calls)`` short calls (``""``), the rest split over the reasons in proportion to their
    weights (largest remainders), in a random order."""
    n_short = round(spec.short * spec.calls)
    n_regular = spec.calls - n_short
    weights = spec.reason_weights()
    quotas = [n_regular * w / sum(weights) for w in weights]
    counts = [math.floor(q) for q in quotas]
    by_remainder = sorted(range(len(keys)), key=lambda i: (counts[i] - quotas[i], i))
    for i in by_remainder[: n_regular - sum(counts)]:
        counts[i] += 1
    deck = [""] * n_short + [k for k, n in zip(keys, counts, strict=True) for _ in range(n)]
    rng.shuffle(deck)
    return deck


def iter_planted_calls(spec: PlantedSpec) -> Iterator[PlantedCall]:
    """Yield the calls of a planted corpus in date order.

    Parameters
    ----------
    spec : PlantedSpec

    Returns
    -------
    Iterator of PlantedCall
        ``spec.calls`` calls; no two have the same text by ingest's duplicate test.
    """
    rng, bank = Random(spec.seed), load_bank()
    keys = list(planted_reasons(spec.reasons))
    cum = list(itertools.accumulate(spec.reason_weights()))
    days = [spec.first_day + dt.timedelta(days=i) for i in range(spec.days)]
    day_cum = list(itertools.accumulate(_WEEKDAY_WEIGHT[d.weekday()] for d in days))
    seen: set[str] = set()
    dates = sorted(rng.choices(days, cum_weights=day_cum, k=spec.calls))
    deck = _quota_deck(rng, keys, spec) if spec.exact else None
    for i, day in enumerate(dates):
        for _ in range(100):
            agent = pick(rng, bank["agents"])
            memo = {"agent": agent, "customer": pick(rng, bank["customers"]),
                    "company": bank["company"]}  # fmt: skip
            c = _Call(rng, spec, memo)
            reasons: tuple[str, ...] = ()
            short = rng.random() < spec.short if deck is None else deck[i] == ""
            if short:
                kind, detail = "short", _short(c)
            else:
                first = "" if deck is None else deck[i]
                kind, detail, reasons = "regular", "", _choose(rng, keys, cum, spec, first)
                _regular(c, reasons)
            turns = tuple((role, text) for role, text in c.turns)
            if spec.noise:
                turns = tuple(
                    (role, _noisy(text, rng, spec.noise, bank["homophones"]))
                    for role, text in turns
                )
            key = normalised_hash("\n".join(text for _, text in turns))
            if key not in seen:
                break
        seen.add(key)
        yield PlantedCall(
            call_id=f"{spec.prefix}-{i + 1:05d}", date=day, kind=kind, detail=detail,
            reason=reasons[0] if reasons else "", secondary=reasons[1] if len(reasons) > 1 else "",
            turns=turns,
        )  # fmt: skip
