"""``POST /v1/transcripts`` (store transcripts) and ``POST /v1/labels`` (name a theme)."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter

from talkthemes.service.auth import WriteToken
from talkthemes.service.errors import ApiError
from talkthemes.service.models import LabelIn, TranscriptsIn
from talkthemes.service.responses import LabelOut, TranscriptsOut
from talkthemes.service.routes import errors
from talkthemes.service.routes._items import records_of
from talkthemes.service.state import StateDep

router = APIRouter(tags=["write"])


@router.post(
    "/transcripts",
    response_model=TranscriptsOut,
    responses=errors(400, 401, 403, 409, 413, 415, 422),
    summary="Store transcripts",
)
def transcripts(state: StateDep, _: WriteToken, body: TranscriptsIn) -> dict[str, Any]:
    """Store transcripts as they arrive, idempotent by call id: each item's outcome is
    ``added``, ``unchanged`` (that id is stored with the same text: sending a batch again
    is safe), ``duplicate`` (a likely re-export of a stored call, not stored) or
    ``rejected`` (with the reason: an empty text, an id stored with another text, ...).
    Good items are stored even when others are rejected. They count for the next
    refresh. 409 while a refresh or another writer holds the workspace."""
    records = records_of(state, body.items)
    with state.writing():
        report = state.ws.ingest_records(records, source="service")
    return report.to_json()


@router.post(
    "/labels",
    response_model=LabelOut,
    responses=errors(400, 401, 403, 404, 409, 413, 415, 422),
    summary="Label a theme",
)
def labels(state: StateDep, _: WriteToken, body: LabelIn) -> dict[str, Any]:
    """Set a theme's label, note or hidden flag (a field left out stays as it is). Labels
    belong to theme ids, so a refresh carries them to the next version."""
    v = state.ws.version(state.version_number(None))
    if body.theme_id not in v.theme_ids:
        raise ApiError(
            404,
            "unknown_theme",
            f"there is no theme {body.theme_id} in the current version {v.n} (see GET /v1/themes)",
            details={"theme_ids": v.theme_ids},
        )
    if body.label is None and body.note is None and body.hidden is None:
        raise ApiError(
            422,
            "invalid_request",
            "give a label, a note or hidden to set",
            details=[{"field": "body", "message": "nothing to set"}],
        )
    return state.ws.label(body.theme_id, body.label, note=body.note, hidden=body.hidden).to_json()
