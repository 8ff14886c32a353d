"""Route new calls to their language's version (``assign``, docs/languages.md).

Each call's language is the one its ``language`` (or ``lang``) field gives, else the
detected one, as at ingest. Calls in the main language or undecided go to the main
workspace's version; a call in a language with a lane and a published version goes to
that lane's; any other call gets a row in the unthemed group saying why. When calls of
several languages are routed, the table gains a ``language`` column and a lane's share
columns are named ``share_<code>_<theme id>`` (theme ids are a workspace's own, so two
languages may both have a theme 3).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING

import pandas as pd

from talkthemes.calls.language import UNDECIDED, detect_languages, normalize_language
from talkthemes.calls.model import Transcript
from talkthemes.languages.lanes import lane_folder
from talkthemes.store.languages import LANGUAGE_KEYS
from talkthemes.versions.unthemed import UNTHEMED

if TYPE_CHECKING:
    from talkthemes.config import PrepareSettings
    from talkthemes.workspace import Workspace

__all__ = ["call_languages", "join_routed", "route_frames"]


def call_languages(calls: Sequence[Transcript], prepare: PrepareSettings) -> list[str]:
    """The language of each call: given by its metadata, else detected (``und`` when it
    cannot be told), else — detection off — ``[prepare] lang``."""
    out: list[str | None] = []
    for t in calls:
        given = next(
            (v for k, v in t.metadata.items() if k.lower() in LANGUAGE_KEYS and v.strip()), None
        )
        out.append(normalize_language(given) if given else None)
    todo = [i for i, code in enumerate(out) if code is None]
    if todo and prepare.languages.detect:
        guesses = detect_languages(
            [[u.text for u in calls[i].turns] for i in todo],
            min_confidence=prepare.languages.min_confidence,
        )
        for i, g in zip(todo, guesses, strict=True):
            out[i] = g.code
    return [code or prepare.lang for code in out]


def route_frames(
    ws: Workspace,
    calls: Sequence[Transcript],
    assign_with: Callable[[Workspace, list[Transcript]], pd.DataFrame],
    langs: Sequence[str] | None = None,
) -> pd.DataFrame:
    """The assignment table of ``calls``, each by its language's version, in input order.

    Parameters
    ----------
    ws : Workspace
        The main workspace.
    calls : sequence of Transcript
    assign_with : callable
        ``assign_with(workspace, calls)``: the table of some calls under that workspace's
        version (raises NotReadyError when it has none).
    langs : sequence of str, optional
        :func:`call_languages` of ``calls``, when the caller has it already.

    Returns
    -------
    DataFrame
        As one version's table when every call is in the main language (or undecided);
        else with a ``language`` column after ``transcript_id`` and lane share columns
        named ``share_<code>_<id>``.
    """
    prepare = ws.settings().prepare
    langs = call_languages(calls, prepare) if langs is None else langs
    main = prepare.lang
    groups: dict[str, list[int]] = {}
    for i, code in enumerate(langs):
        groups.setdefault(main if code == UNDECIDED else code, []).append(i)
    if set(groups) <= {main}:
        return assign_with(ws, list(calls))
    frames = []
    for code, rows in groups.items():
        lane = ws if code == main else lane_folder(ws, code)
        frame = _group_frame(lane, code, [calls[i] for i in rows], assign_with, code == main)
        frame.insert(1, "language", [langs[i] for i in rows])
        frame.index = rows
        frames.append(frame)
    table = pd.concat(frames).sort_index().reset_index(drop=True)
    return _ordered(table, list(groups), main)


def _ordered(table: pd.DataFrame, codes: list[str], main: str) -> pd.DataFrame:
    """Columns in the routed order: the others, then each language's share columns in
    ``codes`` order (main: ``share_<id>``; a lane: ``share_<code>_<id>``), then
    ``known_terms`` and ``reason``."""
    shares = [c for c in table.columns if c.startswith("share_")]

    def language_of(column: str) -> str:
        code = column.removeprefix("share_").split("_")[0]
        return main if code.isdigit() else code

    rank = {code: i for i, code in enumerate(codes)}
    shares.sort(key=lambda c: rank.get(language_of(c), len(rank)))  # stable: ids keep order
    rest = [c for c in table.columns if c not in shares and c not in ("known_terms", "reason")]
    return table[[*rest, *shares, "known_terms", "reason"]]


def join_routed(
    frames: Sequence[pd.DataFrame], langs: Sequence[Sequence[str]], main: str
) -> pd.DataFrame:
    """The tables :func:`route_frames` made of consecutive chunks of calls, as one table of
    all of them: the same table it makes of all the calls at once.

    Parameters
    ----------
    frames : sequence of DataFrame
        Each chunk's table.
    langs : sequence of sequence of str
        Each chunk's :func:`call_languages`.
    main : str
        ``[prepare] lang``.

    Returns
    -------
    DataFrame
    """
    if not any("language" in f.columns for f in frames):
        return pd.concat(frames, ignore_index=True)  # every call in the main language
    parts = []
    for frame, codes in zip(frames, langs, strict=True):
        if "language" not in frame.columns:
            frame = frame.copy()
            frame.insert(1, "language", list(codes))
        parts.append(frame)
    order: dict[str, None] = {}
    for codes in langs:
        for code in codes:
            order.setdefault(main if code == UNDECIDED else code, None)
    return _ordered(pd.concat(parts, ignore_index=True), list(order), main)


def _group_frame(
    lane: Workspace,
    code: str,
    calls: list[Transcript],
    assign_with: Callable[[Workspace, list[Transcript]], pd.DataFrame],
    main: bool,
) -> pd.DataFrame:
    """One language's rows: its version's table, or unthemed rows saying why not."""
    from talkthemes.errors import NotReadyError

    why = f"language {code}: no themes published in this language"
    if main or lane.db_path.exists():
        try:
            frame = assign_with(lane, calls)
        except NotReadyError:
            frame = None
        if frame is not None:
            if not main:  # a lane's theme ids are its own
                frame = frame.rename(
                    columns={
                        c: f"share_{code}_{c.removeprefix('share_')}"
                        for c in frame.columns
                        if c.startswith("share_")
                    }
                )
            return frame
    return pd.DataFrame(
        {
            "transcript_id": [t.tid for t in calls],
            "lead_theme_id": pd.array([None] * len(calls), dtype="Int64"),
            "lead_theme_label": UNTHEMED,
            "lead_share": float("nan"),
            "lead_theme_suggested_name": UNTHEMED,
            "known_terms": 0,
            "reason": why,
        }
    )
