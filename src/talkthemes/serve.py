"""Serve the Streamlit viewer for a workspace: ``talkthemes view``.

The viewer runs as ``python -m streamlit run <package>/app/main.py`` in a child process,
bound to 127.0.0.1 unless another address is asked for. The workspace is passed both
after ``--`` on the command line and in ``TALKTHEMES_WORKSPACE``.
"""

from __future__ import annotations

import ipaddress
import logging
import os
import signal
import subprocess
import sys
import threading
from collections.abc import Callable
from pathlib import Path

from talkthemes.errors import ConfigError, NotReadyError
from talkthemes.workspace import ENV_VAR, Workspace

__all__ = ["APP_MAIN", "serve", "streamlit_command", "viewer_url"]

log = logging.getLogger(__name__)

#: The viewer's entry point inside the installed package.
APP_MAIN = Path(__file__).resolve().parent / "app" / "main.py"


def viewer_url(host: str, port: int) -> str:
    """The address to open in a browser (``0.0.0.0``/``::`` shown as localhost)."""
    shown = "localhost" if host in ("0.0.0.0", "::", "") else host
    if ":" in shown and not shown.startswith("["):
        shown = f"[{shown}]"
    return f"http://{shown}:{port}"


def _is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def streamlit_command(
    workspace: Path, *, host: str = "127.0.0.1", port: int = 8501, open_browser: bool = False
) -> list[str]:
    """The command line that runs the viewer (see :func:`serve`)."""
    if not 1 <= int(port) <= 65535:
        raise ConfigError(f"--port {port}: expected a port number between 1 and 65535")
    return [
        sys.executable,
        "-m",
        "streamlit",
        "run",
        str(APP_MAIN),
        "--server.address",
        host,
        "--server.port",
        str(int(port)),
        "--server.headless",
        "false" if open_browser else "true",
        "--server.fileWatcherType",
        "none",
        "--server.runOnSave",
        "false",
        "--browser.gatherUsageStats",
        "false",
        "--global.developmentMode",
        "false",
        "--client.toolbarMode",
        "minimal",
        "--theme.base",
        "light",
        "--theme.primaryColor",
        "#0072B2",  # Okabe–Ito blue, the viewer's one accent colour
        "--theme.backgroundColor",
        "#ffffff",
        "--theme.secondaryBackgroundColor",
        "#f3f5f7",
        "--theme.textColor",
        "#2b2b2b",
        "--",
        "--workspace",
        str(workspace),
    ]


def serve(
    workspace: Path,
    *,
    host: str = "127.0.0.1",
    port: int = 8501,
    open_browser: bool = False,
    announce: Callable[[str], None] | None = None,
) -> int:
    """Run the viewer until it is stopped (Ctrl+C) and return its exit code.

    Parameters
    ----------
    workspace : Path
        The workspace folder; it must exist (run ``talkthemes init`` first).
    host : str
        Address to bind. The default serves this machine only; the viewer has no log-in,
        so bind another address only on a network you trust.
    port : int
    open_browser : bool
        Let Streamlit open a browser tab.
    announce : callable, optional
        Called with one line giving the URL; default: printed on standard output.

    Returns
    -------
    int
        The exit code of the viewer process (0 after Ctrl+C). A SIGTERM sent to this
        process is passed on to the viewer, which then stops.

    Raises
    ------
    NotReadyError
        When there is no workspace at ``workspace``.
    """
    ws = Workspace(Path(workspace).expanduser().resolve())
    if not ws.exists():
        raise NotReadyError(f"no workspace at {ws.root}: run 'talkthemes init {ws.root}' first")
    if not _is_loopback(host):
        log.warning(
            "the viewer binds %s and has no log-in: anyone who can reach this address can "
            "read the transcripts and edit labels",
            host,
        )
    command = streamlit_command(ws.root, host=host, port=port, open_browser=open_browser)
    env = {**os.environ, ENV_VAR: str(ws.root)}
    line = f"talkthemes viewer for {ws.root}: {viewer_url(host, port)}  (Ctrl+C stops it)"
    (announce or _print_line)(line)
    proc = subprocess.Popen(command, env=env)
    forwarding = threading.current_thread() is threading.main_thread()
    if forwarding:  # `kill` or a service manager stops the viewer with us
        previous = signal.signal(signal.SIGTERM, lambda signum, _: proc.send_signal(signum))
    try:
        return proc.wait()
    except KeyboardInterrupt:
        proc.send_signal(signal.SIGINT)
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait()
        return 0
    finally:
        if forwarding:
            signal.signal(signal.SIGTERM, previous)


def _print_line(line: str) -> None:
    print(line, flush=True)  # the URL is what the user runs `view` for


if __name__ == "__main__":  # python -m talkthemes.serve WORKSPACE [PORT]
    sys.exit(serve(Path(sys.argv[1]), port=int(sys.argv[2]) if len(sys.argv) > 2 else 8501))
