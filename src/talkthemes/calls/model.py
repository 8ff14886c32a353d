"""What every reader produces: transcripts made of turns, rejects and warnings."""

from __future__ import annotations

import hashlib
import json
import re
import unicodedata
from dataclasses import dataclass, field

__all__ = ["ROLES", "Reject", "StoredForm", "Transcript", "Turn", "Warning_", "normalised_hash"]

ROLES = ("agent", "customer", "unknown")


@dataclass(slots=True)
class Turn:
    """One speaker turn.

    Attributes
    ----------
    speaker : str
        The label as written in the input ("Agent", "Maria", ""); empty when unlabelled.
    role : str
        One of ``agent``, ``customer``, ``unknown``.
    text : str
        What was said, as written (whitespace collapsed).
    start, end : float or None
        Seconds from the start of the call, when the input gives them.
    """

    speaker: str
    role: str
    text: str
    start: float | None = None
    end: float | None = None


@dataclass(slots=True)
class Transcript:
    """One conversation as read from an input.

    Attributes
    ----------
    tid : str
        The transcript id: the id column's value for tables, the file name without its
        extension for files.
    turns : list of Turn
    source : str
        The file it came from (with ``:row`` or ``:rows a-b`` for tables).
    format : str
        ``txt``, ``vtt``, ``csv``, ``jsonl`` or ``parquet``.
    metadata : dict of str to str
        Fields carried by the input itself (date, queue, ...); manifests add more.
    """

    tid: str
    turns: list[Turn]
    source: str
    format: str
    metadata: dict[str, str] = field(default_factory=dict)
    digest: str = field(default="", repr=False, compare=False)
    stored: StoredForm | None = field(default=None, repr=False, compare=False)

    def text(self) -> str:
        """All turns' text joined by newlines."""
        return "\n".join(t.text for t in self.turns)

    def content_hash(self) -> str:
        """Hash of the normalised text, used to find duplicates under other names (cached)."""
        if not self.digest:
            self.digest = normalised_hash(self.text())
        return self.digest

    def stored_form(self) -> StoredForm:
        """The turns as the store keeps them, with their counts (cached)."""
        if self.stored is None:
            self.stored = StoredForm.of(self.turns)
        return self.stored

    def __reduce__(self) -> tuple:
        # Ingest parses in worker processes and sends transcripts back to the storing one.
        # Turns travel as the stored form's one JSON text (which the storing process writes
        # as is): several times cheaper to pickle than one object per turn.
        return (
            _rebuild_from_stored,
            (self.tid, self.source, self.format, self.metadata, self.digest, self.stored_form()),
        )


def _rebuild_from_stored(
    tid: str, source: str, fmt: str, metadata: dict[str, str], digest: str, stored: StoredForm
) -> Transcript:
    turns = [Turn(u[0], u[1], u[4], u[2], u[3]) for u in json.loads(stored.turns_json)]
    return Transcript(tid, turns, source, fmt, metadata, digest, stored)


@dataclass(frozen=True, slots=True)
class StoredForm:
    """A transcript's turns in the store's form: one JSON text, plus counts kept beside it.

    Attributes
    ----------
    turns_json : str
        ``[[speaker, role, start, end, text], ...]`` in turn order.
    n_words, n_chars : int
        Words (whitespace-separated) and characters of all turns' text.
    role_turns : tuple of int
        Turns per role, in the order of :data:`ROLES`.
    """

    turns_json: str
    n_words: int
    n_chars: int
    role_turns: tuple[int, int, int]

    @classmethod
    def of(cls, turns: list[Turn]) -> StoredForm:
        """Build the stored form of ``turns``."""
        texts = [u.text for u in turns]
        roles = [u.role for u in turns]
        return cls(
            json.dumps(
                [[u.speaker, u.role, u.start, u.end, u.text] for u in turns],
                ensure_ascii=False,
                separators=(",", ":"),
            ),
            # readers collapse whitespace, so words = spaces + 1 per non-empty turn
            sum(x.count(" ") + 1 for x in texts if x),
            sum(map(len, texts)),
            (roles.count("agent"), roles.count("customer"), roles.count("unknown")),
        )


@dataclass(frozen=True, slots=True)
class Reject:
    """An input (file, or row of a table) that could not be used, and why."""

    source: str
    reason: str
    format: str
    row: int | None = None


@dataclass(frozen=True, slots=True)
class Warning_:  # noqa: N801 (avoids shadowing the builtin Warning)
    """Something a user should know about an input that was still used."""

    source: str
    message: str
    row: int | None = None


_WORD = re.compile(r"\w+")
# For ASCII text \w is [A-Za-z0-9_]: every other byte becomes a space.
_ASCII_WORD_BYTES = bytes(
    b if b < 128 and (chr(b).isalnum() or chr(b) == "_") else 32 for b in range(256)
)


def normalised_hash(text: str) -> str:
    """SHA-256 of text after NFKC, case folding, punctuation removal and whitespace collapse.

    Two exports of the same call that differ only in case, punctuation, line endings or
    spacing hash equal.
    """
    norm = text.casefold()
    if norm.isascii():
        # the same runs of \w characters, one space apart, without the regex engine
        words = norm.encode("ascii").translate(_ASCII_WORD_BYTES).split()
        return hashlib.sha256(b" ".join(words)).hexdigest()
    norm = unicodedata.normalize("NFKC", norm)
    norm = " ".join(_WORD.findall(norm))
    return hashlib.sha256(norm.encode("utf-8")).hexdigest()
