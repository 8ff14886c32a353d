"""The endpoints, one module per area, each an :class:`fastapi.APIRouter` mounted at
``/v1``: :mod:`.health`, :mod:`.themes` (versions, themes, a theme's calls),
:mod:`.calls`, :mod:`.assign`, :mod:`.transcripts` (ingest and labels), :mod:`.jobs`
(refresh and its job). :func:`errors` documents the error answers of a route."""

from __future__ import annotations

from typing import Any

from talkthemes.service.models import ErrorOut

__all__ = ["errors"]

_WHY = {
    400: "Malformed JSON, or a malformed Authorization header.",
    401: "No token, or an unknown or revoked one (RFC 6750).",
    403: "The token's scope does not allow this (RFC 6750: insufficient_scope).",
    404: "An unknown theme, version, call or job.",
    409: "Nothing published yet (the message says what to run), or the workspace is busy.",
    413: "The body is larger than [service] max_body_mb.",
    415: "The body is not sent as JSON.",
    422: "Fields of the wrong type, unknown fields, too many items, rejected transcripts.",
}


def errors(*statuses: int) -> dict[int | str, dict[str, Any]]:
    """The ``responses`` of a route for its error statuses, each in the one error shape."""
    return {s: {"model": ErrorOut, "description": _WHY[s]} for s in statuses}
