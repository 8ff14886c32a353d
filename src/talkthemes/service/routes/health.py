"""``GET /v1/health``: the store answers, and which version is current (no token)."""

from __future__ import annotations

from fastapi import APIRouter

import talkthemes
from talkthemes.service.models import ErrorOut
from talkthemes.service.responses import HealthOut
from talkthemes.service.state import StateDep

router = APIRouter(tags=["service"])


@router.get(
    "/health",
    response_model=HealthOut,
    responses={503: {"model": ErrorOut, "description": "The store cannot be read."}},
    summary="Whether the service can answer",
)
def health(state: StateDep) -> HealthOut:
    """Open the store and read the current version; no token needed."""
    return HealthOut(
        status="ok",
        store="ok",
        current_version=state.ws.current_version(),
        service_version=talkthemes.__version__,
    )
