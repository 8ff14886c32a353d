"""``serve`` and ``token``: the HTTP service and its access tokens.

The work happens in :class:`talkthemes.Workspace` (tokens) and in the service itself,
:mod:`talkthemes.service`, a face over the same API. The service is imported inside
``serve`` on purpose: it pulls in FastAPI and uvicorn, and ``talkthemes --help`` imports
every command module.
"""

from __future__ import annotations

from typing import Annotated

import typer
from rich import box
from rich.table import Table

from talkthemes.cli._common import (
    JsonOpt,
    WorkspaceOpt,
    cell,
    emit_json,
    open_workspace,
    out,
    say,
)

__all__ = ["serve", "token_app"]


def serve(
    host: Annotated[
        str | None,
        typer.Option(
            "--host",
            help="Address to bind (default [service] host, 127.0.0.1: this machine only).",
        ),
    ] = None,
    port: Annotated[
        int | None,
        typer.Option("--port", min=1, max=65535, help="Port (default [service] port, 8600)."),
    ] = None,
    workspace: WorkspaceOpt = None,
) -> None:
    """Serve the HTTP API (JSON, bearer tokens) until stopped; endpoints at /docs."""
    # deferred: see the module docstring
    from talkthemes.service.run import check_bind, run

    ws = open_workspace(workspace)
    settings = ws.settings().service
    host = host or settings.host
    port = port or settings.port
    tokens = ws.tokens()
    warning = check_bind(host, len(tokens))
    if warning:
        say("talkthemes: warning: ", warning)
    elif not tokens:
        say(
            "talkthemes: no token yet: every endpoint but /v1/health will answer 401; "
            "make one with 'talkthemes token add NAME'"
        )
    shown = f"[{host}]" if ":" in host else host
    say(f"Serving {ws.root} at http://{shown}:{port} (endpoints at /docs); Ctrl+C stops it.")
    raise typer.Exit(run(ws.root, host=host, port=port))


token_app = typer.Typer(
    help="Access tokens of the HTTP service: add, list, revoke.",
    no_args_is_help=True,
)


@token_app.command("add")
def token_add(
    name: Annotated[str, typer.Argument(help="Who holds it: crm, nightly-refresh, ...")],
    scope: Annotated[
        str,
        typer.Option(
            "--scope",
            help="read: GET endpoints and assign; write: also ingest, labels, refresh.",
        ),
    ] = "read",
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Make a token; it is printed once (on stdout) and only its salted hash is kept."""
    ws = open_workspace(workspace)
    made = ws.add_token(name, scope)
    if as_json:
        emit_json(made.to_json())
        return
    say(
        f"Token {made.info.name!r} ({made.info.scope} scope). It is shown this once: "
        "store it now (send it as 'Authorization: Bearer <token>')."
    )
    out.print(cell(made.token), soft_wrap=True)


@token_app.command("list")
def token_list(
    revoked: Annotated[bool, typer.Option("--revoked", help="List revoked tokens too.")] = False,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """The tokens by name, scope and creation date (never the tokens themselves)."""
    ws = open_workspace(workspace)
    tokens = ws.tokens(revoked=revoked)
    if as_json:
        emit_json({"tokens": [t.to_json() for t in tokens]})
        return
    if not tokens:
        say("No tokens. Make one with 'talkthemes token add NAME --scope read|write'.")
        return
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False)
    table.add_column("name", overflow="fold")
    for header in ("scope", "starts", "created", "revoked"):
        table.add_column(header, no_wrap=True)
    for t in tokens:
        table.add_row(
            cell(t.name), cell(t.scope), cell(f"tt_{t.key_id}_…"), cell(_minute(t.created_at)),
            cell(_minute(t.revoked_at) if t.revoked_at else "active"),
        )  # fmt: skip
    out.print(table)


def _minute(stamp: str) -> str:
    """``2026-12-04T19:13:52+00:00`` → ``2026-12-04 19:13``."""
    return stamp[:16].replace("T", " ")


@token_app.command("revoke")
def token_revoke(
    name: Annotated[str, typer.Argument(help="The token's name (see 'talkthemes token list').")],
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Revoke a token: the service refuses it from the next request on."""
    ws = open_workspace(workspace)
    info = ws.revoke_token(name)
    if as_json:
        emit_json(info.to_json())
        return
    say(f"Token {info.name!r} revoked; the service refuses it from now on.")
