"""The FastAPI application of one workspace: :func:`create_app`."""

from __future__ import annotations

import contextlib
import os
from collections.abc import AsyncIterator
from typing import Any

import anyio.to_thread
from fastapi import FastAPI
from fastapi.responses import HTMLResponse

import talkthemes
from talkthemes import Workspace
from talkthemes.config import ServiceSettings

from . import errors
from .docs_page import docs_html
from .jobs import Jobs
from .limits import BodyLimit
from .routes import assign, calls, health, jobs, themes, transcripts
from .state import ServiceState

__all__ = ["create_app"]

DESCRIPTION = """\
Themes, shares and refreshes of one talkthemes workspace, for other systems: post
transcripts as they arrive, read the current themes and their calls, ask which theme a
new call belongs to, start a refresh and follow it.

Every endpoint but `/v1/health` needs `Authorization: Bearer <token>` with a token from
`talkthemes token add NAME --scope read|write`. Errors share one shape:
`{"error": {"code", "message", "details"}}`.
"""


def create_app(root: str | os.PathLike[str], *, settings: ServiceSettings | None = None) -> FastAPI:
    """The service of the workspace at ``root``.

    Parameters
    ----------
    root : path
        An existing workspace.
    settings : ServiceSettings, optional
        Default: ``[service]`` of its ``talkthemes.toml``, read now.

    Returns
    -------
    FastAPI
        Its lifespan sizes the worker pool (``[service] threads``) at start-up and stops
        running jobs at shutdown.

    Raises
    ------
    NotReadyError
        When there is no workspace at ``root``.
    """
    ws = Workspace.open(root)
    everything = ws.settings()
    service = settings or everything.service
    state = ServiceState(
        ws=ws,
        settings=service,
        jobs=Jobs(ws.root, keep=service.jobs_kept),
        relevance_lambda=everything.view.relevance_lambda,
    )

    @contextlib.asynccontextmanager
    async def lifespan(_: FastAPI) -> AsyncIterator[None]:
        anyio.to_thread.current_default_thread_limiter().total_tokens = service.threads
        try:
            yield
        finally:
            state.jobs.shutdown()

    app = FastAPI(
        title="talkthemes",
        version=talkthemes.__version__,
        description=DESCRIPTION,
        docs_url=None,
        redoc_url=None,
        openapi_url="/openapi.json",
        lifespan=lifespan,
    )
    app.state.talkthemes = state
    errors.install(app)
    for module in (health, themes, calls, assign, transcripts, jobs):
        app.include_router(module.router, prefix="/v1")
    app.add_middleware(BodyLimit, max_bytes=int(service.max_body_mb * 1_000_000))

    @app.get("/docs", include_in_schema=False, response_class=HTMLResponse)
    def docs() -> str:
        return docs_html(app.openapi())

    @app.get("/", include_in_schema=False)
    def index() -> dict[str, Any]:
        return {
            "service": "talkthemes",
            "docs": "/docs",
            "openapi": "/openapi.json",
            "health": "/v1/health",
        }

    return app
