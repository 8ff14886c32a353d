"""Results of the API's own methods, as frozen dataclasses with a ``to_json()``.

The long operations return the domain's result types (re-exported by
:mod:`talkthemes`): :class:`~talkthemes.ingest.run.IngestReport`,
:class:`~talkthemes.prepare.run.PrepareResult`, :class:`~talkthemes.sweep.run.SweepResult`,
:class:`~talkthemes.versions.publish.PublishResult`,
:class:`~talkthemes.refresh.run.RefreshResult` and :class:`~talkthemes.assign.AssignResult`.
The types here are the ones the API adds: what ``status``, ``label`` and ``export`` return.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any

__all__ = ["Export", "Label", "Status"]


@dataclass(frozen=True)
class Label:
    """A theme's label, note and hidden flag, as stored (kept across versions by theme id).

    Attributes
    ----------
    theme_id : int
    label : str
        Empty when the theme has none.
    note : str
        Empty when the theme has none.
    hidden : bool
        True when the theme is hidden as noise.
    """

    theme_id: int
    label: str
    note: str
    hidden: bool

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict: ``theme_id``, ``label``, ``note``, ``hidden``."""
        return {
            "theme_id": self.theme_id,
            "label": self.label,
            "note": self.note,
            "hidden": self.hidden,
        }


@dataclass(frozen=True)
class Export:
    """A table of shares written to a file (:meth:`talkthemes.Workspace.export`).

    Attributes
    ----------
    out : Path
        The ``.csv`` or ``.parquet`` file written.
    rows : int
        Transcripts written.
    columns : list of str
        Its columns, in order.
    """

    out: Path
    rows: int
    columns: list[str]

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict: ``out``, ``rows``, ``columns``."""
        return {"out": str(self.out), "rows": self.rows, "columns": list(self.columns)}


@dataclass(frozen=True)
class Status:
    """What a workspace holds and where each stage stands (:meth:`talkthemes.Workspace.status`).

    Attributes
    ----------
    workspace : str
        The folder.
    transcripts, words : int
        Stored transcripts and their words.
    by_format : dict of str to int
        Transcripts per input format.
    turns_by_role : dict of str to int
        Turns per role (``agent``, ``customer``, ``unknown``).
    transcripts_with_role : dict of str to int
        Transcripts with at least one turn of each role.
    by_month : dict of str to int
        Dated transcripts per month (``YYYY-MM``).
    date_range : list of str, or None
        The first and last date; None when no transcript has a date.
    metadata_fields : dict of str to dict
        Per field: ``transcripts`` (that have it), ``distinct`` (values) and ``top`` (the
        five most common values with their counts).
    manifest_rows_without_transcript : int
        Manifest ids with no stored transcript.
    ingest_runs, interrupted_ingest_runs, rejected_inputs : int
        Ingest runs, those that did not finish since the last that did, rejected inputs.
    likely_reexports : dict
        ``count``, ``skipped``, ``kept`` and ``first`` (the first pairs: ``id``,
        ``same_text_as``, ``kept``).
    same_text_pairs : int
        Stored calls whose text equals another's without being judged a re-export.
    stages : dict
        ``prepared`` (``hash``, ``at``), ``swept`` (``id``, ``at``, ``status``) and
        ``published`` (``version``, ``at``); each None until that stage has run.
    unfinished_sweeps : list of dict
        Sweeps of the current prep that stopped early: ``id``, ``status``, ``created_at``,
        ``cells_done``, ``cells_total`` and ``rerun`` (the command that finishes it).
    """

    workspace: str
    transcripts: int
    words: int
    by_format: dict[str, int]
    turns_by_role: dict[str, int]
    transcripts_with_role: dict[str, int]
    by_month: dict[str, int]
    date_range: list[str] | None
    metadata_fields: dict[str, dict[str, Any]]
    manifest_rows_without_transcript: int
    ingest_runs: int
    interrupted_ingest_runs: int
    rejected_inputs: int
    likely_reexports: dict[str, Any]
    same_text_pairs: int
    stages: dict[str, Any]
    unfinished_sweeps: list[dict[str, Any]]

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict with the attributes in order (what ``status --json`` prints)."""
        return {f.name: getattr(self, f.name) for f in fields(self)}
