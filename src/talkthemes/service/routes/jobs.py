"""``POST /v1/refresh`` (start a refresh as a background job) and ``GET /v1/jobs/{id}``."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Body, Response

from talkthemes.errors import NotReadyError
from talkthemes.service.auth import ReadToken, WriteToken
from talkthemes.service.errors import ApiError
from talkthemes.service.models import RefreshIn
from talkthemes.service.responses import JobOut
from talkthemes.service.routes import errors
from talkthemes.service.state import StateDep

router = APIRouter(tags=["refresh"])


@router.post(
    "/refresh",
    response_model=JobOut,
    status_code=202,
    responses=errors(400, 401, 403, 409, 413, 415, 422),
    summary="Start a refresh",
)
def refresh(
    state: StateDep,
    _: WriteToken,
    response: Response,
    body: Annotated[RefreshIn | None, Body()] = None,
) -> dict[str, Any]:
    """Start a refresh of the workspace as a background job under the workspace lock:
    the transcripts stored since the current version are taken in, the model retrained,
    theme ids and labels carried over, and the new version published in one step. Reads
    go on answering from the current version meanwhile. Answers 202 with the job (follow
    it at ``GET /v1/jobs/{job_id}``, also in the Location header); 409 when a refresh is
    running or another writer holds the workspace."""
    options = (body or RefreshIn()).model_dump()
    if state.ws.current_version() is None:
        raise NotReadyError(
            "no version published yet: run 'talkthemes sweep' and 'talkthemes publish' "
            "first (a refresh builds on a published version)"
        )
    with state.writing(), state.ws.hold("refresh (service)"):
        pass  # the lock is free now (else WorkspaceBusyError: 409); the job takes it itself
    job = state.jobs.start_refresh(options)
    response.headers["Location"] = f"/v1/jobs/{job.id}"
    return job.to_json()


@router.get(
    "/jobs/{job_id}",
    response_model=JobOut,
    responses=errors(400, 401, 404),
    summary="A background job",
)
def job(state: StateDep, _: ReadToken, job_id: str) -> dict[str, Any]:
    """Where a job stands: its state (starting, running, done, failed), its last
    progress report, its result when done, its error when failed."""
    found = state.jobs.get(job_id)
    if found is None:
        raise ApiError(
            404,
            "unknown_job",
            f"there is no job {job_id!r} (jobs are kept in memory: a restarted service "
            "knows none; GET /v1/versions shows what refreshes published)",
        )
    return found.to_json()
