"""What ``status`` shows of the store: the counts of what it holds, and where each stage stands.

Both are documents of ``status --json``: :meth:`StoreSummary.to_json` and
:meth:`Stages.to_json` give them, key for key, in the order the command prints them.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from talkthemes.store.records._base import EMPTY

__all__ = [
    "LikelyReexports",
    "MetadataField",
    "PreparedStage",
    "PublishedStage",
    "ReexportPair",
    "Stages",
    "StoreSummary",
    "SweptStage",
]


@dataclass(frozen=True, slots=True)
class MetadataField:
    """One metadata field of the stored transcripts.

    Attributes
    ----------
    transcripts : int
        Stored transcripts that have it.
    distinct : int
        Its distinct values.
    top : mapping of str to int
        Its five most common values and their counts, most common first.
    """

    transcripts: int
    distinct: int
    top: Mapping[str, int] = EMPTY

    def to_json(self) -> dict[str, Any]:
        """The JSON form."""
        return {"transcripts": self.transcripts, "distinct": self.distinct, "top": dict(self.top)}


@dataclass(frozen=True, slots=True)
class ReexportPair:
    """A call kept or skipped as a likely re-export of a stored call (``tid`` has the same
    text as ``same_text_as``)."""

    tid: str
    same_text_as: str
    kept: bool

    def to_json(self) -> dict[str, Any]:
        """The JSON form (the call's id as ``id``)."""
        return {"id": self.tid, "same_text_as": self.same_text_as, "kept": self.kept}


@dataclass(frozen=True, slots=True)
class LikelyReexports:
    """Likely re-exports met so far: how many were skipped or kept, and the first pairs."""

    count: int = 0
    skipped: int = 0
    kept: int = 0
    first: tuple[ReexportPair, ...] = ()

    def to_json(self) -> dict[str, Any]:
        """The JSON form."""
        return {
            "count": self.count,
            "skipped": self.skipped,
            "kept": self.kept,
            "first": [p.to_json() for p in self.first],
        }


@dataclass(frozen=True, slots=True)
class StoreSummary:
    """The counts ``status`` shows of what the store holds.

    Attributes
    ----------
    transcripts, words : int
        Stored transcripts and their words.
    by_format : mapping of str to int
        Transcripts per input format.
    turns_by_role, transcripts_with_role : mapping of str to int
        Turns per role, and transcripts with at least one turn of the role (roles with
        none left out).
    by_month : mapping of str to int
        Transcripts per month (``YYYY-MM``) of their ``date`` field.
    date_range : tuple of str or None
        The first and last ``date`` (None when no transcript has one).
    metadata_fields : mapping of str to MetadataField
        Per field, by name.
    manifest_rows_without_transcript : int
        Transcript ids a manifest named that have no stored transcript (yet).
    ingest_runs, interrupted_ingest_runs : int
        Ingest runs, and those that did not finish since the last that did.
    rejected_inputs : int
    likely_reexports : LikelyReexports
    same_text_pairs : int
        Pairs of different calls with the same text (both stored).
    """

    transcripts: int
    words: int
    by_format: Mapping[str, int]
    turns_by_role: Mapping[str, int]
    transcripts_with_role: Mapping[str, int]
    by_month: Mapping[str, int]
    date_range: tuple[str, str] | None
    metadata_fields: Mapping[str, MetadataField]
    manifest_rows_without_transcript: int
    ingest_runs: int
    interrupted_ingest_runs: int
    rejected_inputs: int
    likely_reexports: LikelyReexports
    same_text_pairs: int

    def to_json(self) -> dict[str, Any]:
        """The JSON form: the summary's keys of ``status --json``, in its order."""
        return {
            "transcripts": self.transcripts,
            "words": self.words,
            "by_format": dict(self.by_format),
            "turns_by_role": dict(self.turns_by_role),
            "transcripts_with_role": dict(self.transcripts_with_role),
            "by_month": dict(self.by_month),
            "date_range": None if self.date_range is None else list(self.date_range),
            "metadata_fields": {k: f.to_json() for k, f in self.metadata_fields.items()},
            "manifest_rows_without_transcript": self.manifest_rows_without_transcript,
            "ingest_runs": self.ingest_runs,
            "interrupted_ingest_runs": self.interrupted_ingest_runs,
            "rejected_inputs": self.rejected_inputs,
            "likely_reexports": self.likely_reexports.to_json(),
            "same_text_pairs": self.same_text_pairs,
        }


@dataclass(frozen=True, slots=True)
class PreparedStage:
    """The current prep: its hash and when it was built."""

    hash: str
    at: str

    def to_json(self) -> dict[str, Any]:
        """The JSON form."""
        return {"hash": self.hash, "at": self.at}


@dataclass(frozen=True, slots=True)
class SweptStage:
    """The latest sweep: its id, start and status."""

    id: int
    at: str
    status: str

    def to_json(self) -> dict[str, Any]:
        """The JSON form."""
        return {"id": self.id, "at": self.at, "status": self.status}


@dataclass(frozen=True, slots=True)
class PublishedStage:
    """The current version: its number and when it was published."""

    version: int
    at: str

    def to_json(self) -> dict[str, Any]:
        """The JSON form."""
        return {"version": self.version, "at": self.at}


@dataclass(frozen=True, slots=True)
class Stages:
    """Where each stage after ingest stands (None: not reached yet)."""

    prepared: PreparedStage | None = None
    swept: SweptStage | None = None
    published: PublishedStage | None = None

    def to_json(self) -> dict[str, Any]:
        """The JSON form: ``stages`` of ``status --json``."""
        return {
            "prepared": None if self.prepared is None else self.prepared.to_json(),
            "swept": None if self.swept is None else self.swept.to_json(),
            "published": None if self.published is None else self.published.to_json(),
        }
