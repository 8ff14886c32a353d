"""The transcripts' metadata, aligned with a version's transcripts, with each field's kind.

A field is a date, a number, a category (at most :data:`MAX_CATEGORIES` distinct values)
or free text; the Calls filters and the segment comparison offer what suits each kind.
The table itself is built in the domain (:mod:`talkthemes.versions.metadata`, which a
version's viewer tables share); this module reads it from the store.
"""

from __future__ import annotations

from collections.abc import Sequence

from talkthemes.versions.metadata import (
    MAX_CATEGORIES,
    FieldInfo,
    MetaTable,
    field_label,
    metadata_table,
    seconds_field,
)
from talkthemes.workspace import Workspace

__all__ = [
    "MAX_CATEGORIES",
    "FieldInfo",
    "MetaTable",
    "field_label",
    "load_metadata",
    "metadata_table",
    "seconds_field",
]


def load_metadata(ws: Workspace, doc_ids: Sequence[str]) -> MetaTable:
    """Read every transcript's metadata once and align it with ``doc_ids``."""
    with ws.store() as store:
        metadata = store.metadata_for(None)
    return metadata_table(doc_ids, metadata)
