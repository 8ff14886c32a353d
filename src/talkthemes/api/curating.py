"""The methods of :class:`talkthemes.Workspace` that curate themes beyond a label: mark
one not a theme, merge two into one and undo it, label many from a spreadsheet, read the
curation log, and write the themes spreadsheet.

Curation belongs to theme ids, like labels (``docs/operations.md``, "Curation across
refreshes"): every later version that carries an id shows its curation, and a refresh that
cannot carry one says so in its drift report. Each change is one transaction in the store,
logged with when and what (:meth:`CuratingMixin.curation_log`); like :meth:`label`, none
takes the writer lock.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import TYPE_CHECKING

from talkthemes.errors import InputError, NotReadyError
from talkthemes.workspace import atomic_write_bytes

from . import _choices
from ._base import WorkspaceBase
from ._deferred import deferred
from .results import Label, LabelSheet, Merge, ThemesSheet, Unmerge

if TYPE_CHECKING:  # heavy (pandas): imported on first use, see _deferred.py
    from talkthemes.store.records import CurationEntry, LabelRecord
    from talkthemes.versions import evidence_shown, spreadsheet
else:
    evidence_shown = deferred("talkthemes.versions.evidence_shown")
    spreadsheet = deferred("talkthemes.versions.spreadsheet")

__all__ = ["CuratingMixin"]


def _label(row: LabelRecord) -> Label:
    return Label(theme_id=row.theme_id, label=row.label, note=row.note, hidden=row.hidden)


class CuratingMixin(WorkspaceBase):
    """Not a theme, merge, unmerge, labels from a spreadsheet, the curation log, the themes
    spreadsheet (see the module notes)."""

    def mark_not_a_theme(self, theme_id: int, not_a_theme: bool = True) -> Label:
        """Mark a theme as *not a theme* (small talk, hang-ups, noise), or undo it.

        A theme marked so is hidden from trends and alerts by default, and still counted
        and listed. It is the ``hidden`` flag of :meth:`label`.

        Parameters
        ----------
        theme_id : int
            A theme of the current version (merged themes: the id they are shown as).
        not_a_theme : bool
            False makes it a theme again.

        Returns
        -------
        Label
            The theme's label, note and flag as stored now.

        Raises
        ------
        NotReadyError
            When nothing is published yet.
        InputError
            When the current version shows no theme ``theme_id``.
        """
        _choices.check_theme(self._dir, theme_id)
        with self._dir.store() as store:
            return _label(store.set_label(theme_id, hidden=not_a_theme))

    def merge(self, theme_id: int, into: int) -> Merge:
        """Merge a theme into another: one theme from now on, keeping ``into``'s id.

        Every version holding both ids shows them as one theme (its shares the sum of
        both; its words their mix); later refreshes keep them together. The version's files
        are not changed, so :meth:`unmerge` undoes it.

        Parameters
        ----------
        theme_id : int
            The theme merged away (a theme of the current version).
        into : int
            The theme it joins (when itself merged, the one it is shown as).

        Returns
        -------
        Merge
            The id both are shown as now.

        Raises
        ------
        NotReadyError
            When nothing is published yet.
        InputError
            When either id is not a theme the current version shows, or both are the same.
        """
        _choices.check_theme(self._dir, theme_id)
        _choices.check_theme(self._dir, into)
        if theme_id == into:
            raise InputError(f"--merge-into {into}: a theme cannot be merged into itself")
        with self._dir.store() as store:
            root = store.merge_theme(theme_id, into)
        return Merge(theme_id=theme_id, into=root)

    def unmerge(self, theme_id: int) -> Unmerge:
        """Undo merges: a merged theme is shown on its own again; for a theme others were
        merged into, every one of them is.

        Parameters
        ----------
        theme_id : int

        Returns
        -------
        Unmerge
            The ids shown on their own again.

        Raises
        ------
        NotReadyError
            When nothing is published yet.
        InputError
            When the theme is in no merge.
        """
        shown = _choices.shown_themes(self._dir)
        if theme_id not in shown.merged and theme_id not in set(shown.merged.values()):
            raise InputError(f"theme {theme_id} is not merged with another theme")
        with self._dir.store() as store:
            apart = store.unmerge_theme(theme_id)
        return Unmerge(theme_id=theme_id, apart=apart)

    def label_from(self, path: str | os.PathLike[str]) -> LabelSheet:
        """Set labels and notes from a themes spreadsheet (see :meth:`themes_sheet`).

        Every row is checked first (the theme id is a theme of the current version, listed
        once; the cells are UTF-8 text); then every change is applied in one transaction.
        When any row has a problem nothing is applied and the result lists each problem with
        its row (the header is row 1). Columns other than ``theme_id``, ``label`` and
        ``note`` are not read; a blank cell clears the label or note.

        Parameters
        ----------
        path : path
            A CSV file (as :meth:`themes_sheet` writes it, or any CSV with a ``theme_id``
            column and a ``label`` or ``note`` column).

        Returns
        -------
        LabelSheet
            ``applied`` and the themes changed, or the problems (``exit_code`` 2).

        Raises
        ------
        NotReadyError
            When nothing is published yet.
        InputError
            When the file cannot be read at all.
        """
        file = Path(path)
        shown = _choices.shown_themes(self._dir)
        rows, problems = spreadsheet.read_label_sheet(
            file, shown.ids, shown.merged, version=shown.version
        )
        if problems:
            return LabelSheet(file=file, applied=False, problems=problems)
        with self._dir.store() as store:
            current = store.labels_for([r.theme_id for r in rows])
            changes = [
                (r.theme_id, r.label, r.note)
                for r in rows
                if (r.label is not None and r.label != current[r.theme_id].label)
                or (r.note is not None and r.note != current[r.theme_id].note)
            ]
            applied = store.apply_labels(changes) if changes else []
        return LabelSheet(
            file=file, applied=True, rows=len(rows), changed=[_label(a) for a in applied]
        )

    def curation_log(
        self, theme_id: int | None = None, *, limit: int | None = None
    ) -> list[CurationEntry]:
        """Every curation action, newest first: labels, notes, *not a theme* marks, merges.

        Parameters
        ----------
        theme_id : int, optional
            Only this theme's actions.
        limit : int, optional
            At most this many entries.

        Returns
        -------
        list of CurationEntry
            ``at`` (when), ``action``, ``theme_id``, ``version`` (current then) and
            ``detail`` (``before``/``after`` of a label or note, ``into`` of a merge,
            ``from`` of an unmerge).
        """
        with self._dir.store() as store:
            return store.curation_log(theme_id, limit)

    def themes_sheet(
        self,
        path: str | os.PathLike[str],
        *,
        version: int | None = None,
        lam: float | None = None,
        n_terms: int = 10,
    ) -> ThemesSheet:
        """Write the themes spreadsheet to label them in (read back by :meth:`label_from`).

        One row per theme: ``theme_id``, ``suggested_name``, ``label``, ``note``, ``share``,
        ``coverage``, ``top_terms``, ``top_phrases``, and three evidence sentences with
        their calls (personal data masked unless ``[view] original_text`` allows the
        original). CSV as RFC 4180 writes it, UTF-8 with a byte-order mark, spreadsheet
        formulas defused; written to a temporary name and moved into place.

        Parameters
        ----------
        path : path
            A ``.csv`` file name.
        version : int, optional
            Default: the current version.
        lam : float, optional
            Relevance weight ranking the top terms (default ``[view] relevance_lambda``).
        n_terms : int
            Top terms per theme.

        Returns
        -------
        ThemesSheet
            The file, the version, the rows and columns written.

        Raises
        ------
        InputError
            When the name does not end in ``.csv``.
        NotReadyError
            When nothing is published yet.
        """
        out = Path(path)
        if out.suffix.lower() != ".csv":
            raise InputError(f"--out {out}: expected a .csv file name")
        n = _choices.current_number(self._dir) if version is None else version
        if n is None:
            raise NotReadyError("no version published yet: run 'talkthemes publish' first")
        v = self._versions.version(self._dir, int(n))
        lam = self.settings().view.relevance_lambda if lam is None else lam
        masker = evidence_shown.EvidenceMasker(self._dir)
        shown = [
            evidence_shown.shown_evidence(self._dir, v.evidence(i), masker=masker)
            for i in range(v.k)
        ]
        sheet = spreadsheet.themes_sheet(v, lam=lam, n_terms=n_terms, evidence=shown)
        atomic_write_bytes(out, spreadsheet.sheet_bytes(sheet))
        return ThemesSheet(
            out=out, version=v.n, rows=len(sheet), columns=[str(c) for c in sheet.columns]
        )
