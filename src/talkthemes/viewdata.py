"""The data behind the viewer and the report: plain frames, no Streamlit.

The Streamlit pages (``talkthemes/app/``) and the static report (:mod:`talkthemes.report`)
both read the workspace through this module, so every number they show is computed here
or below (versions, trends, metrics) and the pages only arrange it.

What it provides:

* :func:`readiness` — how far the workspace has got, and the one command to run next when
  a section cannot be shown yet (no workspace, nothing ingested, not prepared, no sweep,
  no version).
* :func:`load_sweep` / :func:`cell_themes` — a sweep's scored cells, its recommendation per
  family, and the top terms of the themes of any (family, K) cell.
* :func:`theme_layout` / :func:`theme_table` — the themes with their classical-MDS map
  coordinates on Jensen–Shannon distances (METHODS §6), coverage and names.
* :func:`load_metadata` / :func:`calls_table` — the transcripts a theme leads, filtered by
  share, date range and any metadata field, vectorised over the version's shares.
* :class:`TermHighlighter` / :func:`load_transcript` — a transcript's turns cut into
  (text, highlighted) segments for the theme's terms, and :func:`segments_html`, which
  builds HTML only from escaped pieces.
* :func:`trend_frame`, :func:`segment_frame`, :func:`movers_frame` — shares per week or
  month, per segment and between two periods, with bootstrap intervals
  (:mod:`talkthemes.trends`).

Highlighting terms in the original text
---------------------------------------
Terms are lemmas after filtering (``bill``, ``pay``) and phrases joined by an underscore
(``direct_debit``), while a transcript holds what was said ("Bills", "paid",
"direct-debit"). :class:`TermHighlighter` matches on the original text without changing
it: it splits the text into words (runs of letters and digits, as the prepare step does)
and keeps every character in between, so the segments always join back to the original
text. A word matches a term when any of its *keys* equals the term (or a phrase part):

1. the word in lower case;
2. its lemma from the lookup table the prepare step used (spaCy's lookup lemmas, when
   passed in as ``lemmas``), looked up as written and in lower case;
3. a small inflection tolerance for words of four letters or more (stems of at least
   three letters): the lower-case word
   without a plural or verb ending (``-s``, ``-es``, ``-ies``→``-y``, ``-ed``, ``-ing``,
   ``-ed``/``-ing``→``-e``, and a doubled final consonant before ``-ed``/``-ing``).

A single-word term highlights each matching word. A phrase highlights a run of words whose
keys match its parts in order, allowing up to ``max_gap`` other words between two parts
(stop words removed before phrases were joined, e.g. "pay *the* bill" for ``pay_bill``);
the whole run, gap words included, is highlighted; a run never crosses punctuation. Phrase
parts alone are not highlighted, so ``late_fee`` does not light up every "late".
"""

from __future__ import annotations

import datetime as dt
import html
import io
import json
import logging
import re
import shlex
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd

from talkthemes.charts import theme_name
from talkthemes.errors import InputError, NotReadyError
from talkthemes.workspace import Workspace

__all__ = [
    "CallFilter",
    "CellThemes",
    "FieldInfo",
    "MetaTable",
    "NextStep",
    "Readiness",
    "Segment",
    "SweepView",
    "TermHighlighter",
    "ThemeLayout",
    "TurnView",
    "calls_csv",
    "calls_table",
    "cell_themes",
    "excerpt",
    "load_metadata",
    "load_prep_vocabulary",
    "load_sweep",
    "load_transcript",
    "metadata_table",
    "movers_frame",
    "period_choices",
    "readiness",
    "scalar_columns",
    "segment_fields",
    "segment_frame",
    "segments_html",
    "theme_layout",
    "theme_names",
    "theme_table",
    "transcript_html",
    "trend_frame",
    "turn_views",
    "with_names",
]

log = logging.getLogger(__name__)

Segment = tuple[str, bool]
"""A piece of original text and whether it is highlighted."""

Need = Literal["workspace", "transcripts", "prep", "sweep", "version"]
Freq = Literal["week", "month"]

#: Most distinct values a text field may have to be offered as a pick list / segment.
MAX_CATEGORIES = 30
#: Most segments a comparison shows (the most frequent values; the rest are left out).
MAX_SEGMENTS = 12


# --------------------------------------------------------------------------- readiness


@dataclass(frozen=True)
class NextStep:
    """Why a section cannot be shown yet, and the one command that moves it forward."""

    stage: str
    message: str
    command: str


@dataclass(frozen=True)
class Readiness:
    """How far a workspace has got.

    Attributes
    ----------
    root : Path
    has_workspace : bool
    transcripts : int
        Stored transcripts.
    prepared : bool
        A current prep exists.
    sweep_id : int or None
        The latest sweep that has at least one finished cell.
    sweep_scored : bool
        That sweep's scored cells (``cells.parquet``) are on disk.
    version : int or None
        The current version.
    """

    root: Path
    has_workspace: bool
    transcripts: int = 0
    prepared: bool = False
    sweep_id: int | None = None
    sweep_scored: bool = False
    version: int | None = None

    def _ws_arg(self) -> str:
        return f"--workspace {shlex.quote(str(self.root))}"

    def _steps(self) -> list[tuple[bool, NextStep]]:
        w = self._ws_arg()
        return [
            (
                self.has_workspace,
                NextStep(
                    "workspace",
                    f"There is no workspace at {self.root} yet.",
                    f"talkthemes init {shlex.quote(str(self.root))}",
                ),
            ),
            (
                self.transcripts > 0,
                NextStep(
                    "transcripts",
                    "The workspace holds no transcripts yet.",
                    f"talkthemes ingest TRANSCRIPTS_FOLDER {w}",
                ),
            ),
            (
                self.prepared,
                NextStep(
                    "prep",
                    "The transcripts have not been prepared for modelling yet.",
                    f"talkthemes prepare {w}",
                ),
            ),
            (
                self.sweep_id is not None,
                NextStep(
                    "sweep",
                    "No sweep of topic counts has been run yet.",
                    f"talkthemes sweep {w}",
                ),
            ),
            (
                self.version is not None,
                NextStep(
                    "version",
                    "No version of themes has been published yet.",
                    f"talkthemes publish --recommended {w}",
                ),
            ),
        ]

    def blocker(self, need: Need = "version") -> NextStep | None:
        """The first missing stage a section needing ``need`` waits for, or None.

        A section needing a version is ready as soon as one is published (a version is
        self-contained); one needing a sweep as soon as a sweep has a finished cell.
        """
        order = ["workspace", "transcripts", "prep", "sweep", "version"]
        if need not in order:
            raise InputError(f"readiness: unknown need {need!r} (one of {', '.join(order)})")
        if not self.has_workspace:
            return self._steps()[0][1]
        if need == "version" and self.version is not None:
            return None
        if need == "sweep" and self.sweep_id is not None:
            return None
        for done, step in self._steps()[: order.index(need) + 1]:
            if not done:
                return step
        return None

    @property
    def next_step(self) -> NextStep | None:
        """The next command for the whole pipeline (None when a version is published)."""
        return self.blocker("version")


def readiness(ws: Workspace) -> Readiness:
    """Look at a workspace without changing it: what exists, what is missing.

    Parameters
    ----------
    ws : Workspace

    Returns
    -------
    Readiness
    """
    root = ws.root
    if not ws.exists() or not ws.db_path.exists():
        return Readiness(root=root, has_workspace=False)
    with ws.store() as store:
        n = store.count_transcripts()
        stages = store.stages()
        sweep_id = None
        sweep = store.get_sweep()
        if sweep is not None and store.cells(int(sweep["id"])):
            sweep_id = int(sweep["id"])
        current = store.current_version()
    scored = sweep_id is not None and (ws.sweeps_dir / str(sweep_id) / "cells.parquet").exists()
    version = None
    if current is not None and (ws.versions_dir / str(current["n"])).exists():
        version = int(current["n"])
    return Readiness(
        root=root,
        has_workspace=True,
        transcripts=n,
        prepared=stages["prepared"] is not None,
        sweep_id=sweep_id,
        sweep_scored=scored,
        version=version,
    )


# --------------------------------------------------------------------------- sweep


@dataclass
class SweepView:
    """A sweep as the Choose K section shows it.

    Attributes
    ----------
    sweep_id : int
    prep_hash : str
    folder : Path
        ``sweeps/<id>``.
    cells : DataFrame
        One row per finished cell: ``cell, family, k, seed``, its metrics and
        ``top_terms`` (term ids per theme).
    recommendations : dict of str to dict
        Per family, :class:`talkthemes.recommend.Recommendation` as a dict.
    scored : bool
        True when the scored cells (coherence, stability…) are on disk; False while a
        sweep is running or was interrupted (fit measures only).
    created_at : str
    """

    sweep_id: int
    prep_hash: str
    folder: Path
    cells: pd.DataFrame
    recommendations: dict[str, dict[str, Any]]
    scored: bool
    created_at: str

    @property
    def recommended(self) -> dict[str, int]:
        """Recommended K per family."""
        return {f: int(r["k"]) for f, r in self.recommendations.items()}

    @property
    def families(self) -> list[str]:
        """Families in the sweep, LDA first."""
        present = set(self.cells["family"])
        return [f for f in ("lda", "nmf") if f in present]

    def ks(self, family: str) -> list[int]:
        """Topic counts swept for a family."""
        return sorted(int(k) for k in set(self.cells.loc[self.cells["family"] == family, "k"]))


def load_sweep(ws: Workspace, sweep_id: int | None = None) -> SweepView:
    """Read a sweep (default: the latest) with its scored cells and recommendations.

    Raises
    ------
    NotReadyError
        When there is no sweep, or it has no finished cell yet.
    """
    with ws.store() as store:
        record = store.get_sweep(sweep_id)
        if record is None:
            raise NotReadyError("no sweep yet: run 'talkthemes sweep' first")
        raw = pd.DataFrame(store.cells(int(record["id"])))
    if raw.empty:
        raise NotReadyError(f"sweep {record['id']} has no finished cell yet")
    folder = ws.sweeps_dir / str(record["id"])
    path = folder / "cells.parquet"
    if path.exists():
        scored = pd.read_parquet(path)
        cells = scored.merge(raw[["cell", "top_terms"]], on="cell", how="left")
    else:
        cells = raw
    cells = cells.sort_values(["family", "k", "seed"]).reset_index(drop=True)
    return SweepView(
        sweep_id=int(record["id"]),
        prep_hash=str(record["prep_hash"]),
        folder=folder,
        cells=cells,
        recommendations=dict(record.get("recommendations") or {}),
        scored=path.exists(),
        created_at=str(record.get("created_at", "")),
    )


@dataclass
class CellThemes:
    """The themes of one sweep cell: ``frame`` has ``theme`` (1…K) and ``terms``."""

    cell: str
    family: str
    k: int
    seed: int
    frame: pd.DataFrame


def cell_themes(
    ws: Workspace,
    sweep: SweepView,
    family: str,
    k: int,
    *,
    n_terms: int = 8,
    vocabulary: Sequence[str] | None = None,
) -> CellThemes:
    """Top terms (by probability) of each theme of the (family, K) cell that would be
    published: the medoid seed, the one agreeing most with the other seeds.

    Parameters
    ----------
    ws : Workspace
    sweep : SweepView
    family : str
    k : int
    n_terms : int
        Terms per theme.
    vocabulary : sequence of str, optional
        The prep's vocabulary (read from ``prepared/<hash>/vocabulary.json`` if omitted).

    Raises
    ------
    InputError
        When the sweep has no such cell.
    NotReadyError
        When the prep's vocabulary is missing.
    """
    from talkthemes.sweep import seed_agreement
    from talkthemes.versions import pick_cell

    cells = sweep.cells
    if "top_terms" in cells.columns and cells["top_terms"].notna().all():
        cells = seed_agreement(cells)
    row = pick_cell(cells, k=int(k), family=family, cell=None)
    if vocabulary is None:
        vocabulary = load_prep_vocabulary(ws, sweep.prep_hash)
    path = sweep.folder / "topics" / f"{row['cell']}.npy"
    if path.exists():
        topics = np.load(path, allow_pickle=False)
        order = np.argsort(-topics, axis=1, kind="stable")[:, :n_terms]
    else:  # the cell's recorded top terms (already ranked by probability)
        order = np.asarray(row["top_terms"], dtype=np.int64)[:, :n_terms]
    terms = [", ".join(vocabulary[int(i)].replace("_", " ") for i in r) for r in order]
    frame = pd.DataFrame({"theme": np.arange(1, len(terms) + 1), "terms": terms})
    return CellThemes(str(row["cell"]), family, int(row["k"]), int(row["seed"]), frame)


def load_prep_vocabulary(ws: Workspace, prep_hash: str) -> list[str]:
    """The vocabulary of a prep (``prepared/<hash>/vocabulary.json``)."""
    path = ws.prepared_dir / prep_hash / "vocabulary.json"
    if not path.exists():
        raise NotReadyError(f"{path} is missing: run 'talkthemes prepare' again")
    return [str(t) for t in json.loads(path.read_text(encoding="utf-8"))]


# --------------------------------------------------------------------------- themes


@dataclass(frozen=True, eq=False)
class ThemeLayout:
    """Map coordinates of a version's themes (by row) and the share of structure kept."""

    x: np.ndarray
    y: np.ndarray
    explained: float


def theme_layout(topic_terms: np.ndarray) -> ThemeLayout:
    """Classical MDS (Torgerson 1952; Gower 1966) on base-2 Jensen–Shannon distances.

    Parameters
    ----------
    topic_terms : ndarray (K, V)

    Returns
    -------
    ThemeLayout
        ``explained`` is the share of the distance structure the two axes keep.
    """
    from talkthemes.metrics.layout import classical_mds, js_distance_matrix

    result = classical_mds(js_distance_matrix(topic_terms), 2)
    return ThemeLayout(result.coordinates[:, 0], result.coordinates[:, 1], result.explained)


def theme_table(version: Any, layout: ThemeLayout, *, lam: float = 0.6) -> pd.DataFrame:
    """One row per theme of a version, in the version's row order.

    Columns: ``theme_id, position, name, label, note, hidden, status, coverage,
    mean_share, x, y, top_terms`` (eight terms by relevance at ``lam``, as text).
    """
    names = theme_names(version)
    cov, mean = version.coverage(), version.mean_share()
    rows = []
    for i, t in enumerate(version.themes):
        rows.append(
            {
                "theme_id": int(t["theme_id"]),
                "position": i,
                "name": names[i],
                "label": t["label"],
                "note": t["note"],
                "hidden": bool(t["hidden"]),
                "status": t["status"],
                "coverage": float(cov[i]),
                "mean_share": float(mean[i]),
                "x": float(layout.x[i]),
                "y": float(layout.y[i]),
                "top_terms": ", ".join(
                    w.replace("_", " ") for w in version.top_terms(i, 8, lam=lam)
                ),
            }
        )
    return pd.DataFrame(rows)


def theme_names(version: Any) -> list[str]:
    """Each theme's display name: its label, or its three top terms until labelled.

    The same names as ``Version.names()``; the top terms are worked out once per loaded
    version (kept in the version's private cache), the labels are read each time.
    """
    cache = getattr(version, "_cache", None)
    top3 = cache.get("viewdata.top3") if cache is not None else None
    if top3 is None:
        top3 = [version.top_terms(i, 3) for i in range(version.k)]
        if cache is not None:
            cache["viewdata.top3"] = top3
    return [theme_name(t["label"], top3[i]) for i, t in enumerate(version.themes)]


def with_names(frame: pd.DataFrame, version: Any) -> pd.DataFrame:
    """Refresh ``name`` and ``hidden`` of a per-theme frame from the version's labels.

    Frames keyed by ``theme_id`` are cached by the viewer; labels change at any time.
    """
    names = dict(zip(version.theme_ids, theme_names(version), strict=True))
    hidden = {int(t["theme_id"]): bool(t["hidden"]) for t in version.themes}
    out = frame.copy()
    out["name"] = out["theme_id"].map(names).astype(str)
    out["hidden"] = out["theme_id"].map(hidden).astype(bool)
    return out


# --------------------------------------------------------------------------- metadata


@dataclass(frozen=True)
class FieldInfo:
    """A metadata field: its kind and what a filter can offer.

    ``kind`` is ``"date"``, ``"number"``, ``"category"`` (at most :data:`MAX_CATEGORIES`
    distinct values) or ``"text"``. ``values`` lists the categories (most frequent
    first); ``lo``/``hi`` bound numbers and dates.
    """

    name: str
    kind: str
    values: tuple[str, ...] = ()
    lo: Any = None
    hi: Any = None
    missing: int = 0


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
    """Build a :class:`MetaTable` from ``{transcript id: {field: value}}``."""
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


def load_metadata(ws: Workspace, doc_ids: Sequence[str]) -> MetaTable:
    """Read every transcript's metadata once and align it with ``doc_ids``."""
    with ws.store() as store:
        metadata = store.metadata_for(None)
    return metadata_table(doc_ids, metadata)


# --------------------------------------------------------------------------- calls


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
    version: Any, meta: MetaTable, position: int, flt: CallFilter | None = None
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

    Returns
    -------
    DataFrame
        ``transcript_id, share`` (the theme's share, 0–1), ``lead_theme`` (name of the
        transcript's lead theme), ``lead_share``, then one column per metadata field;
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
            "lead_share": np.asarray(version.lead_share(), dtype=np.float64)[rows],
        }
    )
    extra = meta.frame.iloc[rows].reset_index(drop=True)
    return pd.concat([out, extra], axis=1)


_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def calls_csv(frame: pd.DataFrame) -> bytes:
    """The calls list as UTF-8 CSV, safe to open in a spreadsheet.

    Text cells that a spreadsheet would run as a formula (starting with ``=``, ``+``,
    ``-``, ``@``, tab or carriage return) get a leading apostrophe; numbers are unchanged.
    """
    out = frame.copy()
    for col in out.columns:
        if out[col].dtype == object or pd.api.types.is_string_dtype(out[col].dtype):
            out[col] = out[col].map(
                lambda v: "'" + v if isinstance(v, str) and v.startswith(_FORMULA_START) else v
            )
    buf = io.StringIO()
    out.to_csv(buf, index=False)
    return buf.getvalue().encode("utf-8")


# --------------------------------------------------------------------------- highlighting

_WORD = re.compile(r"[^\W_]+")  # letters and digits; "_" and punctuation separate words
_VOWELS = frozenset("aeiouy")
_BREAK = re.compile(r"[,.;:!?…()\[\]\n]")


def _inflection_keys(word: str) -> set[str]:
    """Possible base forms of a lower-case word (a simple, documented tolerance)."""
    keys = {word}
    if len(word) < 4:
        return keys
    if word.endswith("ies"):
        keys.add(word[:-3] + "y")
    if word.endswith("es"):
        keys.add(word[:-2])
    if word.endswith("s") and not word.endswith("ss"):
        keys.add(word[:-1])
    for suffix in ("ed", "ing"):
        if word.endswith(suffix) and len(word) - len(suffix) >= 3:
            stem = word[: -len(suffix)]
            keys.update({stem, stem + "e"})
            if len(stem) >= 3 and stem[-1] == stem[-2] and stem[-1] not in _VOWELS:
                keys.add(stem[:-1])  # stopped → stop, planning → plan
    return keys


class TermHighlighter:
    """Find a theme's terms in original transcript text (see the module notes).

    Parameters
    ----------
    terms : iterable of str
        Vocabulary terms: lemmas, and phrases joined by ``_``.
    lemmas : mapping of str to str, optional
        Lookup lemma table (word as written → lemma), e.g.
        :func:`talkthemes.prepare.lemmas.load_lemma_table`.
    max_gap : int
        Most other words allowed between two parts of a phrase.
    """

    def __init__(
        self,
        terms: Iterable[str],
        *,
        lemmas: Mapping[str, str] | None = None,
        max_gap: int = 2,
    ) -> None:
        self.terms = [t for t in (str(t).strip().lower() for t in terms) if t]
        self.lemmas = lemmas or {}
        self.max_gap = int(max_gap)
        self.unigrams = {t for t in self.terms if "_" not in t}
        self.phrases = [tuple(p for p in t.split("_") if p) for t in self.terms if "_" in t]
        self.phrases = [p for p in self.phrases if p]
        self._vocab = self.unigrams | {p for ph in self.phrases for p in ph}
        self._cache: dict[str, frozenset[str]] = {}

    def keys(self, word: str) -> frozenset[str]:
        """The forms of ``word`` compared with terms (only those that are term parts)."""
        hit = self._cache.get(word)
        if hit is not None:
            return hit
        lower = word.lower()
        keys = _inflection_keys(lower)
        for form in (word, lower):
            lemma = self.lemmas.get(form)
            if lemma:
                keys.add(lemma.lower())
        hit = frozenset(keys & self._vocab)
        self._cache[word] = hit
        return hit

    def spans(self, text: str) -> list[tuple[int, int]]:
        """Character spans ``[start, end)`` of highlighted runs, sorted, not overlapping."""
        words = [(m.start(), m.end(), m.group()) for m in _WORD.finditer(text)]
        keys = [self.keys(w) for _, _, w in words]
        marked: list[tuple[int, int]] = []
        for i, k in enumerate(keys):
            if k & self.unigrams:
                marked.append((words[i][0], words[i][1]))
        for phrase in self.phrases:
            i = 0
            while i < len(words):
                end = self._match_phrase(text, words, keys, i, phrase)
                if end is None:
                    i += 1
                    continue
                marked.append((words[i][0], words[end][1]))
                i = end + 1
        return _merge_spans(marked)

    def _match_phrase(
        self,
        text: str,
        words: list[tuple[int, int, str]],
        keys: list[frozenset[str]],
        i: int,
        phrase: tuple[str, ...],
    ) -> int | None:
        """Index of the last word of ``phrase`` starting at word ``i``, or None."""
        if phrase[0] not in keys[i]:
            return None
        at = i
        for part in phrase[1:]:
            nxt = None
            for j in range(at + 1, min(len(keys), at + 2 + self.max_gap)):
                if _BREAK.search(text, words[at][1], words[j][0]):
                    break  # a phrase does not run across punctuation
                if part in keys[j]:
                    nxt = j
                    break
            if nxt is None:
                return None
            at = nxt
        return at

    def segments(self, text: str) -> list[Segment]:
        """``text`` cut into (piece, highlighted) pairs that join back to ``text``."""
        out: list[Segment] = []
        pos = 0
        for start, end in self.spans(text):
            if start > pos:
                out.append((text[pos:start], False))
            out.append((text[start:end], True))
            pos = end
        if pos < len(text) or not out:
            out.append((text[pos:], False))
        return out

    def count(self, text: str) -> int:
        """Number of highlighted runs in ``text``."""
        return len(self.spans(text))


def _merge_spans(spans: list[tuple[int, int]]) -> list[tuple[int, int]]:
    merged: list[tuple[int, int]] = []
    for start, end in sorted(spans):
        if merged and start <= merged[-1][1]:
            merged[-1] = (merged[-1][0], max(end, merged[-1][1]))
        else:
            merged.append((start, end))
    return merged


@dataclass(frozen=True)
class TurnView:
    """One turn ready to show: who spoke, when, and the text cut into segments."""

    seq: int
    speaker: str
    role: str
    start: float | None
    segments: list[Segment]

    @property
    def hits(self) -> int:
        """Highlighted runs in the turn."""
        return sum(1 for _, h in self.segments if h)


def turn_views(turns: Iterable[Any], highlighter: TermHighlighter) -> list[TurnView]:
    """Cut stored turns (:class:`talkthemes.store.StoredTurn`) into highlighted segments."""
    return [
        TurnView(int(t.seq), str(t.speaker), str(t.role), t.start, highlighter.segments(t.text))
        for t in turns
    ]


def load_transcript(ws: Workspace, tid: str, highlighter: TermHighlighter) -> list[TurnView]:
    """A stored transcript's turns with the highlighter's terms marked.

    Raises
    ------
    InputError
        When no transcript has this id.
    """
    with ws.store() as store:
        turns = store.get_turns(tid)
    if not turns:
        raise InputError(f"there is no transcript {tid!r} in the workspace")
    return turn_views(turns, highlighter)


def segments_html(segments: Iterable[Segment], *, mark_class: str = "tt-hit") -> str:
    """HTML for segments, built only from :func:`html.escape`-d pieces.

    Highlighted pieces are wrapped in ``<mark class="...">``; nothing of the text is ever
    interpreted as markup.
    """
    cls = html.escape(mark_class, quote=True)
    return "".join(
        f'<mark class="{cls}">{html.escape(text)}</mark>' if hit else html.escape(text)
        for text, hit in segments
    )


def _clock(seconds: float | None) -> str:
    if seconds is None or not np.isfinite(seconds):
        return ""
    s = int(seconds)
    return (
        f"{s // 3600:d}:{s % 3600 // 60:02d}:{s % 60:02d}"
        if s >= 3600
        else f"{s // 60}:{s % 60:02d}"
    )


_ROLE_COLOURS = {"agent": "#0072B2", "customer": "#D55E00", "unknown": "#6b6b6b"}


def transcript_html(turns: Sequence[TurnView]) -> str:
    """A transcript as HTML: one block per turn with speaker, time and text.

    Every piece of transcript text and every speaker label is escaped; the only markup
    is ours (``div``, ``span``, ``mark`` with inline styles).
    """
    parts = ['<div class="tt-transcript" style="line-height:1.55;font-size:0.95rem">']
    for t in turns:
        colour = _ROLE_COLOURS.get(t.role, _ROLE_COLOURS["unknown"])
        when = _clock(t.start)
        parts.append(
            '<div class="tt-turn" style="margin:0 0 0.6rem 0">'
            f'<span class="tt-speaker" style="font-weight:600;color:{colour}">'
            f"{html.escape(t.speaker or t.role)}</span>"
            + (
                f' <span style="color:#6b6b6b;font-size:0.8rem">{html.escape(when)}</span>'
                if when
                else ""
            )
            + f'<div class="tt-text">{segments_html(t.segments)}</div></div>'
        )
    parts.append("</div>")
    return "".join(parts)


def excerpt(turns: Sequence[TurnView], *, max_chars: int = 280) -> tuple[str, list[Segment]]:
    """The turn with the most highlighted terms, trimmed around its first highlight.

    Returns
    -------
    speaker : str
    segments : list of Segment
        At most about ``max_chars`` characters, with "…" where text was cut.
    """
    if not turns:
        return "", []
    best = max(turns, key=lambda t: (t.hits, -t.seq))
    text = "".join(s for s, _ in best.segments)
    if len(text) <= max_chars:
        return best.speaker or best.role, list(best.segments)
    first = 0
    pos = 0
    for s, hit in best.segments:
        if hit:
            first = pos
            break
        pos += len(s)
    start = max(0, first - max_chars // 4)
    if start > 0:
        space = text.rfind(" ", 0, start)
        start = space + 1 if space >= 0 else start
    end = min(len(text), start + max_chars)
    if end < len(text):
        space = text.rfind(" ", start, end)
        end = space if space > start else end
    out: list[Segment] = [("… ", False)] if start > 0 else []
    pos = 0
    for s, hit in best.segments:
        a, b = max(pos, start), min(pos + len(s), end)
        if a < b:
            out.append((s[a - pos : b - pos], hit))
        pos += len(s)
    if end < len(text):
        out.append((" …", False))
    return best.speaker or best.role, out


# --------------------------------------------------------------------------- over time


def _require_dates(meta: MetaTable) -> pd.Series:
    if meta.dates is None:
        raise NotReadyError(
            "no date in the transcripts' metadata: ingest a manifest with a date column "
            "(talkthemes ingest FILES --manifest MANIFEST.csv)"
        )
    return meta.dates


def _theme_args(version: Any) -> dict[str, Any]:
    return {"theme_ids": version.theme_ids, "names": theme_names(version)}


def trend_frame(
    version: Any, meta: MetaTable, freq: Freq, *, n_boot: int = 500, seed: int = 0
) -> pd.DataFrame:
    """Each theme's share of the transcripts it leads per week or month, 95% interval.

    Returns the frame of :func:`talkthemes.trends.lead_share_by_period` (every period from
    the first to the last, gaps included) plus ``hidden``.
    """
    from talkthemes.trends import lead_share_by_period, period_range, period_start

    periods = period_start(_require_dates(meta), freq)
    frame = lead_share_by_period(
        version.lead(),
        periods,
        version.k,
        n_boot=n_boot,
        seed=seed,
        all_periods=period_range(periods, freq),
        **_theme_args(version),
    )
    return with_names(frame, version)


def period_choices(meta: MetaTable, freq: Freq) -> list[pd.Timestamp]:
    """Period starts (weeks or months) that hold at least one transcript, oldest first."""
    from talkthemes.trends import period_start

    periods = period_start(_require_dates(meta), freq).dropna()
    return [pd.Timestamp(p) for p in sorted(periods.unique())]


def segment_fields(meta: MetaTable) -> list[str]:
    """Fields a segment comparison can use: categories and numbers (in quartile bins)."""
    return [f for f, i in meta.fields.items() if i.kind in ("category", "number")]


def _segment_values(meta: MetaTable, name: str) -> pd.Series:
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


def segment_frame(
    version: Any, meta: MetaTable, name: str, *, n_boot: int = 500, seed: int = 0
) -> pd.DataFrame:
    """Each theme's share of the transcripts it leads per value of a metadata field.

    Category fields use their :data:`MAX_SEGMENTS` most frequent values; number fields are
    cut into quartile bins labelled ``lo–hi``. Returns the frame of
    :func:`talkthemes.trends.lead_share_by_segment` plus ``hidden``.
    """
    from talkthemes.trends import lead_share_by_segment

    values = _segment_values(meta, name)
    frame = lead_share_by_segment(
        version.lead(), values, version.k, n_boot=n_boot, seed=seed, **_theme_args(version)
    )
    return with_names(frame, version)


def movers_frame(
    version: Any,
    meta: MetaTable,
    freq: Freq,
    before: pd.Timestamp,
    after: pd.Timestamp,
    *,
    n_boot: int = 500,
    seed: int = 0,
) -> pd.DataFrame:
    """Change of each theme's share from period ``before`` to period ``after``, ranked.

    Returns the frame of :func:`talkthemes.trends.movers` plus ``hidden``.

    Raises
    ------
    InputError
        When the two periods are the same or one holds no transcript.
    """
    from talkthemes.trends import movers, period_start

    periods = period_start(_require_dates(meta), freq)
    a, b = pd.Timestamp(before), pd.Timestamp(after)
    if a == b:
        raise InputError("movers: pick two different periods")
    mask_a = (periods == a).to_numpy(dtype=bool, na_value=False)
    mask_b = (periods == b).to_numpy(dtype=bool, na_value=False)
    frame = movers(
        version.lead(), mask_a, mask_b, version.k, n_boot=n_boot, seed=seed, **_theme_args(version)
    )
    return with_names(frame, version)


def scalar_columns(frame: pd.DataFrame) -> pd.DataFrame:
    """The columns of a frame that hold single values (drops per-topic lists and the like)."""
    keep = [
        c
        for c in frame.columns
        if not frame[c].map(lambda v: isinstance(v, (list, tuple, np.ndarray, dict))).any()
    ]
    return frame[keep]
