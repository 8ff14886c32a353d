"""Results of the API's own methods, as frozen dataclasses with a ``to_json()``.

The long operations return the domain's result types (re-exported by
:mod:`talkthemes`): :class:`~talkthemes.ingest.run.IngestReport`,
:class:`~talkthemes.prepare.run.PrepareResult`, :class:`~talkthemes.sweep.run.SweepResult`,
:class:`~talkthemes.versions.publish.PublishResult`,
:class:`~talkthemes.refresh.run.RefreshResult` and :class:`~talkthemes.assign.AssignResult`.
The types here are the ones the API adds: what ``status``, ``label``, ``export`` and the
curation methods (``merge``, ``unmerge``, ``label_from``, ``themes_sheet``) return, and the
access tokens (``add_token``, ``tokens``). The versions, calls and pages of calls the
service reads (``versions``, ``theme_calls``, ``call``) are in
:mod:`talkthemes.api.call_results`.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pandas behind it: the result only holds what it read
    from talkthemes.versions.spreadsheet import SheetProblem

__all__ = [
    "Export",
    "Label",
    "LabelSheet",
    "Merge",
    "NewToken",
    "Status",
    "ThemesSheet",
    "TokenInfo",
    "Unmerge",
]


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
class Merge:
    """A theme merged into another (:meth:`talkthemes.Workspace.merge`).

    Attributes
    ----------
    theme_id : int
        The theme merged away.
    into : int
        The id the two are shown as from now on (the theme asked for, or the one it was
        itself merged into).
    """

    theme_id: int
    into: int

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict: ``theme_id``, ``merged_into``."""
        return {"theme_id": self.theme_id, "merged_into": self.into}


@dataclass(frozen=True)
class Unmerge:
    """Merges undone (:meth:`talkthemes.Workspace.unmerge`).

    Attributes
    ----------
    theme_id : int
        The theme asked about.
    apart : list of int
        The ids shown on their own again.
    """

    theme_id: int
    apart: list[int]

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict: ``theme_id``, ``unmerged``."""
        return {"theme_id": self.theme_id, "unmerged": list(self.apart)}


@dataclass(frozen=True)
class LabelSheet:
    """Labels and notes read from a themes spreadsheet
    (:meth:`talkthemes.Workspace.label_from`): all applied, or none.

    Attributes
    ----------
    file : Path
        The spreadsheet read.
    applied : bool
        False when a problem was found: then nothing was changed.
    rows : int
        Theme rows read.
    changed : list of Label
        The themes whose label or note changed, as stored now.
    problems : list of SheetProblem
        Every problem found, each with its row (1 is the header) and reason.
    """

    file: Path
    applied: bool
    rows: int = 0
    changed: list[Label] = field(default_factory=list)
    problems: list[SheetProblem] = field(default_factory=list)

    @property
    def unchanged(self) -> int:
        """Rows read whose label and note were already as stored."""
        return self.rows - len(self.changed) if self.applied else 0

    @property
    def exit_code(self) -> int:
        """0, or 2 when a problem was found (nothing was applied)."""
        return 0 if self.applied else 2

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict: ``file``, ``applied``, then ``rows``, ``changed`` and
        ``unchanged`` when applied, or ``problems`` (``row``, ``message``) when not."""
        if not self.applied:
            return {
                "file": str(self.file),
                "applied": False,
                "problems": [{"row": p.row, "message": p.message} for p in self.problems],
            }
        return {
            "file": str(self.file),
            "applied": True,
            "rows": self.rows,
            "changed": [c.to_json() for c in self.changed],
            "unchanged": self.unchanged,
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
    themes_file : Path or None
        The table naming each share column's theme, written beside ``out``.
    """

    out: Path
    rows: int
    columns: list[str]
    themes_file: Path | None = None

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict: ``out``, ``rows``, ``columns``, ``themes_file``."""
        return {
            "out": str(self.out),
            "rows": self.rows,
            "columns": list(self.columns),
            "themes_file": None if self.themes_file is None else str(self.themes_file),
        }


@dataclass(frozen=True)
class ThemesSheet:
    """The themes spreadsheet written to label them in
    (:meth:`talkthemes.Workspace.themes_sheet`).

    Attributes
    ----------
    out : Path
        The ``.csv`` file written.
    version : int
        The version whose themes it lists.
    rows : int
        Themes written.
    columns : list of str
        Its columns, in order.
    """

    out: Path
    version: int
    rows: int
    columns: list[str]

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict: ``out``, ``version``, ``rows``, ``columns``."""
        return {
            "out": str(self.out),
            "version": self.version,
            "rows": self.rows,
            "columns": list(self.columns),
        }


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
        ``published`` (``version``, ``at``, ``unthemed``: the count, share and reasons of
        the version's unthemed group); each None until that stage has run.
    unfinished_sweeps : list of dict
        Sweeps of the current prep that stopped early: ``id``, ``status``, ``created_at``,
        ``cells_done``, ``cells_total`` and ``rerun`` (the command that finishes it).
    languages : list of dict
        Per language of the calls (:meth:`talkthemes.Workspace.languages`): ``language``,
        ``calls``, ``given``, ``detected``, ``kind``, ``folder`` and, for a lane,
        ``version`` (its current version, None before a publish).
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
    languages: list[dict[str, Any]]

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict with the attributes in order (what ``status --json`` prints)."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


@dataclass(frozen=True)
class TokenInfo:
    """An access token of the HTTP service as stored: never the token itself.

    Attributes
    ----------
    name : str
    scope : str
        ``read`` or ``write``.
    key_id : str
        The token's public part (it starts ``tt_<key_id>_``): tells tokens apart in logs
        and lists without revealing them.
    created_at : str
    revoked_at : str or None
        None while the token is active.
    """

    name: str
    scope: str
    key_id: str
    created_at: str
    revoked_at: str | None = None

    @classmethod
    def of(cls, record: Any) -> TokenInfo:
        """From the store's :class:`~talkthemes.store.records.TokenRecord`."""
        return cls(
            name=record.name,
            scope=record.scope,
            key_id=record.key_id,
            created_at=record.created_at,
            revoked_at=record.revoked_at,
        )

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict: ``name``, ``scope``, ``key_id``, ``created_at``,
        ``revoked_at``."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


@dataclass(frozen=True)
class NewToken:
    """A token just issued (:meth:`talkthemes.Workspace.add_token`): the only time the
    token itself is known. Its ``repr`` leaves the token out.

    Attributes
    ----------
    info : TokenInfo
    token : str
        ``tt_<key id>_<secret>``, for the ``Authorization: Bearer`` header.
    """

    info: TokenInfo
    token: str = field(repr=False)

    def to_json(self) -> dict[str, Any]:
        """``info``'s fields and ``token``."""
        return {**self.info.to_json(), "token": self.token}
