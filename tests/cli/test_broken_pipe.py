"""A reader that goes away (``talkthemes status | head``) stops the command quietly.

The command's stdout is a pipe whose reading end is closed before it writes: the command
must exit 141 (what a shell reports for a command stopped by SIGPIPE) with nothing on
stderr — no "unexpected error", no traceback — whether the result is a rich table or JSON.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from talkthemes.cli._common import BROKEN_PIPE_EXIT


def _run_into_a_closed_pipe(*args: str) -> subprocess.CompletedProcess[str]:
    read_end, write_end = os.pipe()
    os.close(read_end)
    try:
        return subprocess.run(
            [sys.executable, "-c", "from talkthemes import cli; cli.main()", *args],
            stdout=write_end,
            stderr=subprocess.PIPE,
            text=True,
            timeout=120,
            check=False,
        )
    finally:
        os.close(write_end)


@pytest.mark.parametrize("form", [[], ["--json"]], ids=["table", "json"])
def test_a_closed_pipe_stops_the_command_quietly(tmp_path: Path, form: list[str]) -> None:
    ws = tmp_path / "ws"
    subprocess.run(
        [sys.executable, "-c", "from talkthemes import cli; cli.main()", "init", str(ws)],
        capture_output=True,
        check=True,
    )
    done = _run_into_a_closed_pipe("status", "-w", str(ws), *form)
    assert done.returncode == BROKEN_PIPE_EXIT == 141
    assert done.stderr == ""
