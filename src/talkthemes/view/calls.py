"""The data behind Calls: the transcripts of a theme, filtered, and the list as CSV.

The list as it first opens (the calls a theme leads, no other filter) is read from the
version's viewer tables (:func:`top_calls_table`); any filter reads every call's share
and metadata (:func:`calls_table`).
"""

from __future__ import annotations

import datetime as dt
import io
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from talkthemes.errors import InputError
from talkthemes.privacy import mask_value
from talkthemes.text import csv_frame
from talkthemes.versions.load import Version
from talkthemes.versions.tables import ViewTables
from talkthemes.view.metadata import MetaTable
from talkthemes.view.themes import theme_names

__all__ = [
    "CSV_HEADERS",
    "CallFilter",
    "calls_csv",
    "calls_table",
    "plain_filter",
    "top_calls_table",
]


@dataclass
class CallFilter:
    """Which transcripts the Calls section lists for a theme.

    Attributes
    ----------
    min_share : float
        Least share (0–1) of the theme in the transcript.
    lead_only : bool
        Only transcripts the theme leads (its coverage); False lists every transcript
        where the theme's share reaches ``min_share``.
    date_from, date_to : date, optional
        Inclusive date range on the date field.
    categories : dict of str to list of str
        Allowed values per category field (an empty list allows all).
    ranges : dict of str to (float, float)
        Inclusive range per number field.
    contains : dict of str to str
        Case-insensitive text a text field must contain.
    """

    min_share: float = 0.0
    lead_only: bool = True
    date_from: dt.date | None = None
    date_to: dt.date | None = None
    categories: dict[str, list[str]] = field(default_factory=dict)
    ranges: dict[str, tuple[float, float]] = field(default_factory=dict)
    contains: dict[str, str] = field(default_factory=dict)


def plain_filter(flt: CallFilter) -> bool:
    """Whether the filter lists just the calls the theme leads (what the tables hold)."""
    return (
        flt.lead_only
        and flt.min_share <= 0
        and flt.date_from is None
        and flt.date_to is None
        and not any(flt.categories.values())
        and not flt.ranges
        and not any(flt.contains.values())
    )


def _mask_text(extra: pd.DataFrame, fields: dict, masked: bool) -> pd.DataFrame:
    if masked:
        for name, info in fields.items():
            if info.kind == "text" and name in extra:
                extra[name] = extra[name].map(lambda v: None if pd.isna(v) else mask_value(str(v)))
    return extra


def top_calls_table(
    version: Version, tables: ViewTables, position: int, *, masked: bool = True
) -> pd.DataFrame:
    """The first rows of :func:`calls_table` with no filter, from the viewer tables.

    The same columns, rows and order as ``calls_table(version, meta, position)`` for the
    calls the tables keep per theme (:data:`talkthemes.versions.tables_build.TOP_CALLS`);
    the theme leads ``tables.lead_counts()[position]`` calls in all.
    """
    if not 0 <= position < version.k:
        raise InputError(f"calls: theme row {position} is outside 0..{version.k - 1}")
    rows = tables.top_calls(version.theme_ids[position])
    names = theme_names(version)
    out = pd.DataFrame(
        {
            "transcript_id": rows["transcript_id"].astype(str).to_numpy(dtype=object),
            "share": rows["share"].to_numpy(dtype=np.float64),
            "lead_theme": names[position],
            "lead_theme_id": np.int64(version.theme_ids[position]),
            "lead_share": rows["share"].to_numpy(dtype=np.float64),
        }
    )
    extra = _mask_text(tables.metadata_frame(rows), tables.fields, masked)
    return pd.concat([out, extra], axis=1)


def _field_mask(meta: MetaTable, flt: CallFilter) -> np.ndarray:
    n = len(meta.frame)
    mask = np.ones(n, dtype=bool)

    def known(name: str, kinds: tuple[str, ...]) -> None:
        info = meta.fields.get(name)
        if info is None or info.kind not in kinds:
            have = ", ".join(f"{f} ({i.kind})" for f, i in meta.fields.items()) or "none"
            raise InputError(
                f"calls filter: {name!r} is not a {' or '.join(kinds)} field (fields: {have})"
            )

    if flt.date_from is not None or flt.date_to is not None:
        if meta.dates is None:
            raise InputError("calls filter: a date range needs a date field in the metadata")
        d = meta.dates
        if flt.date_from is not None:
            mask &= (d >= pd.Timestamp(flt.date_from)).to_numpy(dtype=bool, na_value=False)
        if flt.date_to is not None:
            mask &= (d <= pd.Timestamp(flt.date_to)).to_numpy(dtype=bool, na_value=False)
    for name, allowed in flt.categories.items():
        known(name, ("category", "text"))
        if allowed:
            mask &= meta.frame[name].isin([str(a) for a in allowed]).to_numpy(dtype=bool)
    for name, (lo, hi) in flt.ranges.items():
        known(name, ("number",))
        values = meta.numbers[name]
        with np.errstate(invalid="ignore"):
            mask &= (values >= lo) & (values <= hi)
    for name, text in flt.contains.items():
        known(name, ("category", "text"))
        if text:
            col = meta.frame[name].astype("string")
            hit = col.str.contains(text, case=False, regex=False)
            mask &= hit.to_numpy(dtype=bool, na_value=False)
    return mask


def calls_table(
    version: Version,
    meta: MetaTable,
    position: int,
    flt: CallFilter | None = None,
    *,
    masked: bool = True,
) -> pd.DataFrame:
    """The transcripts of a theme, most dominated first.

    Parameters
    ----------
    version : Version
    meta : MetaTable
        Aligned with ``version.doc_ids``.
    position : int
        The theme's row in the version.
    flt : CallFilter, optional
    masked : bool
        Mask personal data in free-text metadata fields (:func:`talkthemes.privacy.
        mask_value`); pass False only where the workspace allows the original text.

    Returns
    -------
    DataFrame
        ``transcript_id, share`` (the theme's share, 0–1), ``lead_theme`` (name of the
        transcript's lead theme), ``lead_theme_id``, ``lead_share``, then one column per
        metadata field;
        sorted by share (descending), then id.
    """
    flt = flt or CallFilter()
    if not 0 <= position < version.k:
        raise InputError(f"calls: theme row {position} is outside 0..{version.k - 1}")
    if len(meta.frame) != len(version.doc_ids):
        raise InputError(
            f"calls: metadata has {len(meta.frame)} rows for {len(version.doc_ids)} transcripts"
        )
    shares = np.asarray(version.doc_topics[:, position], dtype=np.float64)
    lead = version.lead()
    mask = shares >= float(flt.min_share)
    if flt.lead_only:
        mask &= lead == position
    mask &= _field_mask(meta, flt)
    rows = np.flatnonzero(mask)
    ids = np.asarray(version.doc_ids, dtype=object)[rows]
    order = np.lexsort((ids.astype(str), -shares[rows]))
    rows = rows[order]
    names = np.asarray(theme_names(version), dtype=object)
    out = pd.DataFrame(
        {
            "transcript_id": np.asarray(version.doc_ids, dtype=object)[rows],
            "share": shares[rows],
            "lead_theme": names[lead[rows]],
            "lead_theme_id": np.asarray(version.theme_ids, dtype=np.int64)[lead[rows]],
            "lead_share": np.asarray(version.lead_share(), dtype=np.float64)[rows],
        }
    )
    extra = meta.frame.iloc[rows].reset_index(drop=True)
    return pd.concat([out, _mask_text(extra, meta.fields, masked)], axis=1)


#: The Calls list's own columns, as the CSV names them.
CSV_HEADERS = {
    "transcript_id": "Transcript",
    "best_sentence": "Best sentence",
    "share": "Share of this theme",
    "lead_theme": "Lead theme",
    "lead_theme_id": "Lead theme id",
    "lead_share": "Lead share",
}


def calls_csv(frame: pd.DataFrame, meta: MetaTable | None = None) -> bytes:
    """The calls list as UTF-8 CSV, safe to open in a spreadsheet.

    Columns are named as on screen (:data:`CSV_HEADERS`, and each metadata field's label
    when ``meta`` is given, e.g. "Duration (min)" for ``duration_s``, whose values are
    minutes). Text cells and column names that a spreadsheet would run as a formula
    (starting with ``=``, ``+``, ``-``, ``@``, tab or carriage return) get a leading
    apostrophe (:func:`talkthemes.text.csv_frame`); numbers are unchanged.
    """
    names = dict(CSV_HEADERS)
    if meta is not None:
        names.update({f: info.label for f, info in meta.fields.items() if f not in names})
    buf = io.StringIO()
    csv_frame(frame.rename(columns=names)).to_csv(buf, index=False)
    return buf.getvalue().encode("utf-8")
