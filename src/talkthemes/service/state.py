"""What the routes of one service share: the workspace, its settings, the jobs, the
writer queue, and the theme names of the versions answered from."""

from __future__ import annotations

import contextlib
import threading
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Annotated, Any

from fastapi import Depends, Request

from talkthemes import Workspace
from talkthemes.config import ServiceSettings
from talkthemes.errors import NotReadyError

from .errors import RETRY_AFTER, ApiError
from .jobs import Jobs

__all__ = ["ServiceState", "StateDep", "get_state"]

#: Seconds a write request waits for another write request of this service to finish.
WRITE_QUEUE_SECONDS = 20.0


@dataclass
class ServiceState:
    """The workspace and what the service keeps about it between requests.

    Attributes
    ----------
    ws : Workspace
        Shared by every request (its readers are thread-safe).
    settings : ServiceSettings
        ``[service]`` as read at start-up.
    jobs : Jobs
        The background jobs (refreshes).
    relevance_lambda : float
        ``[view] relevance_lambda`` as read at start-up: how theme terms are ranked.
    """

    ws: Workspace
    settings: ServiceSettings
    jobs: Jobs
    relevance_lambda: float = 0.6
    _writer: threading.Lock = field(default_factory=threading.Lock)

    @contextlib.contextmanager
    def writing(self) -> Iterator[None]:
        """One write request of this service at a time; the others queue a while.

        The workspace lock itself is taken by the API's writer methods (a refresh job or
        another program holding it gives a 409).
        """
        if not self._writer.acquire(timeout=WRITE_QUEUE_SECONDS):
            raise ApiError(
                409,
                "workspace_busy",
                "other write requests are queued; try again shortly",
                headers={"Retry-After": str(RETRY_AFTER)},
            )
        try:
            yield
        finally:
            self._writer.release()

    def version_number(self, version: int | None) -> int:
        """The version a request answers from: ``version`` if kept, else the current one.

        Raises
        ------
        ApiError
            404 when ``version`` is not kept (the details list the kept ones).
        NotReadyError
            When nothing is published yet (409, naming what to run).
        """
        if version is None:
            current = self.ws.current_version()
            if current is None:
                raise NotReadyError(
                    "no version published yet: run 'talkthemes sweep' and 'talkthemes "
                    "publish' on the workspace first"
                )
            return current
        kept = [v.version for v in self.ws.versions()]
        if version not in kept:
            raise ApiError(
                404,
                "unknown_version",
                f"there is no version {version} (kept: {', '.join(map(str, kept)) or 'none'})",
                details={"kept": kept},
            )
        return version

    def suggested_names(self, version: Any) -> list[str]:
        """Each theme's suggested name in a loaded version: the one stored with it at
        publish or refresh (:meth:`talkthemes.versions.load.Version.suggested_names`)."""
        return version.suggested_names()


def get_state(request: Request) -> ServiceState:
    """The service's state (a FastAPI dependency)."""
    return request.app.state.talkthemes


#: The service's state as a route's parameter.
StateDep = Annotated[ServiceState, Depends(get_state)]
