"""Planted corpora: invented calls whose true reasons are known, for measuring theme quality.

The scenario is not the demo's: it is the customer line of *Ambry Vale Railways*, an
invented regional train operator (every name in it is made up). Its phrase bank
(``talkthemes/data/planted_scenario.json``) holds 18 call reasons in a fixed order, each with
several openings, caller details, agent explanations, question-and-answer pairs and reason
vocabulary, and a list of related reasons that share words with it (refunds, delay claims and
cancellations; the app and the online account; ticket machines, parking and penalty fares),
so the task is not trivially separable. A corpus with ``reasons = n`` uses the first ``n``.

Around the reason talk, a regular call carries agent boilerplate (greeting, recording notice,
identity check, hold, closing, survey notice; switched off with ``boilerplate=False``),
small talk shared by all reasons, and caller disfluency (fillers, repetitions, false starts).
A share of regular calls adds a second reason (half the time a related one). A few percent
are short calls that carry no reason: silent lines, wrong numbers, dropped calls and small
talk. Optional ASR-like noise swaps homophones, transposes letters, drops and doubles words.

:func:`write_planted` writes ``.txt`` transcripts (``Agent:``/``Customer:`` lines) and a
manifest with dates that ingest reads, and the answer key ``truth.csv`` outside the folder
that gets ingested: call id → kind, true reason, second reason (or none). One
``random.Random(seed)`` stream drives everything, so a spec always gives the same files.
"""

from __future__ import annotations

import contextlib
import csv
import datetime as dt
import functools
import io
import itertools
import json
import math
import re
from collections.abc import Callable, Iterator
from dataclasses import asdict, dataclass
from importlib import resources
from pathlib import Path
from random import Random
from typing import Any

from talkthemes.demo.scenario import pick
from talkthemes.demo.slots import disfluent
from talkthemes.errors import InputError
from talkthemes.ingest.model import normalised_hash
from talkthemes.workspace import atomic_dir, atomic_write_text

__all__ = [
    "MAX_REASONS",
    "PlantedCall",
    "PlantedFiles",
    "PlantedSpec",
    "iter_planted_calls",
    "load_bank",
    "planted_reasons",
    "read_truth",
    "render_planted_txt",
    "write_planted",
]

FIRST_DAY = dt.date(2027, 2, 1)
DAYS = 89  # to 2027-04-30
KINDS = ("regular", "short")
SHORT_KINDS = ("silent", "wrong_number", "dropped", "small_talk")
TRUTH_COLUMNS = ("call_id", "date", "kind", "detail", "reason", "secondary_reason", "words")
_WEEKDAY_WEIGHT = (1.2, 1.1, 1.0, 1.0, 1.0, 0.5, 0.3)
_MEMO = frozenset({"agent", "customer", "company", "ref", "email", "plate", "station",
                   "station2", "time", "item", "colour"})  # fmt: skip
_SLOT = re.compile(r"\{(\w+)\}")
_CHOICE = re.compile(r"\[([^\[\]]*\|[^\[\]]*)\]")
_LETTERS = "ABCDEFGHJKLMNPRSTVWXY"


@functools.lru_cache(maxsize=1)
def load_bank() -> dict[str, Any]:
    """Return the planted scenario's phrase bank (``talkthemes/data/planted_scenario.json``)."""
    data = resources.files("talkthemes").joinpath("data/planted_scenario.json")
    return json.loads(data.read_text(encoding="utf-8"))


#: The number of call reasons in the phrase bank.
MAX_REASONS = 18


def planted_reasons(n: int | None = None) -> dict[str, str]:
    """The first ``n`` call reasons of the bank (all when ``None``): key → label, in order."""
    reasons = load_bank()["reasons"]
    keys = list(reasons)[: MAX_REASONS if n is None else n]
    return {key: reasons[key]["label"] for key in keys}


@dataclass(frozen=True, slots=True)
class PlantedSpec:
    """What a planted corpus looks like.

    Attributes
    ----------
    reasons : int
        Number of call reasons (2 to :data:`MAX_REASONS`); the first ones of the bank.
    calls : int
        Number of calls.
    seed : int
        Seed of the single random stream.
    secondary : float
        Share of regular calls that add a second reason.
    short : float
        Share of short calls without a reason (hang-ups, wrong numbers, small talk).
    boilerplate : bool
        Agent scripts around the reason talk (greeting, identity check, hold, closing).
    fillers : float
        Chance that a caller's turn is disfluent (fillers, repetitions, false starts).
    noise : float
        Per-word chance of an ASR-like error (homophone, transposed letters, dropped or
        doubled word); 0 for clean text.
    imbalance : float
        Reason ``i`` (0-based, bank order) has weight ``(i + 1) ** -imbalance``; 0 = equal.
    words : int
        Median length of a regular call in words.
    """

    reasons: int = 6
    calls: int = 600
    seed: int = 0
    secondary: float = 0.25
    short: float = 0.04
    boilerplate: bool = True
    fillers: float = 0.85
    noise: float = 0.0
    imbalance: float = 0.3
    words: int = 260

    def __post_init__(self) -> None:
        if not 2 <= self.reasons <= MAX_REASONS:
            raise InputError(f"reasons must be 2 to {MAX_REASONS}, got {self.reasons}")
        if self.calls < 1:
            raise InputError(f"calls must be at least 1, got {self.calls}")
        for name in ("secondary", "short", "fillers", "noise"):
            value = getattr(self, name)
            if not 0 <= value <= 1:
                raise InputError(f"{name} must be a share between 0 and 1, got {value}")
        if self.imbalance < 0 or self.words < 40:
            raise InputError("imbalance must be ≥ 0 and words ≥ 40")


@dataclass(frozen=True, slots=True)
class PlantedCall:
    """One planted call and its truth.

    Attributes
    ----------
    call_id : str
    date : datetime.date
    kind : str
        ``regular`` or ``short``.
    detail : str
        For short calls: ``silent``, ``wrong_number``, ``dropped`` or ``small_talk``.
    reason, secondary : str
        The true reason and the second reason; empty when there is none.
    turns : tuple of (role, text)
        ``role`` is ``agent`` or ``customer``.
    """

    call_id: str
    date: dt.date
    kind: str
    detail: str
    reason: str
    secondary: str
    turns: tuple[tuple[str, str], ...]

    @property
    def text(self) -> str:
        """All turns' text joined by newlines."""
        return "\n".join(text for _, text in self.turns)

    @property
    def word_count(self) -> int:
        """Whitespace-separated words over all turns."""
        return sum(len(text.split()) for _, text in self.turns)


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


def _ordinal(n: int) -> str:
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


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
    "date_day": lambda rng, _: _ordinal(rng.randint(1, 28)),
    "n_group": lambda rng, _: str(rng.randint(10, 40)),
    "n_adults": lambda rng, _: str(rng.randint(2, 5)),
    "seat": lambda rng, _: str(rng.randint(1, 80)),
    "plate": lambda rng, _: _plate(rng),
    "email": _email,
}


class _Deck:
    """Draws without replacement, so a call does not repeat itself."""

    def __init__(self, rng: Random, items: list[Any]) -> None:
        self.rng, self.items = rng, list(items)

    def draw(self) -> Any:
        return self.items.pop(int(self.rng.random() * len(self.items)))


def _section(c: _Call, key: str, budget: float, chat: _Deck) -> None:
    """Talk through one reason until about ``budget`` words have been spoken."""
    rng, reason = c.rng, c.bank["reasons"][key]
    c.local = reason["slots"]
    qa, details, explain = (_Deck(rng, reason[k]) for k in ("qa", "details", "explain"))
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
    chat = _Deck(rng, bank["chat"])
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


def _choose(rng: Random, keys: list[str], cum: list[float], spec: PlantedSpec) -> tuple[str, ...]:
    first = rng.choices(keys, cum_weights=cum)[0]
    if rng.random() >= spec.secondary:
        return (first,)
    related = [k for k in load_bank()["reasons"][first]["related"] if k in keys]
    if related and rng.random() < 0.5:
        return first, pick(rng, related)
    while True:
        second = rng.choices(keys, cum_weights=cum)[0]
        if second != first:
            return first, second


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
    cum = list(itertools.accumulate((i + 1) ** -spec.imbalance for i in range(len(keys))))
    days = [FIRST_DAY + dt.timedelta(days=i) for i in range(DAYS)]
    day_cum = list(itertools.accumulate(_WEEKDAY_WEIGHT[d.weekday()] for d in days))
    seen: set[str] = set()
    for i, day in enumerate(sorted(rng.choices(days, cum_weights=day_cum, k=spec.calls))):
        for _ in range(100):
            agent = pick(rng, bank["agents"])
            memo = {"agent": agent, "customer": pick(rng, bank["customers"]),
                    "company": bank["company"]}  # fmt: skip
            c = _Call(rng, spec, memo)
            reasons: tuple[str, ...] = ()
            if rng.random() < spec.short:
                kind, detail = "short", _short(c)
            else:
                kind, detail, reasons = "regular", "", _choose(rng, keys, cum, spec)
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
            call_id=f"AV-{i + 1:05d}", date=day, kind=kind, detail=detail,
            reason=reasons[0] if reasons else "", secondary=reasons[1] if len(reasons) > 1 else "",
            turns=turns,
        )  # fmt: skip


def render_planted_txt(call: PlantedCall) -> str:
    """A call as a ``.txt`` transcript: one ``Agent:`` or ``Customer:`` line per turn."""
    return "".join(f"{role.capitalize()}: {text}\n" for role, text in call.turns)


@dataclass(frozen=True, slots=True)
class PlantedFiles:
    """Where :func:`write_planted` put things.

    Attributes
    ----------
    root : Path
    exports : Path
        The folder to ingest: ``calls/*.txt`` and ``manifest.csv``.
    manifest : Path
        ``exports/manifest.csv`` (``call_id, date``).
    truth : Path
        ``root/truth.csv``, the answer key (never ingested).
    counts : dict of str to int
        Calls per kind.
    """

    root: Path
    exports: Path
    manifest: Path
    truth: Path
    counts: dict[str, int]


def _csv_text(rows: list[tuple[str, ...]]) -> str:
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows(rows)
    return buffer.getvalue()


def write_planted(out_dir: Path, spec: PlantedSpec) -> PlantedFiles:
    """Write a planted corpus: transcripts and a manifest to ingest, and the answer key.

    Layout::

        out_dir/exports/calls/<call_id>.txt   Agent:/Customer: lines
        out_dir/exports/manifest.csv          call_id, date
        out_dir/truth.csv                     call_id, date, kind, detail, reason,
                                              secondary_reason, words (never ingested)
        out_dir/planted.json                  the spec, reason labels and counts

    Parameters
    ----------
    out_dir : Path
        A new or empty folder, or one holding earlier planted output (it is replaced).
    spec : PlantedSpec

    Returns
    -------
    PlantedFiles

    Raises
    ------
    InputError
        When ``out_dir`` holds something other than planted output.
    """
    out_dir = Path(out_dir)
    if out_dir.exists() and (
        not out_dir.is_dir()
        or (any(out_dir.iterdir()) and not (out_dir / "planted.json").is_file())
    ):
        raise InputError(
            f"{out_dir}: not an empty folder nor earlier planted output (planted.json); "
            "choose an empty or new folder"
        )
    truth: list[tuple[str, ...]] = [TRUTH_COLUMNS]
    manifest: list[tuple[str, ...]] = [("call_id", "date")]
    counts = dict.fromkeys(KINDS, 0)
    with contextlib.ExitStack() as stack:
        exports = stack.enter_context(atomic_dir(out_dir / "exports"))
        (exports / "calls").mkdir()
        for call in iter_planted_calls(spec):
            (exports / "calls" / f"{call.call_id}.txt").write_text(
                render_planted_txt(call), encoding="utf-8", newline="\n"
            )
            manifest.append((call.call_id, call.date.isoformat()))
            truth.append((call.call_id, call.date.isoformat(), call.kind, call.detail,
                          call.reason, call.secondary, str(call.word_count)))  # fmt: skip
            counts[call.kind] += 1
        atomic_write_text(exports / "manifest.csv", _csv_text(manifest))
    atomic_write_text(out_dir / "truth.csv", _csv_text(truth))
    info = {"generator": "talkthemes.demo.planted", "spec": asdict(spec),
            "reasons": planted_reasons(spec.reasons), "counts": counts}  # fmt: skip
    atomic_write_text(out_dir / "planted.json", json.dumps(info, indent=2) + "\n")
    root = out_dir / "exports"
    return PlantedFiles(out_dir, root, root / "manifest.csv", out_dir / "truth.csv", counts)


def read_truth(path: Path) -> list[dict[str, str]]:
    """Read ``truth.csv`` back: one dict per call with the :data:`TRUTH_COLUMNS`."""
    with Path(path).open(encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))
