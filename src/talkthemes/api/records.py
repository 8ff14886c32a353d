"""The methods of :class:`talkthemes.Workspace` for transcripts sent as records in memory
(what a program or the HTTP service holds, rather than files): store them with the outcome
of each, or assign them to themes with the version that answered.

A record is a mapping ``{"id", "text" | "turns", "metadata"}`` (see
:mod:`talkthemes.ingest.records` for the shapes and the rules).
"""

from __future__ import annotations

import logging
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from talkthemes.calls.model import Reject, Warning_
from talkthemes.errors import NotReadyError
from talkthemes.ingest.records import read_records

from . import _choices
from ._base import OnWait, WorkspaceBase
from ._deferred import deferred

if TYPE_CHECKING:  # heavy (numpy, pandas, gensim): imported on first use, see _deferred.py
    import pandas as pd

    from talkthemes import assign as assign_mod
    from talkthemes.ingest import items as ingest_items
else:
    assign_mod = deferred("talkthemes.assign")
    ingest_items = deferred("talkthemes.ingest.items")

__all__ = ["Assignment", "RecordsMixin"]

log = logging.getLogger(__name__)


@dataclass
class Assignment:
    """Theme shares of records (:meth:`talkthemes.Workspace.assign_records`).

    Attributes
    ----------
    version : int
        The version that answered (every row is from it).
    shares : DataFrame
        One row per assigned record, in record order: the columns of
        :meth:`talkthemes.Workspace.assign`.
    rejects : list of Reject
        Records that could not be assigned (``row`` is the record's position), with why.
    warnings : list of Warning_
    """

    version: int
    shares: pd.DataFrame
    rejects: list[Reject] = field(default_factory=list)
    warnings: list[Warning_] = field(default_factory=list)


class RecordsMixin(WorkspaceBase):
    """``ingest_records``, ``assign_records`` (see the module notes)."""

    def ingest_records(
        self,
        records: Sequence[Mapping[str, Any]],
        *,
        source: str = "records",
        wait: bool = False,
        on_wait: OnWait | None = None,
    ) -> ingest_items.RecordsReport:
        """Store transcripts given as records, answering record by record.

        Idempotent by id: a record whose id is stored with the same text is
        ``unchanged``; with another text it is rejected (nothing stored is ever
        overwritten). Good records are stored even when others are rejected, in one
        transaction, under the writer lock.

        Parameters
        ----------
        records : sequence of mapping
            ``{"id", "text" | "turns", "metadata"}`` each; ids are required.
        source : str
            What the ingest log and messages call them (``service``, ...).
        wait, on_wait
            See :meth:`hold`.

        Returns
        -------
        RecordsReport
            Per record (in order): ``added``, ``unchanged``, ``duplicate`` or
            ``rejected``, with the reason; totals; warnings.
        """
        with self.hold("ingest", wait=wait, on_wait=on_wait):
            return ingest_items.ingest_records(self._dir, records, source=source)

    def assign_records(
        self, records: Sequence[Mapping[str, Any]], *, version: int | None = None
    ) -> Assignment:
        """Theme shares of transcripts given as records, without storing them.

        Like :meth:`assign`, but a record that cannot be used is returned among the
        ``rejects`` (with its position and why) instead of raised, and the result names
        the version that answered. Thread-safe.

        Parameters
        ----------
        records : sequence of mapping
            ``{"id", "text" | "turns", "metadata"}`` each; a record without an id gets
            its position (``"0"``, ``"1"``, ...).
        version : int, optional
            Default: the version current when the call starts.

        Returns
        -------
        Assignment

        Raises
        ------
        NotReadyError
            When nothing is published yet, or ``version`` is not kept.
        """
        n = version if version is not None else _choices.current_number(self._dir)
        if n is None:
            raise NotReadyError("no version published yet: run 'talkthemes publish' first")
        items = read_records(records, self.settings().ingest, require_id=False)
        # each call by its language's version (docs/languages.md)
        frame, rejects, warnings = self._assign_routed(items, int(n))  # type: ignore[attr-defined]
        for w in warnings:
            log.warning("%s: %s", w.source, w.message)
        return Assignment(int(n), frame, rejects, warnings)
