"""The request body limit (``[service] max_body_mb``), as plain ASGI middleware.

A request that declares a larger ``Content-Length`` is answered 413 before its body is
read; a body sent without a length (chunked) is counted as it arrives and refused once it
passes the limit, so the service never holds more than the limit of one request in
memory. A ``Content-Length`` that is not a number is a 400.
"""

from __future__ import annotations

import json
from typing import Any

from starlette.types import ASGIApp, Message, Receive, Scope, Send

__all__ = ["BodyLimit"]


class BodyLimit:
    """Refuse request bodies over ``max_bytes`` (see the module notes).

    Parameters
    ----------
    app : ASGI app
    max_bytes : int
    """

    def __init__(self, app: ASGIApp, max_bytes: int) -> None:
        self.app = app
        self.max_bytes = int(max_bytes)

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        declared = dict(scope.get("headers") or []).get(b"content-length")
        if declared is not None:
            try:
                length = int(declared)
            except ValueError:
                await _refuse(send, 400, "bad_request", "Content-Length is not a number")
                return
            if length > self.max_bytes:
                await _refuse(send, 413, "body_too_large", self._message())
                return
        seen = 0
        started = refused = False

        async def counted() -> Message:
            # Past the limit, answer 413 here and tell the app the client went away: the
            # app's own answer to that is dropped (see ``watched``).
            nonlocal seen, refused
            message = await receive()
            if message["type"] == "http.request" and not refused:
                seen += len(message.get("body", b""))
                if seen > self.max_bytes:
                    refused = True
                    if not started:
                        await _refuse(send, 413, "body_too_large", self._message())
                    return {"type": "http.disconnect"}
            return message

        async def watched(message: Message) -> None:
            nonlocal started
            if refused:
                return
            started = started or message["type"] == "http.response.start"
            await send(message)

        await self.app(scope, counted, watched)

    def _message(self) -> str:
        mb = self.max_bytes / 1_000_000
        return (
            f"the request body is larger than {mb:g} MB ([service] max_body_mb): "
            "send fewer transcripts per request"
        )


async def _refuse(send: Send, status: int, code: str, message: str) -> None:
    body = json.dumps({"error": {"code": code, "message": message, "details": None}}).encode()
    headers: list[Any] = [
        (b"content-type", b"application/json"),
        (b"content-length", str(len(body)).encode()),
        (b"connection", b"close"),
    ]
    await send({"type": "http.response.start", "status": status, "headers": headers})
    await send({"type": "http.response.body", "body": body})
