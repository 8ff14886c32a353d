"""Who may ask: bearer tokens (RFC 6750) with a read or write scope.

Every endpoint but ``/v1/health`` needs ``Authorization: Bearer <token>``, a token made by
``talkthemes token add`` (:meth:`talkthemes.Workspace.add_token`). ``read`` tokens may call
the GET endpoints and ``POST /v1/assign``; ``write`` tokens may also ingest, label and
refresh (a write token may read). The answers follow RFC 6750, section 3:

* no credentials, or another scheme → 401, ``WWW-Authenticate: Bearer realm="talkthemes"``
  (no error code: the client may not have known that a token is needed);
* a malformed ``Authorization`` header (``Bearer`` with nothing after it, or two
  tokens) → 400, ``error="invalid_request"``;
* an unknown, revoked or mistyped token → 401, ``error="invalid_token"``;
* a read token on a write endpoint → 403, ``error="insufficient_scope"``, ``scope="write"``.

The token is never logged or echoed; a token in the query string is not read.
"""

from __future__ import annotations

import re
from typing import Annotated

from fastapi import Depends, Request
from fastapi.security import HTTPBearer

from talkthemes.api.results import TokenInfo

from .errors import ApiError
from .state import StateDep

__all__ = ["REALM", "ReadToken", "Scope", "WriteToken", "insufficient_scope"]

REALM = "talkthemes"

#: RFC 6750, section 2.1: ``b64token = 1*( ALPHA / DIGIT / "-" / "." / "_" / "~" / "+" /
#: "/" ) *"="``.
_B64TOKEN = re.compile(r"[A-Za-z0-9\-._~+/]+=*")

#: Only here so that the OpenAPI schema names the scheme; the header is read below.
_scheme = HTTPBearer(
    auto_error=False,
    scheme_name="bearer",
    description="A token from 'talkthemes token add NAME --scope read|write'.",
)


def _challenge(error: str | None = None, description: str | None = None, **extra: str) -> str:
    parts = [f'realm="{REALM}"']
    if error:
        parts.append(f'error="{error}"')
    if description:
        parts.append(f'error_description="{description}"')
    parts += [f'{k}="{v}"' for k, v in extra.items()]
    return "Bearer " + ", ".join(parts)


class Scope:
    """A dependency that lets a request through with a token of ``scope`` (or wider).

    Parameters
    ----------
    scope : {'read', 'write'}
    """

    def __init__(self, scope: str) -> None:
        self.scope = scope

    def __call__(
        self,
        request: Request,
        state: StateDep,
        _: Annotated[object, Depends(_scheme)],
    ) -> TokenInfo:
        header = request.headers.get("authorization")
        if header is None or not header.strip():
            raise ApiError(
                401,
                "unauthorized",
                "this endpoint needs 'Authorization: Bearer <token>' "
                "(make one with 'talkthemes token add NAME')",
                headers={"WWW-Authenticate": _challenge()},
            )
        scheme, _sep, value = header.strip().partition(" ")
        if scheme.lower() != "bearer":
            raise ApiError(
                401,
                "unauthorized",
                f"the {scheme!r} scheme is not accepted: send 'Authorization: Bearer <token>'",
                headers={"WWW-Authenticate": _challenge()},
            )
        token = value.strip()
        if not _B64TOKEN.fullmatch(token):
            why = "the Authorization header holds no single bearer token"
            raise ApiError(
                400,
                "invalid_request",
                why,
                headers={"WWW-Authenticate": _challenge("invalid_request", why)},
            )
        info = state.ws.check_token(token)
        if info is None:
            why = "the token is unknown or revoked"
            raise ApiError(
                401,
                "invalid_token",
                why,
                headers={"WWW-Authenticate": _challenge("invalid_token", why)},
            )
        if self.scope == "write" and info.scope != "write":
            raise insufficient_scope(info, "this endpoint")
        request.state.token_name = info.name
        return info


def insufficient_scope(info: TokenInfo, what: str) -> ApiError:
    """The 403 for a read token where ``what`` needs the write scope (RFC 6750, 3.1)."""
    why = f"{what} needs a token with the write scope"
    return ApiError(
        403,
        "insufficient_scope",
        f"{why}; token {info.name!r} has the read scope",
        headers={"WWW-Authenticate": _challenge("insufficient_scope", why, scope="write")},
    )


#: A route's parameter that lets requests with a read (or write) token through.
ReadToken = Annotated[TokenInfo, Depends(Scope("read"))]
#: A route's parameter that lets requests with a write token through.
WriteToken = Annotated[TokenInfo, Depends(Scope("write"))]
