"""The base of every settings section: unknown keys refused, assignments validated."""

from __future__ import annotations

from pydantic import BaseModel, ConfigDict


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", validate_assignment=True)
