"""Which languages are themed where, and the language lanes.

The main workspace themes the calls in its main language (``[prepare] lang``) and the
undecided ones (``und``: too short or too mixed to tell; they are most likely in the main
language). Every other language we ship a chain for (:data:`SUPPORTED_LANGUAGES`) with at
least ``[prepare.languages] min_calls`` calls gets a *lane*: a workspace of its own under
``<workspace>/languages/<code>/`` whose store holds copies of that language's calls and
whose settings are the main workspace's with ``[prepare] lang = <code>`` and the
``[prepare.languages.<code>]`` table applied. A lane is swept, published, labelled and
refreshed like any workspace; only the main workspace ingests. Languages with fewer calls,
or without a chain, are listed and left out of every theme.

Lanes are derived: :func:`sync_lanes` (run after every ingest) copies new calls in, removes
calls whose language was corrected, mirrors the metadata and rewrites the lane's settings
file. Nothing in the main store is ever changed by it.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Literal

from talkthemes.calls.language import SUPPORTED_LANGUAGES, UNDECIDED
from talkthemes.config import Settings, render_settings
from talkthemes.errors import WorkspaceBusyError
from talkthemes.workspace import Workspace, atomic_write_text

if TYPE_CHECKING:
    from talkthemes.config import PrepareSettings
    from talkthemes.store import Store

__all__ = [
    "LANES_DIR",
    "LaneSync",
    "LanguageState",
    "lane_folder",
    "lane_settings",
    "language_states",
    "sync_lanes",
    "themed_languages",
]

LANES_DIR = "languages"

Kind = Literal["main", "undecided", "lane", "too_few", "no_chain", "unsettled"]

_HEADER = (
    "# Written by talkthemes from the main workspace's talkthemes.toml (two folders up) at\n"
    "# every ingest: change that file ([prepare.languages.{code}]), not this one.\n\n"
)


def themed_languages(prepare: PrepareSettings) -> tuple[str, ...]:
    """The languages a workspace's own themes cover: its ``[prepare] lang`` and ``und``."""
    return (prepare.lang, UNDECIDED)


def lane_folder(main: Workspace, code: str) -> Workspace:
    """The folder of ``code``'s lane under the main workspace (it may not exist)."""
    return Workspace(main.root / LANES_DIR / code)


def lane_settings(main: Settings, code: str) -> Settings:
    """A lane's settings: the main ones with the language's ``[prepare]`` and no inbox."""
    refresh = main.refresh.model_copy(update={"inbox": ""})
    return main.model_copy(update={"prepare": main.prepare.for_language(code), "refresh": refresh})


@dataclass(frozen=True)
class LanguageState:
    """One language of a workspace's calls, and where its calls are themed.

    ``kind`` is ``main`` (themed by this workspace), ``undecided`` (``und``, themed with
    the main language), ``lane`` (themed in its lane), ``too_few`` (fewer calls than
    ``min_calls``), ``no_chain`` (a language we ship no chain for) or ``unsettled`` (not
    detected yet: stored before languages were, until the next ingest or prepare).
    """

    code: str
    calls: int
    given: int
    kind: Kind
    folder: Path | None = None  # the lane's folder, for kind == "lane"

    @property
    def detected(self) -> int:
        """Calls whose language was detected (or defaulted) rather than given."""
        return self.calls - self.given

    def to_json(self) -> dict[str, object]:
        """The state as JSON values."""
        return {
            "language": self.code,
            "calls": self.calls,
            "given": self.given,
            "detected": self.detected,
            "kind": self.kind,
            "folder": str(self.folder) if self.folder else None,
        }


def language_states(main: Workspace, store: Store) -> list[LanguageState]:
    """Every language of the main workspace's calls, most calls first (main first)."""
    prepare = main.settings().prepare
    totals: dict[str, list[int]] = {}
    for (lang, source), n in store.language_counts().items():
        key = lang if lang is not None else ""
        t = totals.setdefault(key, [0, 0])
        t[0] += n
        t[1] += n if source == "given" else 0
    out = []
    for code, (calls, given) in totals.items():
        folder = None
        kind: Kind
        if code == "":
            kind = "unsettled"
        elif code == prepare.lang:
            kind = "main"
        elif code == UNDECIDED:
            kind = "undecided"
        elif code not in SUPPORTED_LANGUAGES:
            kind = "no_chain"
        elif calls < prepare.languages.min_calls:
            kind = "too_few"
        else:
            kind, folder = "lane", lane_folder(main, code).root
        out.append(LanguageState(code or "?", calls, given, kind, folder))
    order = {"main": 0, "undecided": 1, "lane": 2, "too_few": 3, "no_chain": 4, "unsettled": 5}
    return sorted(out, key=lambda s: (order[s.kind], -s.calls, s.code))


@dataclass(frozen=True)
class LaneSync:
    """What :func:`sync_lanes` did to one lane."""

    language: str
    folder: Path
    added: int
    removed: int
    busy: bool = False  # another command held the lane: it is synced on the next ingest

    def to_json(self) -> dict[str, object]:
        """As JSON values."""
        return {
            "language": self.language,
            "folder": str(self.folder),
            "added": self.added,
            "removed": self.removed,
            "busy": self.busy,
        }


def sync_lanes(main: Workspace, store: Store) -> list[LaneSync]:
    """Create or bring up to date the lane of every language that has enough calls.

    The caller holds the main workspace's lock and has settled the languages. Each lane's
    own lock is taken while it is written; a lane another command holds is skipped (and
    reported busy). Lanes of languages that fell below ``min_calls`` are left as they
    are (never deleted).

    Returns
    -------
    list of LaneSync
    """
    settings = main.settings()
    out = []
    for state in language_states(main, store):
        if state.kind != "lane":
            continue
        lane = lane_folder(main, state.code)
        text = _HEADER.format(code=state.code) + render_settings(
            lane_settings(settings, state.code)
        )
        try:
            with lane.lock(f"copy the {state.code} calls in"):
                lane.root.mkdir(parents=True, exist_ok=True)
                old = lane.settings_path.read_text("utf-8") if lane.settings_path.exists() else ""
                if old != text:
                    atomic_write_text(lane.settings_path, text)
                lane.init()
                with lane.store() as lane_store:
                    run_id = lane_store.start_ingest_run([f"{main.root} ({state.code} calls)"])
                    added, removed = lane_store.copy_language_from(
                        str(main.db_path), state.code, run_id
                    )
                    lane_store.finish_ingest_run(
                        run_id, added=added, unchanged=state.calls - added, duplicate=0, rejected=0
                    )
        except WorkspaceBusyError:
            out.append(LaneSync(state.code, lane.root, 0, 0, busy=True))
            continue
        out.append(LaneSync(state.code, lane.root, added, removed))
    return out
