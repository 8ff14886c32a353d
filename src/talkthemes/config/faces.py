"""[view] and [service] settings: what the viewer, the report and the HTTP service show."""

from __future__ import annotations

from typing import Literal

from pydantic import Field

from talkthemes.config._section import _Section

__all__ = ["ServiceSettings", "ViewSettings"]


class ViewSettings(_Section):
    """[view] The viewer and report."""

    host: str = Field("127.0.0.1", description="Address the viewer binds to.")
    port: int = Field(8501, ge=1, le=65535, description="Port the viewer listens on.")
    relevance_lambda: float = Field(
        0.6, ge=0, le=1, description="Default λ for term relevance (Sievert & Shirley 2014)."
    )
    original_text: bool = Field(
        False,
        description=(
            "Show transcripts as they were ingested, personal data included, in the viewer, "
            "the report and exports. Off: e-mail addresses, numbers, names and street "
            "addresses are masked (set it only where everyone who opens them may see them)."
        ),
    )


class ServiceSettings(_Section):
    """[service] The HTTP service ('talkthemes serve')."""

    host: str = Field(
        "127.0.0.1",
        description=(
            "Address the service binds to. Anything but this machine (127.0.0.1, ::1, "
            "localhost) needs at least one token and a TLS proxy in front."
        ),
    )
    port: int = Field(8600, ge=1, le=65535, description="Port the service listens on.")
    threads: int = Field(
        8, ge=1, le=256, description="Requests answered at once (the worker pool's threads)."
    )
    max_body_mb: float = Field(
        20.0, gt=0, description="Request bodies larger than this (in MB) are refused (413)."
    )
    max_items: int = Field(
        1000, ge=1, description="Transcripts one assign or ingest request may carry."
    )
    page_size: int = Field(50, ge=1, description="Calls per page when a request names none.")
    max_page_size: int = Field(1000, ge=1, description="The most calls one page may hold.")
    call_text: Literal["none", "masked", "original"] = Field(
        "none",
        description=(
            "What GET /v1/calls/{id} tells of a call's words: 'none' (shares and metadata "
            "only), 'masked' (its turns with e-mail addresses, numbers, names and street "
            "addresses masked) or 'original' (as ingested; only where every token holder may "
            "read them)."
        ),
    )
    jobs_kept: int = Field(
        100, ge=1, description="Finished jobs the service remembers for GET /v1/jobs/{id}."
    )
