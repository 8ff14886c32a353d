"""The bodies the service reads and writes: pydantic models, and so the OpenAPI schema.

Requests are strict (a number is not a string, unknown fields are refused) and every text
must be valid Unicode (no lone surrogate code points, which JSON's ``\\u`` escapes can
carry). Responses list every field, null where there is no value. The examples are the
invented utility's calls of the demo corpus.
"""

from __future__ import annotations

from typing import Annotated, Any, Literal

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, FiniteFloat, model_validator

__all__ = [
    "AssignIn",
    "AssignOut",
    "CallOut",
    "CallsPageOut",
    "ErrorOut",
    "HealthOut",
    "JobOut",
    "LabelIn",
    "LabelOut",
    "RefreshIn",
    "ThemesOut",
    "TranscriptsIn",
    "TranscriptsOut",
    "VersionsOut",
]


def _unicode(value: str) -> str:
    try:
        value.encode("utf-8")
    except UnicodeEncodeError:
        raise ValueError("not valid Unicode text (a lone surrogate code point)") from None
    return value


Text = Annotated[str, AfterValidator(_unicode)]
Name = Annotated[str, Field(min_length=1, max_length=200), AfterValidator(_unicode)]
MetaValue = Annotated[str, AfterValidator(_unicode)] | int | FiniteFloat | bool


class _In(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True)


class _Out(BaseModel):
    model_config = ConfigDict(extra="forbid")


# -- requests --------------------------------------------------------------------------------
class TurnIn(_In):
    """One turn of a transcript."""

    text: Text = Field(description="What was said.")
    speaker: Text | None = Field(None, description="The speaker label as written.")
    role: Literal["agent", "customer", "unknown"] | None = Field(
        None, description="The role; when left out, read from the speaker label."
    )
    start: FiniteFloat | None = Field(None, ge=0, description="Seconds from the call's start.")
    end: FiniteFloat | None = Field(None, ge=0, description="Seconds from the call's start.")


class _TranscriptBase(_In):
    text: Text | None = Field(
        None,
        description="The whole transcript; 'Speaker: text' lines are split into turns.",
    )
    turns: list[TurnIn] | None = Field(None, min_length=1, description="Or its turns.")
    metadata: dict[Name, MetaValue] = Field(
        default_factory=dict,
        description="Fields such as date (ISO 8601), queue, site; kept as strings.",
    )

    @model_validator(mode="after")
    def _text_or_turns(self) -> Any:
        if (self.text is None) == (self.turns is None):
            raise ValueError("give either 'text' or 'turns' (exactly one of them)")
        return self


class TranscriptIn(_TranscriptBase):
    """A transcript to store: its call id, and its text or its turns."""

    id: Name = Field(description="The call's id: its identity (sending it again is a no-op).")


class AssignItem(_TranscriptBase):
    """A transcript to assign; without an id it is named by its position ("0", "1", ...)."""

    id: Name | None = Field(None, description="The call's id (default: its position).")


_CALL_EXAMPLE = {
    "id": "C2026-11-000123",
    "text": "Agent: Thanks for calling.\nCustomer: My meter reading on the bill is an estimate.",
    "metadata": {"date": "2026-11-03", "queue": "billing"},
}
_TURNS_EXAMPLE = {
    "id": "C2026-11-000124",
    "turns": [
        {"speaker": "Agent", "text": "How can I help?", "start": 0.0},
        {
            "speaker": "Customer",
            "text": "Water is leaking from a pipe in the street.",
            "start": 3.5,
        },
    ],
}


class TranscriptsIn(_In):
    """Transcripts to store (at most ``[service] max_items`` per request)."""

    model_config = ConfigDict(json_schema_extra={"examples": [{"items": [_CALL_EXAMPLE]}]})

    items: list[TranscriptIn] = Field(min_length=1)


class AssignIn(_In):
    """Transcripts to assign (at most ``[service] max_items`` per request)."""

    model_config = ConfigDict(
        json_schema_extra={"examples": [{"items": [_CALL_EXAMPLE, _TURNS_EXAMPLE]}]}
    )

    items: list[AssignItem] = Field(min_length=1)


class LabelIn(_In):
    """A theme's label, note or hidden flag; a field left out stays as it is."""

    model_config = ConfigDict(
        json_schema_extra={
            "examples": [{"theme_id": 3, "label": "Meter readings", "note": "Estimated bills"}]
        }
    )

    theme_id: int = Field(ge=1, le=2**53)
    label: Annotated[Text, Field(max_length=200)] | None = None
    note: Annotated[Text, Field(max_length=2000)] | None = None
    hidden: bool | None = None


class RefreshIn(_In):
    """What the refresh does besides its usual run."""

    resweep: bool = Field(False, description="Choose K again with the [sweep] grid.")
    alert_on_new: bool = Field(False, description="Mark the result when a new theme appears.")


# -- responses ---------------------------------------------------------------------------------
class ErrorDetail(_Out):
    """An error: a stable code for programs, a message for people, details or null."""

    code: str
    message: str
    details: Any = None


class ErrorOut(_Out):
    """The one shape of every error."""

    model_config = ConfigDict(
        extra="forbid",
        json_schema_extra={
            "examples": [
                {
                    "error": {
                        "code": "unknown_theme",
                        "message": "there is no theme 99 in version 2 (its theme ids: 1–12)",
                        "details": None,
                    }
                }
            ]
        },
    )

    error: ErrorDetail


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
    suggested_name: str = Field(description="Its three most probable terms.")
    note: str
    hidden: bool
    status: str = Field(description="new or carried (from the previous version).")
    coverage: float = Field(description="Share of the version's calls this theme leads.")
    mean_share: float
    top_terms: list[str]
    coherence: dict[str, float]


class ThemesOut(_Out):
    """A version's themes, in the version's order."""

    version: int
    family: str | None
    k: int
    transcripts: int
    relevance_lambda: float
    themes: list[ThemeOut]


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

    run_id: int
    totals: dict[str, int]
    records: list[RecordOut]
    warnings: list[WarningOut]


class AssignResultOut(_Out):
    """Theme shares of one assigned transcript."""

    id: str
    lead_theme_id: int | None = Field(description="Null when no word is in the vocabulary.")
    lead_theme_name: str | None
    lead_share: float | None
    shares: list[ShareOut] | None
    known_terms: int
    reason: str


class AssignOut(_Out):
    """Theme shares of each transcript, all from one version."""

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
