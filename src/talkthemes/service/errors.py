"""One JSON shape for every error, and the HTTP status of each kind of error.

Every error the service answers has the body ``{"error": {"code", "message", "details"}}``
(:class:`~talkthemes.service.models.ErrorOut`): ``code`` a stable word for programs,
``message`` one sentence for people, ``details`` more (the fields that failed
validation, the rejected items) or null. Bad input is a 4xx, never a 5xx (RFC 9110,
section 15.5): malformed JSON 400, a body that is not JSON 415, too large 413, fields of
the wrong type or unknown 422, an unknown id 404, a stage not run yet or a busy
workspace 409. Only a fault of the service itself is a 500, with a message that gives
nothing away; the traceback goes to the service's log.
"""

from __future__ import annotations

import logging
from collections.abc import Mapping
from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from starlette.exceptions import HTTPException as StarletteHTTPException

from talkthemes.errors import (
    ConfigError,
    InputError,
    NotReadyError,
    StoreError,
    TalkthemesError,
    WorkspaceBusyError,
)

__all__ = ["ApiError", "error_response", "install"]

log = logging.getLogger(__name__)

#: Seconds a client is told to wait before trying a busy workspace again.
RETRY_AFTER = 30

#: Status and code of each error of the API's tree.
_TREE: tuple[tuple[type[TalkthemesError], int, str], ...] = (
    (WorkspaceBusyError, 409, "workspace_busy"),
    (NotReadyError, 409, "not_ready"),
    (InputError, 422, "invalid_input"),
    (ConfigError, 422, "invalid_input"),
    (StoreError, 503, "store_unavailable"),
)

#: Codes of the statuses Starlette raises itself (a path or method it does not know).
_HTTP_CODES = {
    400: "bad_request",
    404: "not_found",
    405: "method_not_allowed",
    413: "body_too_large",
    415: "unsupported_media_type",
}


class ApiError(Exception):
    """An error the service answers as it is: status, code, message, details, headers.

    Parameters
    ----------
    status : int
    code : str
    message : str
    details : any, optional
        JSON-ready.
    headers : mapping, optional
        Extra response headers (``WWW-Authenticate``, ``Retry-After``).
    """

    def __init__(
        self,
        status: int,
        code: str,
        message: str,
        details: Any = None,
        headers: Mapping[str, str] | None = None,
    ) -> None:
        super().__init__(message)
        self.status = status
        self.code = code
        self.message = message
        self.details = details
        self.headers = dict(headers or {})


def error_response(
    status: int,
    code: str,
    message: str,
    details: Any = None,
    headers: Mapping[str, str] | None = None,
) -> JSONResponse:
    """The response of an error, in the one shape."""
    body = {"error": {"code": code, "message": message, "details": details}}
    return JSONResponse(body, status_code=status, headers=dict(headers or {}))


def _api_error(_: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, ApiError)
    return error_response(exc.status, exc.code, exc.message, exc.details, exc.headers)


def _talkthemes_error(_: Request, exc: Exception) -> JSONResponse:
    for kind, status, code in _TREE:
        if isinstance(exc, kind):
            busy = isinstance(exc, WorkspaceBusyError)
            headers = {"Retry-After": str(RETRY_AFTER)} if busy else None
            if status >= 500:
                log.error("store: %s", exc)
            return error_response(status, code, str(exc), headers=headers)
    return _internal(_, exc)


def _field(loc: Any) -> str:
    """``("body", "items", 3, "text")`` → ``items[3].text``."""
    parts = [
        p if isinstance(p, int) else str(p).encode("utf-8", "replace").decode("utf-8")
        for p in loc
        if p not in ("body", "query", "path", "header")
    ]
    out = ""
    for p in parts:
        out += f"[{p}]" if isinstance(p, int) else (f".{p}" if out else str(p))
    return out or "body"


def _validation(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, RequestValidationError)
    errors = list(exc.errors())
    if any(e.get("type") == "json_invalid" for e in errors):
        where = next(e for e in errors if e.get("type") == "json_invalid")
        reason = (where.get("ctx") or {}).get("error", "not JSON")
        return error_response(
            400, "malformed_json", f"the body is not valid JSON: {reason}", details=None
        )
    content_type = request.headers.get("content-type", "")
    not_json = request.method in ("POST", "PUT", "PATCH") and "json" not in content_type.lower()
    if not_json and any(tuple(e.get("loc", ())) == ("body",) for e in errors):
        return error_response(
            415,
            "unsupported_media_type",
            "send the body as JSON with the header 'Content-Type: application/json'",
        )
    details = [
        {"field": _field(e.get("loc", ())), "message": str(e.get("msg", "")), "type": e.get("type")}
        for e in errors
    ]
    first = details[0] if details else {"field": "request", "message": "invalid"}
    more = f" (and {len(details) - 1} more)" if len(details) > 1 else ""
    return error_response(
        422,
        "invalid_request",
        f"{first['field']}: {first['message']}{more}",
        details=details,
    )


def _http(_: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, StarletteHTTPException)
    code = _HTTP_CODES.get(exc.status_code, "http_error")
    message = str(exc.detail) if exc.detail else code.replace("_", " ")
    if exc.status_code == 404:
        message = "no such endpoint: see /docs for the endpoints"
    elif exc.status_code == 405:
        message = "this endpoint does not answer that method (see the Allow header)"
    return error_response(exc.status_code, code, message, headers=exc.headers)


def _internal(_: Request, exc: Exception) -> JSONResponse:
    log.error("unexpected error", exc_info=(type(exc), exc, exc.__traceback__))
    return error_response(
        500, "internal_error", "the service failed to answer; its log has the details"
    )


def install(app: FastAPI) -> None:
    """Answer every error of ``app`` in the one shape (see the module notes)."""
    app.add_exception_handler(ApiError, _api_error)
    app.add_exception_handler(TalkthemesError, _talkthemes_error)
    app.add_exception_handler(RequestValidationError, _validation)
    app.add_exception_handler(StarletteHTTPException, _http)
    app.add_exception_handler(Exception, _internal)
