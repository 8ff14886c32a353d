"""``GET /v1/calls/{call_id}``: one stored call's shares, metadata and (as set) its words."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Query

from talkthemes.errors import InputError
from talkthemes.service.auth import ReadToken
from talkthemes.service.errors import ApiError
from talkthemes.service.responses import CallOut
from talkthemes.service.routes import errors
from talkthemes.service.state import StateDep

router = APIRouter(tags=["calls"])


@router.get(
    "/calls/{call_id:path}",
    response_model=CallOut,
    responses=errors(400, 401, 404, 409, 422),
    summary="One call",
)
def call(
    state: StateDep,
    _: ReadToken,
    call_id: str,
    version: Annotated[
        int | None, Query(ge=1, description="A kept version (default: the current one).")
    ] = None,
) -> dict[str, Any]:
    """A stored call's theme shares under a version, its metadata, and its turns as
    ``[service] call_text`` allows: none (the default), masked, or the original."""
    n = state.version_number(version)
    try:
        detail = state.ws.call(call_id, version=n, text=state.settings.call_text)
    except InputError as exc:
        raise ApiError(404, "unknown_call", str(exc)) from None
    return detail.to_json()
