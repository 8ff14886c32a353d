"""The bodies the service reads, and its error body: pydantic models, and so the OpenAPI
schema (the bodies it answers are in :mod:`~talkthemes.service.responses`).

Requests are strict (a number is not a string, unknown fields are refused) and every text
must be valid Unicode (no lone surrogate code points, which JSON's ``\\u`` escapes can
carry). The examples are the invented utility's calls of the demo corpus.
"""

from __future__ import annotations

from typing import Annotated, Any, Literal

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, FiniteFloat, model_validator

__all__ = ["AssignIn", "ErrorOut", "LabelIn", "RefreshIn", "TranscriptsIn"]


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
