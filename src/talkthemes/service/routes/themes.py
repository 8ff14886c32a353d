"""``GET /v1/versions``, ``GET /v1/themes``, ``GET /v1/themes/{theme_id}/calls``."""

from __future__ import annotations

import datetime as dt
from typing import Annotated, Any

from fastapi import APIRouter, Query

from talkthemes.service.auth import ReadToken
from talkthemes.service.errors import ApiError
from talkthemes.service.responses import CallsPageOut, ThemesOut, VersionsOut
from talkthemes.service.routes import errors
from talkthemes.service.state import StateDep

router = APIRouter(tags=["themes"])

VersionQuery = Annotated[
    int | None, Query(ge=1, description="A kept version (default: the current one).")
]


@router.get(
    "/versions",
    response_model=VersionsOut,
    responses=errors(400, 401),
    summary="The versions kept",
)
def versions(state: StateDep, _: ReadToken) -> dict[str, Any]:
    """Every kept version, oldest first, and which one is current."""
    kept = state.ws.versions()
    current = next((v.version for v in kept if v.current), None)
    return {"current": current, "versions": [v.to_json() for v in kept]}


@router.get(
    "/themes",
    response_model=ThemesOut,
    responses=errors(400, 401, 404, 409, 422),
    summary="A version's themes",
)
def themes(
    state: StateDep,
    _: ReadToken,
    version: VersionQuery = None,
    lam: Annotated[
        float | None,
        Query(
            alias="lambda",
            ge=0,
            le=1,
            description="Relevance weight ranking the top terms: 1 by probability, 0 by "
            "lift (default [view] relevance_lambda).",
        ),
    ] = None,
    terms: Annotated[int, Query(ge=1, le=100, description="Top terms per theme.")] = 10,
) -> dict[str, Any]:
    """Ids, labels, suggested names, shares and top terms of the current version's themes
    (or ``version``'s), and its unthemed group: the transcripts too short to carry a theme,
    with their count and share. A theme's name is its label, or its suggested name until
    labelled."""
    v = state.ws.version(state.version_number(version))
    lam = state.relevance_lambda if lam is None else lam
    suggested = state.suggested_names(v)
    out = []
    for i, theme in enumerate(v.summary(lam=lam, n_terms=terms)):
        out.append(
            {
                "theme_id": theme["theme_id"],
                "name": theme["name"],
                "label": theme["label"] or None,
                "suggested_name": suggested[i],
                "note": theme["note"],
                "hidden": theme["hidden"],
                "status": theme["status"],
                "coverage": theme["coverage"],
                "mean_share": theme["mean_share"],
                "top_terms": theme["top_terms"],
                "coherence": theme["coherence"],
            }
        )
    return {
        "version": v.n,
        "family": v.info.get("family"),
        "k": v.k,
        "transcripts": len(v.doc_ids),
        "relevance_lambda": lam,
        "themes": out,
        "unthemed": state.ws.unthemed(v.n).to_json(),
    }


def _where(where: list[str]) -> dict[str, list[str]]:
    """``["queue:billing", "queue:moves", "site:north"]`` → ``{"queue": [...], ...}``."""
    out: dict[str, list[str]] = {}
    for item in where:
        field, sep, value = item.partition(":")
        if not sep or not field.strip():
            raise ApiError(
                422,
                "invalid_request",
                f"where={item!r}: write a metadata filter as field:value (e.g. queue:billing)",
                details=[{"field": "where", "message": "expected field:value"}],
            )
        out.setdefault(field.strip(), []).append(value)
    return out


@router.get(
    "/themes/{theme_id}/calls",
    response_model=CallsPageOut,
    responses=errors(400, 401, 404, 409, 422),
    summary="A theme's calls, page by page",
)
def theme_calls(
    state: StateDep,
    _: ReadToken,
    theme_id: int,
    version: VersionQuery = None,
    offset: Annotated[int, Query(ge=0, le=2**31, description="Calls to skip.")] = 0,
    limit: Annotated[
        int | None, Query(ge=1, description="Page size (default [service] page_size).")
    ] = None,
    lead_only: Annotated[
        bool, Query(description="Only the calls the theme leads; false: any share.")
    ] = True,
    min_share: Annotated[float, Query(ge=0, le=1, description="Least share of the theme.")] = 0.0,
    where: Annotated[
        list[str] | None,
        Query(description="Metadata filters field:value; repeat for more (same field: any)."),
    ] = None,
    date_from: Annotated[dt.date | None, Query(description="First call date (ISO).")] = None,
    date_to: Annotated[dt.date | None, Query(description="Last call date (ISO).")] = None,
) -> dict[str, Any]:
    """The calls of a theme, most dominated first, with their metadata; ``next_offset``
    gives the next page (null on the last)."""
    most = state.settings.max_page_size
    limit = min(state.settings.page_size, most) if limit is None else limit
    if limit > state.settings.max_page_size:
        raise ApiError(
            422,
            "invalid_request",
            f"limit {limit} is more than {state.settings.max_page_size} ([service] max_page_size)",
            details=[{"field": "limit", "message": "too large"}],
        )
    v = state.ws.version(state.version_number(version))
    if theme_id not in v.theme_ids:
        raise ApiError(
            404,
            "unknown_theme",
            f"there is no theme {theme_id} in version {v.n} (see GET /v1/themes)",
            details={"theme_ids": v.theme_ids},
        )
    page = state.ws.theme_calls(
        theme_id,
        version=v.n,
        lead_only=lead_only,
        min_share=min_share,
        where=_where(where or []),
        date_from=None if date_from is None else date_from.isoformat(),
        date_to=None if date_to is None else date_to.isoformat(),
        offset=offset,
        limit=limit,
    )
    return page.to_json()
