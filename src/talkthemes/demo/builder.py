"""The call builder: composes one demo call from the phrase banks, turn by turn.

:class:`Builder` fills templates, keeps the clock and the word count; :func:`regular`,
:func:`scripted` and :func:`short` lay out the three kinds of call.
"""

from __future__ import annotations

import datetime as dt
import math
import re
from collections.abc import Sequence
from random import Random
from typing import Any

from talkthemes.demo.scenario import load_scenario, pick
from talkthemes.demo.slots import MEMO, disfluent, generated_slots

__all__ = ["Builder", "Deck", "regular", "scripted", "short"]

_CARD_REASONS = frozenset({"billing_dispute", "payment_plan", "direct_debit", "price_change"})
_SLOT = re.compile(r"\{(\w+)\}")
_PARTS: dict[str, tuple[str, ...]] = {}  # template -> literal, slot, literal, ... (a cache)


class Deck:
    """Draws without replacement, so a call does not repeat itself."""

    def __init__(self, rng: Random, items: Sequence[Any]) -> None:
        self.rng, self.items = rng, list(items)

    def draw(self) -> Any:
        """Remove and return one item at random."""
        return self.items.pop(int(self.rng.random() * len(self.items)))


def _upper_first(text: str) -> str:
    """Capitalise the first letter (after a Spanish opening mark, if any)."""
    if text[:1] in ("¿", "¡"):
        return text[:2].upper() + text[2:]
    return text[:1].upper() + text[1:]


class Builder:
    """Composes one call: fills templates, adds turns, keeps the clock and word count.

    ``language`` picks the line of the demo whose phrase banks and generated slots the
    call speaks (``en`` or ``es``).
    """

    def __init__(
        self,
        rng: Random,
        date: dt.date,
        labels: dict[str, str],
        memo: dict[str, str],
        language: str = "en",
    ):
        self.rng, self.date, self.labels, self.memo = rng, date, labels, memo
        self.language = language
        self.sc = load_scenario(language)
        self.generated = generated_slots(language)
        self.fillers = self.sc["fillers"]
        self.local: dict[str, list[str]] = {}
        self.turns: list[list[Any]] = []
        self.rate = 2.3 + rng.random() * 0.6
        self.t = 0.5 + rng.random() * 2.5
        self.words = 0
        self.greeting = ""
        self.generic = Deck(rng, self.sc["generic_pairs"])

    def fill(self, template: str, depth: int = 0) -> str:
        """Replace every ``{slot}`` of a template with its value."""
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
        """Value of one slot: remembered, generated, or drawn from the banks."""
        if name in self.memo:
            return self.memo[name]
        gen = self.generated.get(name)
        if gen is not None:
            value = gen(self)
        else:
            options = self.local.get(name) or self.sc["slots"].get(name)
            if options is None or depth > 4:
                raise KeyError(f"demo scenario: no values for slot {{{name}}}")
            value = self.fill(pick(self.rng, options), depth + 1)
        if name in MEMO:
            self.memo[name] = value
        return value

    def say(self, role: str, text: str, *, pause: float | None = None) -> None:
        """Add text as a new turn (or to the speaker's current one) and advance the clock."""
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
        """Say a filled template as the caller, usually with disfluency."""
        text = self.fill(template)
        if not template.startswith("{"):  # a slot value keeps its own case (e-mails)
            text = _upper_first(text)
        if self.rng.random() < 0.85:
            text = disfluent(text, self.rng, self.fillers)
        self.say("customer", text)

    def agent(self, template: str, *, script: bool = False) -> None:
        """Say a filled template as the agent (scripted lines stay fluent)."""
        text = self.fill(template)
        if not script and self.rng.random() < 0.12:
            text = disfluent(text, self.rng, self.fillers)
        self.say("agent", text)

    def script(self, name: str) -> str:
        """Draw one variant of a scripted line."""
        return pick(self.rng, self.sc["scripts"][name])

    def backchannel(self, role: str) -> None:
        """A short acknowledgement (mm-hmm, right) as its own turn."""
        self.say(role, pick(self.rng, self.fillers[f"backchannel_{role}"]), pause=0.3)

    def use_reason(self, key: str, storm: bool) -> dict[str, Any]:
        """Switch the local slots to one call reason's and return its bank."""
        reason = self.sc["reasons"][key]
        self.local = reason["slots"]
        if storm and "storm_slots" in reason:
            self.local = {**reason["slots"], **reason["storm_slots"]}
        return reason


def _section(b: Builder, key: str, budget: float, storm: bool) -> None:
    """Talk through one call reason until about ``budget`` words have been spoken."""
    rng, reason = b.rng, b.use_reason(key, storm)
    qa, details = Deck(rng, reason["qa"]), Deck(rng, reason["details"])
    explain = Deck(rng, reason["agent_explain"])
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
            b.customer(pick(rng, answers))
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
            b.customer(pick(rng, pair[0]))
            b.agent(pick(rng, pair[1]))
        else:
            break
    b.agent(pick(rng, reason["agent_actions"]))
    react = pick(rng, reason["customer_reacts"])
    if isinstance(react, list):
        b.customer(react[0])
        b.agent(react[1])
        if rng.random() < 0.4:
            b.customer("{ack}")
    else:
        b.customer(react)
        if rng.random() < 0.5:
            b.agent(b.script("agent_welcome"), script=True)


def regular(b: Builder, reasons: tuple[str, ...], storm: bool) -> None:
    """Lay out a regular call: greeting, identity check, one or two reasons, closing."""
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
    b.customer(hello + pick(rng, reason["openings"]))
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
        bridge, ask = b.script("second_bridge"), b.fill(pick(rng, second["second"]))
        if bridge.endswith((". ", "? ")):
            ask = _upper_first(ask)
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


def scripted(b: Builder, turns: list[list[Any]]) -> None:
    """Play a fixed sequence of ``[role, variants]`` turns (off-topic and short calls)."""
    for role, variants in turns:
        template = pick(b.rng, variants)
        if template == "{greeting}":
            b.agent(b.greeting, script=True)
        elif role == "customer":
            b.customer(template)
        else:
            b.say("agent", b.fill(template), pause=0.3 + b.rng.random() * 5.7)


def short(b: Builder, reason: str) -> str:
    """Lay out a short call (silent, dropped, ...); return its sub-kind."""
    rng, weights = b.rng, b.sc["short_weights"]
    detail = rng.choices(list(weights), list(weights.values()))[0]
    if detail != "dropped":
        scripted(b, b.sc["short"][detail])
        return detail
    b.agent(b.greeting, script=True)
    words = b.fill(pick(rng, b.use_reason(reason, False)["openings"])).split(" ")
    cut = " ".join(words[: rng.randint(4, max(4, min(9, len(words) - 1)))]).rstrip(",.")
    b.customer(f"{b.script('customer_hello')} {cut}-")
    if rng.random() < 0.6:
        b.say("agent", b.sc["dropped"]["agent"], pause=2.0)
        if rng.random() < 0.4:
            b.say("customer", b.sc["dropped"]["customer"], pause=1.0)
    return detail
