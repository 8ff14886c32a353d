"""Storing transcripts given as records in memory, with the outcome of each record.

Where :func:`talkthemes.ingest.run.ingest` reads files and reports counts per format,
:func:`ingest_records` takes records (:mod:`talkthemes.ingest.records`) — what a program
posts — and answers record by record: ``added``, ``unchanged`` (the same id with the same
text is stored already: sending a batch again changes nothing), ``duplicate`` (a likely
re-export of a stored call under another id, not stored; ``[ingest] reexport_*``) or
``rejected``, with the reason. The identity rule is the store's
(:meth:`talkthemes.store.Store.add_transcripts`): a stored call is never overwritten. The
run is logged like any ingest run; the caller holds the workspace lock.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

from talkthemes.calls.identity import SKIPPED
from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.ingest.records import RECORD_FORMAT, read_records
from talkthemes.ingest.run import OUTCOMES, reexport_rule
from talkthemes.languages.settle import settle_languages
from talkthemes.workspace import Workspace

__all__ = ["RecordOutcome", "RecordsReport", "ingest_records"]

#: The outcome of a record that was not stored (the others: ``added``, ``unchanged``,
#: ``duplicate``; the file ingest's ``OUTCOMES``).
REJECTED = "rejected"


@dataclass(frozen=True, slots=True)
class RecordOutcome:
    """What happened to one record.

    Attributes
    ----------
    index : int
        The record's position (from 0).
    id : str or None
        Its id (None when it had no usable one).
    outcome : str
        ``added``, ``unchanged``, ``duplicate`` or ``rejected``.
    reason : str
        Why, for ``duplicate`` and ``rejected``; empty otherwise.
    duplicate_of : str or None
        The stored call a ``duplicate`` is a likely re-export of.
    """

    index: int
    id: str | None
    outcome: str
    reason: str = ""
    duplicate_of: str | None = None

    def to_json(self) -> dict[str, Any]:
        """``index``, ``id``, ``outcome``, ``reason``, ``duplicate_of``."""
        return {
            "index": self.index,
            "id": self.id,
            "outcome": self.outcome,
            "reason": self.reason,
            "duplicate_of": self.duplicate_of,
        }


@dataclass
class RecordsReport:
    """The outcome of each record of one :func:`ingest_records` run.

    Attributes
    ----------
    run_id : int
        The ingest run logged in the store.
    records : list of RecordOutcome
        One per record, in record order.
    warnings : list of Warning_
        Used, but worth a look (a date not understood, the same text as another call).
    """

    run_id: int
    records: list[RecordOutcome] = field(default_factory=list)
    warnings: list[Warning_] = field(default_factory=list)

    def totals(self) -> dict[str, int]:
        """Records per outcome (every outcome named, zeros included)."""
        counts = Counter(r.outcome for r in self.records)
        return {o: counts[o] for o in OUTCOMES}

    @property
    def exit_code(self) -> int:
        """0, or 3 when a record was rejected (the others are stored)."""
        return 3 if any(r.outcome == REJECTED for r in self.records) else 0

    def to_json(self) -> dict[str, Any]:
        """``run_id``, ``totals``, ``records`` and ``warnings``."""
        return {
            "run_id": self.run_id,
            "totals": self.totals(),
            "records": [r.to_json() for r in self.records],
            "warnings": [{"source": w.source, "message": w.message} for w in self.warnings],
        }


def ingest_records(
    workspace: Workspace, records: Sequence[Any], *, source: str = RECORD_FORMAT
) -> RecordsReport:
    """Store transcripts given as records, in one transaction (see the module notes).

    Parameters
    ----------
    workspace : Workspace
        The folder (the caller holds its lock).
    records : sequence
        One mapping per transcript (:mod:`talkthemes.ingest.records`); ids are required.
    source : str
        What the ingest log and messages call these records (``service``, ...).

    Returns
    -------
    RecordsReport
    """
    settings = workspace.settings().ingest
    outcomes: dict[int, RecordOutcome] = {}
    transcripts: list[tuple[int, Transcript]] = []
    warnings: list[Warning_] = []
    rejects: list[Reject] = []
    for item in read_records(records, settings, source=source):
        # each record gives exactly one transcript or one reject (warnings besides)
        if isinstance(item, Transcript):
            transcripts.append((len(transcripts) + len(rejects), item))
        elif isinstance(item, Reject):
            rejects.append(item)
            index = int(item.row or 0)
            named = records[index].get("id") if hasattr(records[index], "get") else None
            outcomes[index] = RecordOutcome(
                index, named if isinstance(named, str) else None, REJECTED, item.reason
            )
        else:
            warnings.append(item)
    position = {id(t): i for i, t in transcripts}
    with workspace.store() as store:
        run_id = store.start_ingest_run([f"{source} ({len(records)} records)"])
        added = store.add_transcripts(
            [t for _, t in transcripts], run_id, rule=reexport_rule(settings)
        )
        for t in added.added:
            outcomes[position[id(t)]] = RecordOutcome(position[id(t)], t.tid, "added")
        for t in added.unchanged:
            outcomes[position[id(t)]] = RecordOutcome(
                position[id(t)], t.tid, "unchanged", "stored already with the same text"
            )
        for t, original in added.duplicates:
            i = position[id(t)]
            why = f"same text as stored call {original!r}: a likely re-export, not stored"
            outcomes[i] = RecordOutcome(i, t.tid, "duplicate", why, original)
        by_source = {t.source: (i, t.tid) for i, t in transcripts}
        for r in added.rejects:
            i, tid = by_source[r.source]
            outcomes[i] = RecordOutcome(i, tid, REJECTED, r.reason)
            rejects.append(Reject(r.source, r.reason, r.format, row=i))
        for m in added.same_text:
            if m.kind != SKIPPED:  # a skipped one is the record's own outcome
                warnings.append(
                    Warning_(m.source, f"id {m.tid!r}: same text as {m.original!r}: {m.reason}")
                )
        store.add_rejects(run_id, rejects)
        # languages settle now; the lanes take these calls in at the next ingest or refresh
        settled = settle_languages(workspace, store)
        warnings.extend(Warning_("metadata", m) for m in settled.messages())
        totals = Counter(o.outcome for o in outcomes.values())
        store.finish_ingest_run(
            run_id,
            added=totals["added"],
            unchanged=totals["unchanged"],
            duplicate=totals["duplicate"],
            rejected=totals[REJECTED],
        )
    return RecordsReport(run_id, [outcomes[i] for i in sorted(outcomes)], warnings)
