"""What the endpoints that take transcripts share: the item limit and the records."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from pydantic import BaseModel

from talkthemes.service.errors import ApiError
from talkthemes.service.state import ServiceState

__all__ = ["records_of"]


def records_of(state: ServiceState, items: Sequence[BaseModel]) -> list[dict[str, Any]]:
    """The items as the API's records, refusing more than ``[service] max_items``."""
    most = state.settings.max_items
    if len(items) > most:
        raise ApiError(
            422,
            "too_many_items",
            f"{len(items)} transcripts in one request; at most {most} ([service] max_items): "
            "send them in several requests",
            details={"items": len(items), "max_items": most},
        )
    return [item.model_dump(exclude_none=True) for item in items]
