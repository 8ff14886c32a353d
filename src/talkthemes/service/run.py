"""Running the service: the bind address checks, uvicorn, and a graceful stop.

One uvicorn process answers with a pool of ``[service] threads`` threads; SIGTERM (or
Ctrl+C) stops it gracefully: it stops accepting connections, lets the requests in flight
finish (up to :data:`GRACE_SECONDS`), then stops running jobs (:meth:`Jobs.shutdown`).
"""

from __future__ import annotations

import ipaddress
import logging
import os

import uvicorn

from talkthemes.errors import ConfigError

from .app import create_app

__all__ = ["GRACE_SECONDS", "check_bind", "is_loopback", "run"]

log = logging.getLogger(__name__)

#: Seconds requests in flight get to finish once a stop is asked for.
GRACE_SECONDS = 10


def is_loopback(host: str) -> bool:
    """Whether ``host`` is this machine only (``127.0.0.0/8``, ``::1``, ``localhost``)."""
    if host.strip().lower() == "localhost":
        return True
    try:
        return ipaddress.ip_address(host.strip().strip("[]")).is_loopback
    except ValueError:
        return False


def check_bind(host: str, tokens: int) -> str | None:
    """The warning to print before binding ``host``, or None for this machine only.

    Raises
    ------
    ConfigError
        When ``host`` is reachable from other machines and no token exists: the service
        would answer only ``/v1/health``, and the first token must not be made in a hurry.
    """
    if is_loopback(host):
        return None
    if tokens == 0:
        raise ConfigError(
            f"--host {host}: other machines could reach the service, and there is no token "
            "yet: make one first ('talkthemes token add NAME --scope read')"
        )
    return (
        f"binding {host}: other machines can reach the service; its traffic is not "
        "encrypted, so put a reverse proxy with TLS in front (docs/service.md) and keep "
        "the port closed to everything else"
    )


def run(root: str | os.PathLike[str], *, host: str, port: int, log_level: str = "info") -> int:
    """Serve the workspace at ``root`` until stopped; 0 when stopped gracefully.

    Parameters
    ----------
    root : path
    host : str
    port : int
    log_level : str
        uvicorn's (``info`` logs one line per request: never a header, so never a token).
    """
    app = create_app(root)
    config = uvicorn.Config(
        app,
        host=host,
        port=port,
        log_level=log_level,
        server_header=False,
        timeout_graceful_shutdown=GRACE_SECONDS,
        lifespan="on",
    )
    server = uvicorn.Server(config)
    server.run()
    return 0 if server.started else 1
