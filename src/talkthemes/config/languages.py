"""[prepare.languages] settings: the language of each call, and which languages get themes.

The main language of a workspace is ``[prepare] lang``; its chain is ``[prepare]`` itself.
Every other language with at least ``min_calls`` calls is themed on its own in a language
lane (docs/languages.md); a ``[prepare.languages.<code>]`` table changes that lane's
``[prepare]`` settings, e.g. ``extra_stop_words`` or ``lemma_exceptions``.
"""

from __future__ import annotations

import re
from typing import Any

from pydantic import Field, field_validator, model_validator

from talkthemes.config._section import _Section

__all__ = ["LanguagesSettings"]

_CODE = re.compile(r"^[a-z]{2,3}$")


class LanguagesSettings(_Section):
    """[prepare.languages] The language of each call, and which languages get themes."""

    detect: bool = Field(
        True,
        description=(
            "Detect each call's language from its words when no manifest or table column "
            "named language gives it. Off: every call without one is taken to be in "
            "[prepare] lang."
        ),
    )
    min_confidence: float = Field(
        0.5,
        ge=0,
        le=1,
        description="A detected language below this confidence is undecided (und).",
    )
    min_calls: int = Field(
        200,
        ge=1,
        description=(
            "A language other than [prepare] lang with at least this many calls gets its "
            "own sweep, versions and refresh (under languages/<code>/); fewer are listed "
            "as too few and left out of the themes. Undecided calls go with [prepare] lang."
        ),
    )
    chains: dict[str, dict[str, Any]] = Field(
        default_factory=dict,
        description=(
            "Per language, [prepare] settings of its own, written as a table "
            "[prepare.languages.<code>], e.g. extra_stop_words = [...]."
        ),
    )

    @model_validator(mode="before")
    @classmethod
    def _tables_are_chains(cls, data: Any) -> Any:
        """``[prepare.languages.es]`` tables arrive as keys named by a language code."""
        if not isinstance(data, dict):
            return data
        data = dict(data)
        chains = dict(data.pop("chains", None) or {})
        for key in [k for k in data if isinstance(k, str) and _CODE.match(k)]:
            value = data.pop(key)
            if not isinstance(value, dict):
                raise ValueError(f"{key} must be a table [prepare.languages.{key}]")
            chains[key] = value
        data["chains"] = chains
        return data

    @field_validator("chains")
    @classmethod
    def _chain_keys(cls, value: dict[str, dict[str, Any]]) -> dict[str, dict[str, Any]]:
        for code, table in value.items():
            if not _CODE.match(code):
                raise ValueError(f"{code!r} is not a language code (two or three letters)")
            for key in ("lang", "languages"):
                if key in table:
                    raise ValueError(f"[prepare.languages.{code}] cannot set {key}")
        return value
