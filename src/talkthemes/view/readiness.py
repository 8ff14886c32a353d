"""How far a workspace has got, and the one command that moves a section forward.

Every viewer section and the report start here: a section that cannot be shown yet says
what is missing (no workspace, nothing ingested, not prepared, no sweep, no version) and
shows the next command to run.
"""

from __future__ import annotations

import shlex
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from talkthemes.errors import InputError
from talkthemes.workspace import Workspace

__all__ = ["Need", "NextStep", "Readiness", "readiness"]

Need = Literal["workspace", "transcripts", "prep", "sweep", "version"]
"""What a section needs before it can be shown."""


@dataclass(frozen=True)
class NextStep:
    """Why a section cannot be shown yet, and the one command that moves it forward."""

    stage: str
    message: str
    command: str


@dataclass(frozen=True)
class Readiness:
    """How far a workspace has got.

    Attributes
    ----------
    root : Path
    has_workspace : bool
    transcripts : int
        Stored transcripts.
    prepared : bool
        A current prep exists.
    sweep_id : int or None
        The latest sweep that has at least one finished cell.
    sweep_scored : bool
        That sweep's scored cells (``cells.parquet``) are on disk.
    version : int or None
        The current version.
    """

    root: Path
    has_workspace: bool
    transcripts: int = 0
    prepared: bool = False
    sweep_id: int | None = None
    sweep_scored: bool = False
    version: int | None = None

    def _ws_arg(self) -> str:
        return f"--workspace {shlex.quote(str(self.root))}"

    def _steps(self) -> list[tuple[bool, NextStep]]:
        w = self._ws_arg()
        return [
            (
                self.has_workspace,
                NextStep(
                    "workspace",
                    f"There is no workspace at {self.root} yet.",
                    f"talkthemes init {shlex.quote(str(self.root))}",
                ),
            ),
            (
                self.transcripts > 0,
                NextStep(
                    "transcripts",
                    "The workspace holds no transcripts yet.",
                    f"talkthemes ingest TRANSCRIPTS_FOLDER {w}",
                ),
            ),
            (
                self.prepared,
                NextStep(
                    "prep",
                    "The transcripts have not been prepared for modelling yet.",
                    f"talkthemes prepare {w}",
                ),
            ),
            (
                self.sweep_id is not None,
                NextStep(
                    "sweep",
                    "No sweep of topic counts has been run yet.",
                    f"talkthemes sweep {w}",
                ),
            ),
            (
                self.version is not None,
                NextStep(
                    "version",
                    "No version of themes has been published yet.",
                    f"talkthemes publish --recommended {w}",
                ),
            ),
        ]

    def blocker(self, need: Need = "version") -> NextStep | None:
        """The first missing stage a section needing ``need`` waits for, or None.

        A section needing a version is ready as soon as one is published (a version is
        self-contained); one needing a sweep as soon as a sweep has a finished cell.
        """
        order = ["workspace", "transcripts", "prep", "sweep", "version"]
        if need not in order:
            raise InputError(f"readiness: unknown need {need!r} (one of {', '.join(order)})")
        if not self.has_workspace:
            return self._steps()[0][1]
        if need == "version" and self.version is not None:
            return None
        if need == "sweep" and self.sweep_id is not None:
            return None
        for done, step in self._steps()[: order.index(need) + 1]:
            if not done:
                return step
        return None

    @property
    def next_step(self) -> NextStep | None:
        """The next command for the whole pipeline (None when a version is published)."""
        return self.blocker("version")


def readiness(ws: Workspace) -> Readiness:
    """Look at a workspace without changing it: what exists, what is missing.

    Parameters
    ----------
    ws : Workspace

    Returns
    -------
    Readiness
    """
    root = ws.root
    if not ws.exists() or not ws.db_path.exists():
        return Readiness(root=root, has_workspace=False)
    with ws.store() as store:
        n = store.count_transcripts()
        stages = store.stages()
        sweep_id = None
        sweep = store.get_sweep()
        if sweep is not None and store.cells(sweep.id):
            sweep_id = sweep.id
        current = store.current_version()
    scored = sweep_id is not None and (ws.sweeps_dir / str(sweep_id) / "cells.parquet").exists()
    version = None
    if current is not None and (ws.versions_dir / str(current.n)).exists():
        version = current.n
    return Readiness(
        root=root,
        has_workspace=True,
        transcripts=n,
        prepared=stages.prepared is not None,
        sweep_id=sweep_id,
        sweep_scored=scored,
        version=version,
    )
