"""Applying manifests to the store without losing what is stored.

* A field a call does not have yet is added.
* A field with the same value is left as it is.
* A field whose stored value differs (from the call's own table, or an earlier manifest) is
  a *change*: without ``update`` it is not made, and the row gets a reject naming the file,
  the row, the id and each field with its old and new value; with ``update`` it is made and
  reported the same way as a warning. Other fields of the row are applied either way.
* After the run, rows naming ids that no stored call has are reported (count and the first
  few ids with their rows); their values stay stored and apply to calls that arrive later.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

from talkthemes.calls.model import Reject, Warning_
from talkthemes.ingest.manifest import Manifest
from talkthemes.store import Store

__all__ = ["ManifestApplied", "MetadataChange", "apply_manifest", "unknown_ids"]

#: Ids named in an "ids not stored" warning.
FIRST_FEW = 5


@dataclass(frozen=True, slots=True)
class MetadataChange:
    """A manifest value that differs from the stored value of a call's field."""

    tid: str
    field: str
    old: str
    new: str
    source: str
    row: int | None
    applied: bool


@dataclass(slots=True)
class ManifestApplied:
    """What applying one manifest did: values written, changes, rejects and warnings."""

    written: int = 0
    changes: list[MetadataChange] = field(default_factory=list)
    rejects: list[Reject] = field(default_factory=list)
    warnings: list[Warning_] = field(default_factory=list)


def _changes_text(changes: Sequence[MetadataChange]) -> str:
    return ", ".join(f"{c.field!r}: {c.old!r} → {c.new!r}" for c in changes)


def apply_manifest(store: Store, manifest: Manifest, *, update: bool = False) -> ManifestApplied:
    """Store a manifest's values; change stored values only when ``update`` is set.

    Parameters
    ----------
    store : Store
    manifest : Manifest
        As read by :func:`~talkthemes.ingest.manifest.read_manifest`.
    update : bool
        Overwrite stored values that differ (``ingest --update-metadata``).

    Returns
    -------
    ManifestApplied
    """
    out = ManifestApplied()
    stored = store.metadata_values(list(manifest.entries))
    to_write: dict[str, dict[str, str]] = {}
    for tid, fields in manifest.entries.items():
        have = stored.get(tid, {})
        row = manifest.rows.get(tid)
        write = {k: v for k, v in fields.items() if have.get(k) != v}
        changed = [
            MetadataChange(tid, k, have[k], v, manifest.source, row, update)
            for k, v in write.items()
            if k in have
        ]
        where = manifest.where(tid) if row is not None else "a row"
        if changed and update:
            out.warnings.append(
                Warning_(
                    manifest.source,
                    f"{where}: id {tid!r}: stored metadata updated: {_changes_text(changed)}",
                    row=row,
                )
            )
        elif changed:
            out.rejects.append(
                Reject(
                    manifest.source,
                    f"{where}: id {tid!r}: the manifest changes stored metadata "
                    f"({_changes_text(changed)}); not changed — ingest --update-metadata "
                    "overwrites stored values",
                    "manifest",
                    row=row,
                )
            )
            for c in changed:
                del write[c.field]
        out.changes.extend(changed)
        if write:
            to_write[tid] = write
    out.written = store.set_metadata(to_write)
    return out


def unknown_ids(store: Store, manifest: Manifest) -> tuple[list[str], Warning_ | None]:
    """Ids of a manifest's rows that no stored call has, and the warning saying so.

    Returns
    -------
    ids : list of str
        In the manifest's row order.
    warning : Warning_ or None
        Count and the first few ids with their rows; None when every id is stored.
    """
    keys = list(manifest.entries)
    stored = store.stored_ids(keys)
    missing = [k for k in keys if k not in stored]
    if not missing:
        return [], None
    first = ", ".join(
        f"{k!r} ({manifest.where(k)})" if k in manifest.rows else repr(k)
        for k in missing[:FIRST_FEW]
    )
    more = ", …" if len(missing) > FIRST_FEW else ""
    return missing, Warning_(
        manifest.source,
        f"{len(missing)} manifest row(s) name ids with no stored transcript: {first}{more}; "
        "their values are kept for calls that arrive later",
        row=manifest.rows.get(missing[0]),
    )
