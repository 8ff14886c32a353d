"""[ingest] settings: reading transcript files and tables."""

from __future__ import annotations

import codecs
from typing import Literal

from pydantic import Field, field_validator

from talkthemes.config._section import _Section

__all__ = ["IngestSettings"]


class IngestSettings(_Section):
    """[ingest] Reading transcript files and tables."""

    max_file_mb: float = Field(
        50.0, gt=0, description="Files larger than this (in MB) are rejected unread."
    )
    encoding_fallback: str = Field(
        "cp1252",
        description=(
            "Text that is not valid UTF-8 (nor UTF-16 with a byte-order mark) is decoded with "
            "this codec instead; bytes it cannot map become U+FFFD and the file gets a warning."
        ),
    )
    agent_labels: list[str] = Field(
        default_factory=lambda: [
            "agent",
            "advisor",
            "adviser",
            "rep",
            "representative",
            "operator",
            "csr",
            "associate",
            "specialist",
            "support",
            "staff",
            "interviewer",
            "host",
        ],
        description=(
            "Speaker labels read as the agent role. Matched case-insensitively against the "
            "label's first word, ignoring trailing digits and punctuation ('Agent 2' → agent)."
        ),
    )
    customer_labels: list[str] = Field(
        default_factory=lambda: [
            "customer",
            "caller",
            "client",
            "member",
            "user",
            "guest",
            "patient",
            "respondent",
            "participant",
            "interviewee",
        ],
        description="Speaker labels read as the customer role (same matching as agent_labels).",
    )
    id_column: str = Field("", description="Transcript id column in tables; empty = detect.")
    text_column: str = Field("", description="Text column in tables; empty = detect.")
    speaker_column: str = Field(
        "", description="Speaker column in per-turn tables; empty = detect."
    )
    start_column: str = Field(
        "", description="Turn start time column in per-turn tables; empty = detect."
    )
    manifest_key_column: str = Field(
        "",
        description="Column of a manifest holding the transcript id or file name; empty = detect.",
    )
    date_column: str = Field(
        "", description="Column holding the call date (tables and manifests); empty = detect."
    )
    follow_symlinks: bool = Field(
        True, description="Follow symbolic links inside folders (loops are detected and skipped)."
    )
    reexport_min_words: int = Field(
        25,
        ge=1,
        description=(
            "A call whose text equals a stored call's under another id is a likely re-export "
            "only with at least this many words and no conflicting metadata "
            "(reexport_fields); shorter texts (a caller who hangs up) are stored as "
            "different calls and reported as 'same text as <id>'."
        ),
    )
    reexport_action: Literal["skip", "keep"] = Field(
        "skip",
        description="What ingest does with a likely re-export: skip it (reported) or keep it.",
    )
    reexport_fields: list[str] = Field(
        default_factory=lambda: ["date", "duration", "agent"],
        description=(
            "Metadata that tells two calls apart: a field whose name contains one of these "
            "words (date, call_duration, agent_id...) with different values on the two "
            "calls means they are different calls, not a re-export."
        ),
    )

    @field_validator("encoding_fallback")
    @classmethod
    def _known_codec(cls, value: str) -> str:
        try:
            codecs.lookup(value)
        except LookupError:
            raise ValueError(f"unknown text encoding {value!r} (e.g. cp1252, latin-1)") from None
        return value
