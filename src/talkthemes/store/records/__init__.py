"""The store's records: what its queries return, one frozen dataclass per table group.

The records are the store's interface: they are built here, by the store, from its rows,
and callers read their attributes (importing these types for annotations only). Each
record has a typed field for every column it reads and for every key of its JSON document
that code reads; the document itself stays available, whole and read-only, as ``info`` (a
cell's ``metrics``), for the keys without a field of their own.

=======================  =============================  ====================================
record                   table(s)                       returned by ``Store.``
=======================  =============================  ====================================
:class:`PrepRecord`      preps                          ``current_prep``, ``get_prep``
:class:`SweepRecord`     sweeps                         ``get_sweep``, ``find_sweep``
:class:`CellRecord`      cells                          ``cells``
:class:`VersionRecord`   versions                       ``current_version``, ``versions``
:class:`ThemeRecord`     themes, labels                 ``themes``
:class:`RetiredTheme`    retired_themes, labels         ``retired_themes``
:class:`LabelRecord`     labels                         ``set_label``, ``labels_for``,
                                                        ``apply_labels``
:class:`CurationEntry`   curation_log                   ``curation_log``
:class:`RefreshRecord`   refreshes                      ``refreshes``
:class:`TextMatch`       text_matches                   ``text_matches``
:class:`StoredTurn`      turn_sets                      ``get_turns``
:class:`StoreSummary`    (counts over every table)      ``summary``
:class:`Stages`          preps, sweeps, versions        ``stages``
:class:`TokenRecord`     tokens                         ``tokens``, ``token_by_key``
=======================  =============================  ====================================

Modules: :mod:`.sweeps` (preps, sweeps, cells), :mod:`.versions` (versions, themes, labels,
retired themes, refreshes), :mod:`.curation` (the curation log), :mod:`.ingest` (same-text
pairs, turns), :mod:`.summary` (``status``'s counts and stages), :mod:`.tokens` (the service's
access tokens), :mod:`._base` (the read-only JSON object). Import the types from this package;
read records by attribute (they have no dict-style access).
"""

from talkthemes.store.records._base import ReadOnlyDict
from talkthemes.store.records.curation import CURATION_ACTIONS, CurationEntry
from talkthemes.store.records.ingest import StoredTurn, TextMatch
from talkthemes.store.records.summary import (
    LikelyReexports,
    MetadataField,
    PreparedStage,
    PublishedStage,
    ReexportPair,
    Stages,
    StoreSummary,
    SweptStage,
)
from talkthemes.store.records.sweeps import CellRecord, PrepRecord, SweepRecord
from talkthemes.store.records.tokens import TokenRecord
from talkthemes.store.records.versions import (
    LabelRecord,
    NearestTheme,
    RefreshRecord,
    RetiredTheme,
    ThemeRecord,
    VersionRecord,
    VersionRefresh,
)

__all__ = [
    "CURATION_ACTIONS",
    "CellRecord",
    "CurationEntry",
    "LabelRecord",
    "LikelyReexports",
    "MetadataField",
    "NearestTheme",
    "PrepRecord",
    "PreparedStage",
    "PublishedStage",
    "ReadOnlyDict",
    "ReexportPair",
    "RefreshRecord",
    "RetiredTheme",
    "Stages",
    "StoreSummary",
    "StoredTurn",
    "SweepRecord",
    "SweptStage",
    "TextMatch",
    "ThemeRecord",
    "TokenRecord",
    "VersionRecord",
    "VersionRefresh",
]
