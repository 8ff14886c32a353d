"""The calls' metadata, aligned with a version's calls, with each field's kind and segments.

A field is a date, a number, a category (at most :data:`MAX_CATEGORIES` distinct values)
or free text; the viewer's Calls filters and segment comparison offer what suits each kind,
and a version's viewer tables (:mod:`talkthemes.versions.tables`) are counted by the same
segments (:func:`segment_values`). The viewer reads the store through
:func:`talkthemes.view.metadata.load_metadata`.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.errors import InputError

__all__ = [
    "MAX_CATEGORIES",
    "MAX_SEGMENTS",
    "FieldInfo",
    "MetaTable",
    "field_label",
    "metadata_table",
    "seconds_field",
    "segment_fields",
    "segment_values",
]

#: Most distinct values a text field may have to be offered as a pick list / segment.
MAX_CATEGORIES = 30

#: Most segments a comparison shows (the most frequent values; the rest are left out).
MAX_SEGMENTS = 12


_SECONDS = re.compile(r"^(?P<base>.+?)[ _-]?(?:s|sec|secs|seconds)$", re.IGNORECASE)
_MINUTES = re.compile(r"^(?P<base>.+?)[ _-]?(?:min|mins|minutes)$", re.IGNORECASE)
_WORDS = re.compile(r"[ _\-]+")


def seconds_field(name: str) -> bool:
    """Whether a field's name says its numbers are seconds (``duration_s``, ``hold_secs``)."""
    return _SECONDS.match(name) is not None and "_" in name.rstrip("_")


def field_label(name: str) -> str:
    """How a metadata field is named on screen.

    Underscores and dashes become spaces and the first letter is capitalised; a field of
    seconds (:func:`seconds_field`) is shown in minutes, so ``duration_s`` reads
    "Duration (min)" (its values are converted by :func:`metadata_table`), and
    ``wait_min`` reads "Wait (min)".

    Examples
    --------
    >>> field_label("duration_s"), field_label("queue"), field_label("call_reason")
    ('Duration (min)', 'Queue', 'Call reason')
    """
    text = str(name).strip()
    unit = ""
    for pattern in (_SECONDS, _MINUTES):
        m = pattern.match(text)
        if m is not None and (pattern is _MINUTES or seconds_field(text)):
            text, unit = m.group("base"), " (min)"
            break
    words = _WORDS.sub(" ", text).strip() or str(name)
    return words[:1].upper() + words[1:] + unit


@dataclass(frozen=True)
class FieldInfo:
    """A metadata field: its kind and what a filter can offer.

    ``kind`` is ``"date"``, ``"number"``, ``"category"`` (at most :data:`MAX_CATEGORIES`
    distinct values) or ``"text"``. ``values`` lists the categories (most frequent
    first); ``lo``/``hi`` bound numbers and dates (in the shown unit: minutes for a field
    of seconds). ``label`` is the name shown on screen (:func:`field_label`).
    """

    name: str
    kind: str
    values: tuple[str, ...] = ()
    lo: Any = None
    hi: Any = None
    missing: int = 0
    label: str = ""

    def __post_init__(self) -> None:
        if not self.label:
            object.__setattr__(self, "label", field_label(self.name))


@dataclass(eq=False)
class MetaTable:
    """Metadata aligned with a version's transcripts (row ``i`` = ``doc_ids[i]``).

    Attributes
    ----------
    frame : DataFrame
        One text column per field (missing values are ``None``).
    fields : dict of str to FieldInfo
    date_field : str or None
        The field used for dates (``date`` when present, else the first date field).
    dates : Series or None
        Parsed dates (midnight, no time zone) of ``date_field``.
    numbers : dict of str to ndarray
        Parsed values of number fields (NaN when missing).
    """

    frame: pd.DataFrame
    fields: dict[str, FieldInfo]
    date_field: str | None
    dates: pd.Series | None
    numbers: dict[str, np.ndarray] = field(default_factory=dict)


def metadata_table(doc_ids: Sequence[str], metadata: Mapping[str, Mapping[str, str]]) -> MetaTable:
    """Build a :class:`MetaTable` from ``{transcript id: {field: value}}``.

    A number field of seconds (:func:`seconds_field`, e.g. ``duration_s``) is converted to
    minutes (one decimal in ``frame``), matching its label "Duration (min)".
    """
    frame = pd.DataFrame.from_dict(dict(metadata), orient="index")
    frame = frame.reindex(list(doc_ids)).reset_index(drop=True)
    frame = frame.reindex(sorted(frame.columns), axis=1).astype(object)
    frame = frame.where(frame.notna(), None)
    fields: dict[str, FieldInfo] = {}
    numbers: dict[str, np.ndarray] = {}
    parsed_dates: dict[str, pd.Series] = {}
    for name in frame.columns:
        col = frame[name]
        present = col.dropna()
        missing = int(len(col) - len(present))
        if present.empty:
            continue
        as_num = pd.to_numeric(present, errors="coerce")
        if as_num.notna().all():
            values = pd.to_numeric(col, errors="coerce").to_numpy(dtype=np.float64)
            if seconds_field(name):
                values = values / 60.0
                frame[name] = [None if np.isnan(v) else f"{v:.1f}" for v in values]
            numbers[name] = values
            fields[name] = FieldInfo(
                name,
                "number",
                lo=float(np.nanmin(values)),
                hi=float(np.nanmax(values)),
                missing=missing,
            )
            continue
        as_date = pd.to_datetime(present, errors="coerce", format="ISO8601")
        if as_date.notna().all():
            full = pd.to_datetime(col, errors="coerce", format="ISO8601")
            if getattr(full.dt, "tz", None) is not None:
                full = full.dt.tz_convert(None)
            full = full.dt.normalize()
            parsed_dates[name] = full
            fields[name] = FieldInfo(
                name, "date", lo=full.min().date(), hi=full.max().date(), missing=missing
            )
            continue
        counts = present.astype(str).value_counts()
        if len(counts) <= MAX_CATEGORIES:
            fields[name] = FieldInfo(
                name, "category", values=tuple(counts.index.astype(str)), missing=missing
            )
        else:
            fields[name] = FieldInfo(name, "text", missing=missing)
    date_field = "date" if "date" in parsed_dates else next(iter(parsed_dates), None)
    dates = parsed_dates[date_field] if date_field is not None else None
    return MetaTable(frame, fields, date_field, dates, numbers)


def segment_fields(meta: MetaTable) -> list[str]:
    """Fields a segment comparison can use: categories and numbers (in quartile bins)."""
    return [f for f, i in meta.fields.items() if i.kind in ("category", "number")]


def segment_values(meta: MetaTable, name: str) -> pd.Series:
    """Each call's segment of a field (None: left out of the comparison).

    Category fields keep their :data:`MAX_SEGMENTS` most frequent values; number fields
    are cut into quartile bins labelled ``Qi: lo–hi``.
    """
    info = meta.fields.get(name)
    if info is None or info.kind not in ("category", "number"):
        raise InputError(
            f"segments: {name!r} is not a field to compare by "
            f"(choose one of {', '.join(segment_fields(meta)) or 'none'})"
        )
    if info.kind == "category":
        col = meta.frame[name]
        top = set(info.values[:MAX_SEGMENTS])
        return col.where(col.isin(top), None)
    values = pd.Series(meta.numbers[name])
    codes = pd.qcut(values, 4, labels=False, duplicates="drop")
    out = pd.Series([None] * len(values), dtype=object)
    present = codes.notna().to_numpy()
    if not present.any():
        return out
    bounds = values[present].groupby(codes[present]).agg(["min", "max"])
    labels = {
        code: f"Q{i + 1}: {row['min']:g}–{row['max']:g}"
        for i, (code, row) in enumerate(bounds.iterrows())
    }
    out[present] = codes[present].map(labels).to_numpy()
    return out
