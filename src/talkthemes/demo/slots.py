"""Slot values and disfluency for the demo's templates.

Generated slot values (account numbers, amounts, dates, e-mail addresses, phone numbers,
Luhn-valid card-like numbers) are drawn from the call's single random stream; the
disfluency pass adds fillers, repetitions and false starts the way people speak.

:func:`generated_slots` gives one line's generators: the English ones below, or for another
language the same with the words taken from that scenario's ``words`` block (month names,
spoken digits, money, e-mail addresses read aloud, the time of day).
"""

from __future__ import annotations

import datetime as dt
import unicodedata
from collections.abc import Callable
from random import Random
from typing import Any, Protocol

from talkthemes.demo.scenario import pick


class Builder(Protocol):
    """What a generated slot reads from the call being built (``demo.builder.Builder``)."""

    rng: Random
    date: dt.date
    sc: dict[str, Any]

    def slot(self, name: str, depth: int = 0) -> str:
        """The text of slot ``name`` for this call."""
        ...


__all__ = ["GENERATED", "MEMO", "disfluent", "generated_slots", "luhn_check_digit", "ordinal"]

_MONTHS = ("January", "February", "March", "April", "May", "June", "July", "August",
           "September", "October", "November", "December")  # fmt: skip
#: Slots whose value is drawn once per call and then repeated (the caller's account, ...).
MEMO = frozenset({"acct", "phone", "email", "card", "house", "street", "place", "bank_acct",
                  "branch", "daypart", "percent", "agent", "customer", "company",
                  "holder"})  # fmt: skip


def ordinal(n: int) -> str:
    """``1st``, ``2nd``, ``3rd``, ``11th``, ..."""
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


def luhn_check_digit(payload: str) -> str:
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


def _email(b: Builder) -> str:
    rng = b.rng
    name = unicodedata.normalize("NFKD", b.slot("customer")).encode("ascii", "ignore").decode()
    name, n = name.lower(), rng.randrange(1, 99)
    word = pick(rng, ("home", "mail", "fern", "brook", "vale", "moss"))
    local = pick(rng, (f"{name}.{n}", f"{name}{n}", f"{name}_{word}", f"{name[0]}.{word}{n}"))
    domain = "example.com" if rng.random() < 0.6 else "example.org"
    if rng.random() < 0.1:  # said aloud rather than normalised by the transcriber
        return f"{local.replace('.', ' dot ')} at {domain.replace('.', ' dot ')}"
    return f"{local}@{domain}"


def _card(rng: Random) -> str:
    payload = pick(rng, ("4000", "4111", "5100", "5413")) + f"{rng.randrange(10**11):011d}"
    number = payload + luhn_check_digit(payload)
    if rng.random() < 0.6:
        return " ".join(number[i : i + 4] for i in range(0, 16, 4))
    return number


def _phone(rng: Random) -> str:
    tail, r = f"{rng.randrange(100):02d}", rng.random()
    if r < 0.08:
        words = ("oh", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine")
        return "five five five, oh one " + " ".join(words[int(c)] for c in tail)
    return f"555-01{tail}" if r < 0.7 else f"555 01{tail}"


def _other_address(b: Builder) -> str:
    slots = b.sc["slots"]
    return f"{b.rng.randint(1, 140)} {pick(b.rng, slots['street'])}, {pick(b.rng, slots['place'])}"


GENERATED: dict[str, Callable[[Builder], str]] = {
    "acct": lambda b: (f"AC-{b.rng.randrange(1, 10**6):06d}" if b.rng.random() < 0.7
                       else str(b.rng.randrange(10**7, 10**8))),
    "phone": lambda b: _phone(b.rng),
    "email": _email,
    "card": lambda b: _card(b.rng),
    "amount": lambda b: _money(b.rng, 60, 420),
    "amount_small": lambda b: _money(b.rng, 12, 95),
    "amount_big": lambda b: _money(b.rng, 380, 1450),
    "house": lambda b: str(b.rng.randint(1, 140)),
    "date_day": lambda b: ordinal(b.rng.randint(1, 28)),
    "month_prev": lambda b: _MONTHS[(b.date.month - 2) % 12],
    "month_next": lambda b: _MONTHS[b.date.month % 12],
    "n_hundreds": lambda b: str(b.rng.randrange(3, 60) * 20),
    "digits": lambda b: f"{b.rng.randrange(10**5):05d}",
    "kwh": lambda b: str(b.rng.randrange(80, 2400)),
    "ref": lambda b: f"{pick(b.rng, ('TW', 'WP', 'JB', 'FR'))}-{b.rng.randrange(10**5, 10**6)}",
    "daypart": lambda b: "morning" if b.rng.random() < 0.55 else "afternoon",
    "bank_acct": lambda b: str(b.rng.randrange(10**7, 10**8)),
    "branch": lambda b: "-".join(f"{b.rng.randrange(100):02d}" for _ in range(3)),
    "other_addr": _other_address,
}  # fmt: skip


# -- other languages: the words come from the scenario's ``words`` block -------------------


def _words(b: Builder) -> dict[str, Any]:
    words: dict[str, Any] = b.sc["words"]
    return words


def _money_words(b: Builder, lo: float, hi: float) -> str:
    rng = b.rng
    value, r = lo + rng.random() * (hi - lo), rng.random()
    exact, whole, rounded = _words(b)["money"]
    template = exact if r < 0.6 else whole if r < 0.85 else rounded
    return template.format(exact=f"{value:,.2f}", whole=round(value),
                           round=f"{round(value, -1):.0f}")  # fmt: skip


def _email_words(b: Builder) -> str:
    rng, words = b.rng, _words(b)
    name = unicodedata.normalize("NFKD", b.slot("customer")).encode("ascii", "ignore").decode()
    name, n = name.lower(), rng.randrange(1, 99)
    word = pick(rng, words["email_words"])
    local = pick(rng, (f"{name}.{n}", f"{name}{n}", f"{name}_{word}", f"{name[0]}.{word}{n}"))
    domain = "example.com" if rng.random() < 0.6 else "example.org"
    if rng.random() < 0.1:  # said aloud rather than normalised by the transcriber
        dot, at = words["email_spoken"]
        return f"{local.replace('.', dot)}{at}{domain.replace('.', dot)}"
    return f"{local}@{domain}"


def _phone_words(b: Builder) -> str:
    rng = b.rng
    tail, r = f"{rng.randrange(100):02d}", rng.random()
    if r < 0.08:
        digits = _words(b)["digits"]
        return ", ".join(" ".join(digits[int(c)] for c in part) for part in ("555", "01" + tail))
    return f"555-01{tail}" if r < 0.7 else f"555 01{tail}"


_GENERATED_WORDS: dict[str, Callable[[Builder], str]] = {
    **GENERATED,
    "phone": _phone_words,
    "email": _email_words,
    "amount": lambda b: _money_words(b, 60, 420),
    "amount_small": lambda b: _money_words(b, 12, 95),
    "amount_big": lambda b: _money_words(b, 380, 1450),
    "date_day": lambda b: str(b.rng.randint(1, 28)),
    "month_prev": lambda b: _words(b)["months"][(b.date.month - 2) % 12],
    "month_next": lambda b: _words(b)["months"][b.date.month % 12],
    "daypart": lambda b: _words(b)["daypart"][0 if b.rng.random() < 0.55 else 1],
}


def generated_slots(language: str = "en") -> dict[str, Callable[[Builder], str]]:
    """The generated slots of one line of the demo: :data:`GENERATED` for ``en``; for
    another language the same generators, speaking the words of its scenario file."""
    return GENERATED if language == "en" else _GENERATED_WORDS


# -- disfluency ----------------------------------------------------------------------


def _lower_first(text: str) -> str:
    if text[:1] in ("¿", "¡"):  # a Spanish opening mark: lower the letter after it
        first = text[1:].split(" ", 1)[0].rstrip("-,.?!")
        if len(first) > 1 and first.isupper():  # an acronym keeps its case
            return text
        return text[:1] + text[1:2].lower() + text[2:]
    first = text.split(" ", 1)[0]
    if first in ("I", "I'm", "I've", "I'll", "I'd") or first[:2].isupper():
        return text
    return text[:1].lower() + text[1:]


def disfluent(text: str, rng: Random, fillers: dict[str, list[str]]) -> str:
    """Add fillers, a repetition or a false start, the way people speak."""
    words = text.split(" ")
    n = len(words)
    if n > 8 and rng.random() < 0.4:
        i = rng.randrange(3, n - 2)
        if words[i - 1][-1:].isalpha():
            words[i - 1] += ","
            words.insert(i, pick(rng, fillers["mid"]) + ",")
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
        text = f"{pick(rng, fillers['start'])} {_lower_first(text)}"
    return text
