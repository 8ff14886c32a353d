"""``POST /v1/assign``: the theme shares of new transcripts, from one version."""

from __future__ import annotations

import math
from typing import Annotated, Any

from fastapi import APIRouter, Query

from talkthemes.service.auth import ReadToken, insufficient_scope
from talkthemes.service.errors import ApiError
from talkthemes.service.models import AssignIn
from talkthemes.service.responses import AssignOut
from talkthemes.service.routes import errors
from talkthemes.service.routes._items import records_of
from talkthemes.service.state import ServiceState, StateDep

router = APIRouter(tags=["assign"])


@router.post(
    "/assign",
    response_model=AssignOut,
    responses=errors(400, 401, 403, 404, 409, 413, 415, 422),
    summary="Theme shares of new transcripts",
)
def assign(
    state: StateDep,
    token: ReadToken,
    body: AssignIn,
    version: Annotated[
        int | None, Query(ge=1, description="A kept version (default: the current one).")
    ] = None,
    store: Annotated[
        bool, Query(description="Also store the transcripts (needs the write scope and ids).")
    ] = False,
) -> dict[str, Any]:
    """Prepare each transcript exactly as the version's training calls were and infer its
    theme shares: the lead theme, its share, and the share of every theme. Nothing is
    stored unless ``store=true``. Every result of one request comes from the same version
    (named in the answer), even while a refresh publishes a new one. A transcript with
    fewer words the version knows than its ``min_tokens`` is in the unthemed group (lead
    theme name ``unthemed``, no id, no shares, the reason given). A transcript that cannot
    be used (an empty text) fails the request with 422, naming it."""
    if store and token.scope != "write":
        raise insufficient_scope(token, "assign with store=true")
    records = records_of(state, body.items)
    if store:
        missing = [i for i, r in enumerate(records) if "id" not in r]
        if missing:
            raise ApiError(
                422,
                "invalid_request",
                f"store=true needs an id on every item (missing on item {missing[0]})",
                details=[{"field": f"items[{i}].id", "message": "required"} for i in missing],
            )
    result = state.ws.assign_records(records, version=state.version_number(version))
    if result.rejects:
        raise ApiError(
            422,
            "rejected_items",
            f"{len(result.rejects)} of {len(records)} transcripts cannot be assigned: "
            f"{result.rejects[0].reason}",
            details=[{"index": r.row, "reason": r.reason} for r in result.rejects],
        )
    return {
        "version": result.version,
        "results": _results(state, result.version, result.shares),
        "stored": _store(state, records) if store else None,
    }


def _store(state: ServiceState, records: list[dict[str, Any]]) -> dict[str, Any]:
    with state.writing():
        return state.ws.ingest_records(records, source="service").to_json()


def _results(state: ServiceState, n: int, frame: Any) -> list[dict[str, Any]]:
    """The rows of the API's assignment table as the answer's results; with calls of
    several languages, each row under its language's version (docs/languages.md)."""
    if "language" not in frame.columns:
        return _rows(state.ws.version(n), state, frame, "share_")
    results: list[tuple[int, dict[str, Any]]] = []
    main = state.ws.main_language()
    for code, group in frame.groupby("language", sort=False):
        lane = state.ws if code in (main, "und") else state.ws.language(str(code))
        own = lane is state.ws
        if not own and lane.current_version() is None:  # no themes in that language
            v, prefix = state.ws.version(n), None
        else:
            v = lane.version(n if own else None)
            prefix = "share_" if own else f"share_{code}_"
        rows = _rows(v, state, group, prefix)
        for i, row in zip(group.index, rows, strict=True):
            row["language"] = str(code)
            row["language_version"] = v.n if prefix is not None else None
            results.append((int(i), row))
    return [row for _, row in sorted(results, key=lambda r: r[0])]


def _rows(v: Any, state: ServiceState, frame: Any, prefix: str | None) -> list[dict[str, Any]]:
    """Results of rows under version ``v``; its share columns are ``<prefix><theme id>``
    (None: the rows have no shares, a language without themes)."""
    names = [t.label.strip() or s for t, s in zip(v.themes, state.suggested_names(v), strict=True)]
    ids = frame["transcript_id"].astype(str).tolist()
    leads = frame["lead_theme_id"].to_numpy(dtype=float, na_value=math.nan)
    lead_shares = frame["lead_share"].to_numpy(dtype=float, na_value=math.nan)
    shares = (  # rows of a language without themes are all unthemed: no shares to read
        None
        if prefix is None
        else frame[[f"{prefix}{t}" for t in v.theme_ids]].to_numpy(dtype=float, na_value=math.nan)
    )
    known_terms = frame["known_terms"].to_numpy(dtype=int)
    reasons = frame["reason"].fillna("").astype(str).tolist()
    group = frame["lead_theme_label"].fillna("").astype(str).tolist()
    results = []
    for i, tid in enumerate(ids):
        known = not math.isnan(leads[i])
        lead = int(leads[i]) if known else None
        results.append(
            {
                "id": tid,
                "lead_theme_id": lead,
                # the unthemed group's rows say so in the table's label column
                "lead_theme_name": names[v.theme_ids.index(lead)] if known else group[i],
                "lead_share": float(lead_shares[i]) if known else None,
                "shares": [
                    {"theme_id": t, "share": float(x)}
                    for t, x in zip(v.theme_ids, shares[i], strict=True)
                ]
                if known and shares is not None
                else None,
                "known_terms": int(known_terms[i]),
                "reason": reasons[i],
            }
        )
    return results
