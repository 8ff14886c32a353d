"""Records of published versions, their themes, labels and retired themes, and refreshes."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from talkthemes.store.records._base import (
    EMPTY,
    ReadOnlyDict,
    document,
    ints,
    opt_float,
    opt_int,
    opt_str,
)

__all__ = [
    "LabelRecord",
    "NearestTheme",
    "RefreshRecord",
    "RetiredTheme",
    "ThemeRecord",
    "VersionRecord",
    "VersionRefresh",
]


# -- versions, themes, labels ---------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class VersionRefresh:
    """How a refresh made a version (its ``refresh`` block).

    Attributes
    ----------
    refresh_id : int or None
        The refresh log row.
    previous_version : int or None
    new_transcripts : int or None
        Transcripts the previous version did not know.
    resweep : bool
        Whether K was chosen again.
    resweep_reason : str or None
    info : mapping
        The whole block (also ``same_theme_cutoff`` and ``coherence_check``).
    """

    refresh_id: int | None = None
    previous_version: int | None = None
    new_transcripts: int | None = None
    resweep: bool = False
    resweep_reason: str | None = None
    info: Mapping[str, Any] = EMPTY

    @classmethod
    def from_json(cls, block: Mapping[str, Any]) -> VersionRefresh:
        """Build from the block recorded in a version's document."""
        return cls(
            refresh_id=opt_int(block.get("refresh_id")),
            previous_version=opt_int(block.get("previous_version")),
            new_transcripts=opt_int(block.get("new_transcripts")),
            resweep=bool(block.get("resweep", False)),
            resweep_reason=opt_str(block.get("resweep_reason")),
            info=ReadOnlyDict(block),
        )


@dataclass(frozen=True, slots=True)
class VersionRecord:
    """A published version (``versions`` row).

    Attributes
    ----------
    n : int
        The version number.
    created_at : str
    current : bool
    family : str or None
        ``lda`` or ``nmf``.
    k, seed : int or None
    cell : str or None
        The sweep cell it was fitted as.
    sweep_id : int or None
        The sweep the cell came from (None: fitted without a sweep).
    prep_hash : str or None
        The prep it was trained on.
    refresh : VersionRefresh or None
        How a refresh made it; None for a version published directly.
    info : mapping
        The recorded document (``version.json``: also ``theme_ids``, ``coherence``,
        ``topic_weights``, ``fit_key`` …).
    """

    n: int
    created_at: str
    current: bool = False
    family: str | None = None
    k: int | None = None
    seed: int | None = None
    cell: str | None = None
    sweep_id: int | None = None
    prep_hash: str | None = None
    refresh: VersionRefresh | None = None
    info: Mapping[str, Any] = EMPTY

    @classmethod
    def from_row(cls, n: int, created_at: str, current: int, info: str) -> VersionRecord:
        """Build from the columns ``n, created_at, current, info``."""
        doc = document(info)
        refresh = doc.get("refresh")
        return cls(
            n=int(n),
            created_at=str(created_at),
            current=bool(current),
            family=opt_str(doc.get("family")),
            k=opt_int(doc.get("k")),
            seed=opt_int(doc.get("seed")),
            cell=opt_str(doc.get("cell")),
            sweep_id=opt_int(doc.get("sweep_id")),
            prep_hash=opt_str(doc.get("prep_hash")),
            refresh=VersionRefresh.from_json(refresh) if refresh else None,
            info=doc,
        )


@dataclass(frozen=True, slots=True)
class NearestTheme:
    """The closest theme on the other side of a refresh: its id, name and distance."""

    theme_id: int
    name: str
    distance: float

    @classmethod
    def from_json(cls, value: Mapping[str, Any] | None) -> NearestTheme | None:
        """Build from a recorded ``{"theme_id", "name", "distance"}`` (None stays None)."""
        if not value:
            return None
        return cls(int(value["theme_id"]), str(value.get("name", "")), float(value["distance"]))


@dataclass(frozen=True, slots=True)
class ThemeRecord:
    """A theme of a version (``themes`` row) with its label, note and hidden flag.

    Attributes
    ----------
    theme_id : int
        Kept across versions while the theme is carried over.
    position : int
        Its row in the version's arrays.
    status : str
        ``new`` or ``carried``.
    label, note : str
        As set by people (empty when not set); they belong to the theme id.
    hidden : bool
    distance : float or None
        A carried theme: how far its words moved (Jensen–Shannon distance).
    nearest_previous : NearestTheme or None
        A new theme: the closest theme of the previous version.
    possible_split_of, possible_merge_of : tuple of int
        Previous themes this one may have split from, or merged.
    info : mapping
        The recorded document (also ``previous_version``).
    merged : tuple of int
        Ids of the themes people merged into this one, when a version is loaded with its
        merges shown as one theme (:func:`talkthemes.versions.load.load_version`); empty as
        the store returns a version's themes (as fitted).
    """

    theme_id: int
    position: int
    status: str
    label: str = ""
    note: str = ""
    hidden: bool = False
    distance: float | None = None
    nearest_previous: NearestTheme | None = None
    possible_split_of: tuple[int, ...] = ()
    possible_merge_of: tuple[int, ...] = ()
    info: Mapping[str, Any] = EMPTY
    merged: tuple[int, ...] = ()

    @classmethod
    def from_row(
        cls,
        theme_id: int,
        position: int,
        status: str,
        info: str,
        label: str | None,
        note: str | None,
        hidden: int | None,
    ) -> ThemeRecord:
        """Build from ``theme_id, position, status, info`` and the label's ``label, note,
        hidden`` (None without a label row)."""
        doc = document(info)
        return cls(
            theme_id=int(theme_id),
            position=int(position),
            status=str(status),
            label=label or "",
            note=note or "",
            hidden=bool(hidden),
            distance=opt_float(doc.get("distance")),
            nearest_previous=NearestTheme.from_json(doc.get("nearest_previous")),
            possible_split_of=ints(doc.get("possible_split_of")),
            possible_merge_of=ints(doc.get("possible_merge_of")),
            info=doc,
        )


@dataclass(frozen=True, slots=True)
class RetiredTheme:
    """A theme a version retired (``retired_themes`` row), with its label, note and flag.

    Attributes
    ----------
    theme_id : int
    label, note : str
    hidden : bool
    top_terms : tuple of str
        Its top terms in the previous version.
    coverage_before : float or None
        The share of transcripts it led in the previous version.
    nearest_new : NearestTheme or None
        The closest theme of the version that retired it.
    info : mapping
        The recorded document (also ``previous_version``).
    """

    theme_id: int
    label: str = ""
    note: str = ""
    hidden: bool = False
    top_terms: tuple[str, ...] = ()
    coverage_before: float | None = None
    nearest_new: NearestTheme | None = None
    info: Mapping[str, Any] = EMPTY

    @classmethod
    def from_row(
        cls, theme_id: int, info: str, label: str | None, note: str | None, hidden: int | None
    ) -> RetiredTheme:
        """Build from ``theme_id, info`` and the label's ``label, note, hidden``."""
        doc = document(info)
        return cls(
            theme_id=int(theme_id),
            label=label or "",
            note=note or "",
            hidden=bool(hidden),
            top_terms=tuple(str(t) for t in doc.get("top_terms") or ()),
            coverage_before=opt_float(doc.get("coverage_before")),
            nearest_new=NearestTheme.from_json(doc.get("nearest_new")),
            info=doc,
        )


@dataclass(frozen=True, slots=True)
class LabelRecord:
    """A theme's label, note and hidden flag as stored (``labels`` row)."""

    theme_id: int
    label: str
    note: str
    hidden: bool

    def to_json(self) -> dict[str, Any]:
        """The JSON form (``label --json``)."""
        return {
            "theme_id": self.theme_id,
            "label": self.label,
            "note": self.note,
            "hidden": self.hidden,
        }


# -- the refresh log ------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class RefreshRecord:
    """A refresh run (``refreshes`` row), from its start to its final status.

    Attributes
    ----------
    id : int
    started_at : str
    finished_at : str or None
    status : str
        ``running``, ``published``, ``nothing_new``, ``failed`` or ``interrupted``.
    previous_version : int or None
        The version it built on.
    version : int or None
        The version it published.
    new_transcripts : int or None
        Transcripts the previous version did not know (once counted).
    counts : mapping of str to int
        Themes ``carried``, ``new`` and ``retired`` by the version it published (empty
        otherwise).
    error : str or None
        Why it failed.
    info : mapping
        The recorded document: ``paths`` and ``resweep_asked`` while it runs, its summary
        (also ``new_theme_ids``, ``rejected`` …) once finished.
    """

    id: int
    started_at: str
    finished_at: str | None
    status: str
    previous_version: int | None = None
    version: int | None = None
    new_transcripts: int | None = None
    counts: Mapping[str, int] = EMPTY
    error: str | None = None
    info: Mapping[str, Any] = EMPTY

    @classmethod
    def from_row(
        cls,
        rid: int,
        started: str,
        finished: str | None,
        status: str,
        previous: int | None,
        version: int | None,
        info: str,
    ) -> RefreshRecord:
        """Build from ``id, started_at, finished_at, status, previous_version, version,
        info``."""
        doc = document(info)
        return cls(
            id=int(rid),
            started_at=str(started),
            finished_at=finished,
            status=str(status),
            previous_version=opt_int(previous),
            version=opt_int(version),
            new_transcripts=opt_int(doc.get("new_transcripts")),
            counts=ReadOnlyDict(doc.get("counts") or {}),
            error=opt_str(doc.get("error")),
            info=doc,
        )
