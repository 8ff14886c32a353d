"""The bodies the service answers: pydantic models, and so the OpenAPI schema's responses.

Every field is listed, null where there is no value; the examples are the invented
utility's calls of the demo corpus. The error body is :class:`~.models.ErrorOut`.
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field

__all__ = [
    "AssignOut",
    "CallOut",
    "CallsPageOut",
    "HealthOut",
    "JobOut",
    "LabelOut",
    "ThemesOut",
    "TranscriptsOut",
    "VersionsOut",
]


class _Out(BaseModel):
    model_config = ConfigDict(extra="forbid")


class HealthOut(_Out):
    """Whether the service can answer."""

    status: Literal["ok"]
    store: Literal["ok"]
    current_version: int | None
    service_version: str


class VersionOut(_Out):
    """A kept version."""

    version: int
    created_at: str
    current: bool
    family: str | None
    k: int | None
    transcripts: int | None
    made_by: Literal["publish", "refresh"]
    previous_version: int | None


class VersionsOut(_Out):
    """The versions kept, oldest first."""

    current: int | None
    versions: list[VersionOut]


class ThemeOut(_Out):
    """A theme of a version."""

    theme_id: int
    name: str = Field(description="The label, or the suggested name until labelled.")
    label: str | None
    suggested_name: str = Field(
        description="A short readable name built from its most relevant phrases and terms."
    )
    note: str
    hidden: bool
    status: str = Field(description="new or carried (from the previous version).")
    coverage: float = Field(description="Share of the version's calls this theme leads.")
    mean_share: float
    top_terms: list[str]
    coherence: dict[str, float]


class UnthemedOut(_Out):
    """A version's transcripts too short to carry a theme (the unthemed group)."""

    count: int = Field(description="Transcripts of the version in the group.")
    share: float = Field(
        description="The group's share of the version's transcripts (themed and unthemed)."
    )
    by_reason: dict[str, int] = Field(description="The count per reason, largest first.")


class ThemesOut(_Out):
    """A version's themes, in the version's order."""

    model_config = ConfigDict(
        extra="forbid",
        json_schema_extra={
            "examples": [
                {
                    "version": 3,
                    "family": "lda",
                    "k": 12,
                    "transcripts": 18240,
                    "relevance_lambda": 0.6,
                    "themes": [
                        {
                            "theme_id": 7,
                            "name": "Meter readings",
                            "label": "Meter readings",
                            "suggested_name": "Meter reading · estimate",
                            "note": "Estimated bills",
                            "hidden": False,
                            "status": "carried",
                            "coverage": 0.112,
                            "mean_share": 0.094,
                            "top_terms": ["meter", "reading", "estimate", "smart_meter", "photo"],
                            "coherence": {"c_npmi": 0.142, "c_v": 0.611},
                        }
                    ],
                    "unthemed": {
                        "count": 412,
                        "share": 0.022,
                        "by_reason": {"too short after preparation": 412},
                    },
                }
            ]
        },
    )

    version: int
    family: str | None
    k: int
    transcripts: int = Field(description="Transcripts with themes (the unthemed not counted).")
    relevance_lambda: float
    themes: list[ThemeOut]
    unthemed: UnthemedOut


class CallShareOut(_Out):
    """A call of a theme."""

    call_id: str
    share: float
    lead_theme_id: int
    lead_share: float
    metadata: dict[str, str]


class CallsPageOut(_Out):
    """One page of a theme's calls, most dominated first."""

    version: int
    theme_id: int
    total: int
    offset: int
    limit: int
    next_offset: int | None
    calls: list[CallShareOut]


class ShareOut(_Out):
    """A theme's share in a call."""

    theme_id: int
    share: float


class TurnOut(_Out):
    """A turn of a call (masked unless the service shows the original)."""

    speaker: str
    role: str
    start: float | None
    end: float | None
    text: str


class CallOut(_Out):
    """One stored call under a version."""

    call_id: str
    version: int
    in_version: bool
    lead_theme_id: int | None
    lead_share: float | None
    shares: list[ShareOut] | None
    metadata: dict[str, str]
    text: Literal["none", "masked", "original"]
    turns: list[TurnOut] | None
    reason: str


class RecordOut(_Out):
    """What happened to one transcript sent to be stored."""

    index: int
    id: str | None
    outcome: Literal["added", "unchanged", "duplicate", "rejected"]
    reason: str
    duplicate_of: str | None


class WarningOut(_Out):
    """Something used, but worth a look."""

    source: str
    message: str


class TranscriptsOut(_Out):
    """The outcome of each transcript, in request order."""

    model_config = ConfigDict(
        extra="forbid",
        json_schema_extra={
            "examples": [
                {
                    "run_id": 41,
                    "totals": {"added": 1, "unchanged": 1, "duplicate": 0, "rejected": 1},
                    "records": [
                        {
                            "index": 0,
                            "id": "C2026-11-000123",
                            "outcome": "added",
                            "reason": "",
                            "duplicate_of": None,
                        },
                        {
                            "index": 1,
                            "id": "C2026-11-000098",
                            "outcome": "unchanged",
                            "reason": "stored already with the same text",
                            "duplicate_of": None,
                        },
                        {
                            "index": 2,
                            "id": "C2026-11-000124",
                            "outcome": "rejected",
                            "reason": "record 2 (id 'C2026-11-000124'): empty text",
                            "duplicate_of": None,
                        },
                    ],
                    "warnings": [],
                }
            ]
        },
    )

    run_id: int
    totals: dict[str, int]
    records: list[RecordOut]
    warnings: list[WarningOut]


class AssignResultOut(_Out):
    """Theme shares of one assigned transcript."""

    id: str
    lead_theme_id: int | None = Field(
        description="Null for a transcript of the unthemed group (too few words the version "
        "knows; the reason says why)."
    )
    lead_theme_name: str = Field(description="The lead theme's name, or 'unthemed'.")
    lead_share: float | None
    shares: list[ShareOut] | None
    known_terms: int
    reason: str
    language: str | None = Field(
        None,
        description="The call's language when calls of several languages were sent: a call "
        "in a language with themes of its own is assigned with that language's current "
        "version, whose theme ids and names these are (docs/languages.md).",
    )
    language_version: int | None = Field(
        None, description="The version of that language that answered (with language)."
    )


class AssignOut(_Out):
    """Theme shares of each transcript, all from one version."""

    model_config = ConfigDict(
        extra="forbid",
        json_schema_extra={
            "examples": [
                {
                    "version": 3,
                    "results": [
                        {
                            "id": "C2026-11-000123",
                            "lead_theme_id": 7,
                            "lead_theme_name": "Meter readings",
                            "lead_share": 0.71,
                            "shares": [
                                {"theme_id": 7, "share": 0.71},
                                {"theme_id": 2, "share": 0.29},
                            ],
                            "known_terms": 9,
                            "reason": "",
                        }
                    ],
                    "stored": None,
                }
            ]
        },
    )

    version: int
    results: list[AssignResultOut]
    stored: TranscriptsOut | None


class LabelOut(_Out):
    """A theme's label, note and hidden flag as stored now."""

    theme_id: int
    label: str
    note: str
    hidden: bool


class ProgressOut(_Out):
    """The last progress report of a job."""

    done: int | float
    total: int | float
    step: str


class JobErrorOut(_Out):
    """Why a job failed."""

    code: str
    message: str


class JobOut(_Out):
    """A background job and where it stands."""

    model_config = ConfigDict(
        extra="forbid",
        json_schema_extra={
            "examples": [
                {
                    "job_id": "5f0c2a9e41d7b368",
                    "kind": "refresh",
                    "state": "running",
                    "options": {"resweep": False, "alert_on_new": False},
                    "created_at": "2026-11-04T02:00:01+00:00",
                    "started_at": "2026-11-04T02:00:03+00:00",
                    "finished_at": None,
                    "progress": {"done": 3, "total": 7, "step": "fitting lda K=12"},
                    "result": None,
                    "error": None,
                }
            ]
        },
    )

    job_id: str
    kind: Literal["refresh"]
    state: Literal["starting", "running", "done", "failed"]
    options: dict[str, Any]
    created_at: str
    started_at: str | None
    finished_at: str | None
    progress: ProgressOut
    result: dict[str, Any] | None
    error: JobErrorOut | None
