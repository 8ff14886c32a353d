"""The planted scenario's phrase bank, the spec of a planted corpus and its calls."""

from __future__ import annotations

import datetime as dt
import functools
import json
from dataclasses import dataclass
from importlib import resources
from typing import Any

from talkthemes.errors import InputError

__all__ = [
    "KINDS",
    "MAX_REASONS",
    "SHORT_KINDS",
    "TRUTH_COLUMNS",
    "PlantedCall",
    "PlantedSpec",
    "load_bank",
    "planted_reasons",
]

FIRST_DAY = dt.date(2027, 2, 1)
DAYS = 89  # to 2027-04-30
KINDS = ("regular", "short")
SHORT_KINDS = ("silent", "wrong_number", "dropped", "small_talk")
TRUTH_COLUMNS = ("call_id", "date", "kind", "detail", "reason", "secondary_reason", "words")


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
    weights : tuple of float, optional
        One weight per reason (bank order), replacing the ``imbalance`` weights: a batch in
        which one reason rises, or a reason the earlier batches never had appears.
    first_day : datetime.date
        The first day calls are spread over (2027-02-01 by default).
    days : int
        Number of days, from ``first_day`` (89 by default: February to April 2027).
    prefix : str
        Call ids are ``<prefix>-00001``, …; batches of one scenario use distinct prefixes
        so their ids never collide.
    exact : bool
        Draw kinds and lead reasons from a shuffled deck holding exactly ``round(short ×
        calls)`` short calls and each reason's share of the rest (largest remainders),
        instead of independently per call: a planted share is then met exactly.
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
    weights: tuple[float, ...] | None = None
    first_day: dt.date = FIRST_DAY
    days: int = DAYS
    prefix: str = "AV"
    exact: bool = False

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
        if self.weights is not None and (
            len(self.weights) != self.reasons or not all(w > 0 for w in self.weights)
        ):
            raise InputError(
                f"weights must be {self.reasons} positive numbers (one per reason), "
                f"got {self.weights}"
            )
        if self.days < 1:
            raise InputError(f"days must be at least 1, got {self.days}")
        if not self.prefix.replace("_", "").isalnum():
            raise InputError(f"prefix must be letters, digits and '_', got {self.prefix!r}")

    def reason_weights(self) -> tuple[float, ...]:
        """The weight of each reason: :attr:`weights`, or ``(i + 1) ** -imbalance``."""
        if self.weights is not None:
            return tuple(float(w) for w in self.weights)
        return tuple((i + 1) ** -self.imbalance for i in range(self.reasons))


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
