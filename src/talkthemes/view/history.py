"""The data behind Refresh history: the versions' timeline, what each refresh changed.

Inputs are what the store and a version's ``drift.json`` hold
(:meth:`talkthemes.store.Store.versions`, :meth:`~talkthemes.store.Store.themes`,
:meth:`~talkthemes.store.Store.retired_themes`, :func:`talkthemes.drift.drift_report`);
outputs are plain frames and dataclasses the page shows (the timeline is drawn by
:func:`talkthemes.charts.timeline_chart`). Only :func:`load_drift` reads a file. Theme names
are the labels as they are now, else the suggested names the report or the version keeps
(else three top terms), so a label edited after a refresh shows here too.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from talkthemes.errors import InputError
from talkthemes.privacy import mask_text
from talkthemes.store.records import RetiredTheme, ThemeRecord, VersionRecord
from talkthemes.versions.naming import theme_name
from talkthemes.workspace import Workspace

__all__ = [
    "TIMELINE_COLUMNS",
    "AlertCard",
    "ThemeChange",
    "VersionChanges",
    "alert_cards",
    "load_drift",
    "new_theme_examples",
    "report_suggested",
    "report_top_terms",
    "version_changes",
    "versions_timeline",
]

#: The timeline's columns (what :func:`talkthemes.charts.timeline_chart` reads).
TIMELINE_COLUMNS = [
    "n",
    "created_at",
    "current",
    "kind",
    "family",
    "k",
    "previous_version",
    "new_transcripts",
]


def versions_timeline(versions: Sequence[VersionRecord]) -> pd.DataFrame:
    """One row per version, oldest first, for the timeline.

    Parameters
    ----------
    versions : sequence of VersionRecord
        As :meth:`talkthemes.store.Store.versions` returns them.

    Returns
    -------
    DataFrame
        ``n, created_at`` (naive local datetime), ``current`` (bool), ``kind``
        (``"refresh"`` or ``"publish"``), ``family`` (upper case), ``k``,
        ``previous_version`` and ``new_transcripts`` (``<NA>`` for a direct publish).

    Raises
    ------
    InputError
        When a version's ``created_at`` is not an ISO date-time.
    """
    rows = []
    for v in versions:
        refresh = v.refresh
        try:
            created = pd.Timestamp(v.created_at)
        except ValueError as exc:
            raise InputError(
                f"version {v.n!r}: created_at {v.created_at!r} is not an ISO date-time"
            ) from exc
        if created.tzinfo is not None:
            created = created.tz_convert(None)
        rows.append(
            {
                "n": v.n,
                "created_at": created,
                "current": v.current,
                "kind": "publish" if refresh is None else "refresh",
                "family": (v.family or "").upper(),
                "k": pd.NA if v.k is None else v.k,
                "previous_version": _or_na(None if refresh is None else refresh.previous_version),
                "new_transcripts": _or_na(None if refresh is None else refresh.new_transcripts),
            }
        )
    frame = pd.DataFrame(rows, columns=TIMELINE_COLUMNS)
    frame["created_at"] = pd.to_datetime(frame["created_at"])
    for col in ("k", "previous_version", "new_transcripts"):
        frame[col] = frame[col].astype("Int64")
    return frame.sort_values("n").reset_index(drop=True)


@dataclass(frozen=True)
class ThemeChange:
    """One theme of a version's changes.

    Attributes
    ----------
    theme_id : int
    name : str
        Its label, else its suggested name, else its three top terms.
    status : str
        ``carried``, ``new`` or ``retired``.
    detail : str
        One plain sentence: what it continues, how far it moved, its closest match.
    flags : list of str
        Possible split or merge, in words.
    alert : str
        What the refresh's alerts said of it ("alerted as new", "split of #3, not
        alerted", "rose significantly", …); "" when nothing.
    """

    theme_id: int
    name: str
    status: str
    detail: str
    flags: list[str] = field(default_factory=list)
    alert: str = ""


@dataclass(frozen=True)
class VersionChanges:
    """What a version carried over, added and retired."""

    carried: list[ThemeChange]
    new: list[ThemeChange]
    retired: list[ThemeChange]

    def ids(self, status: str) -> set[int]:
        """Theme ids with a status (``carried``, ``new`` or ``retired``)."""
        return {t.theme_id for t in getattr(self, status)}

    @property
    def flagged(self) -> list[ThemeChange]:
        """Themes flagged as a possible split or merge."""
        return [t for t in [*self.carried, *self.new] if t.flags]


def _or_na(value: Any) -> Any:
    return pd.NA if value is None else value


def _alert_note(theme: ThemeRecord) -> str:
    """What the refresh's alerts said of a theme, in words ("" when nothing): read from
    the keys the refresh recorded in the theme's document (``verdict``, ``split_of``,
    ``alert``, ``change``), which have no record field of their own."""
    info = theme.info
    verdict = info.get("verdict")
    if verdict == "new":
        return "alerted as new"
    if verdict == "split" and info.get("split_of") is not None:
        return f"split of #{int(info['split_of'])}, not alerted"
    if verdict:
        return "not alerted (" + str(verdict).replace("_", " ") + ")"
    if info.get("alert") and info.get("change") in ("rise", "fall"):
        return "rose significantly" if info["change"] == "rise" else "fell significantly"
    return ""


def _flags(theme: ThemeRecord) -> list[str]:
    out = []
    if theme.possible_split_of:
        out.append(
            "possibly split from previous theme "
            + ", ".join(f"#{i}" for i in theme.possible_split_of)
        )
    if theme.possible_merge_of:
        out.append(
            "possibly a merge of previous themes "
            + ", ".join(f"#{i}" for i in theme.possible_merge_of)
        )
    return out


def _name(
    label: str, terms: Sequence[str] | None, theme_id: int, suggested: str | None = None
) -> str:
    if (label or "").strip():
        return label.strip()
    if suggested:
        return suggested
    if terms:
        return theme_name(label, list(terms))
    return f"theme #{theme_id}"


def report_suggested(report: Mapping[str, Any] | None) -> dict[int, str]:
    """Theme id → suggested name of every theme of a drift report not labelled when the
    report was made (the report's name for it is then its suggested name)."""
    if not report:
        return {}
    return {
        int(t["theme_id"]): str(t["name"])
        for t in report.get("themes", [])
        if t.get("name") and not str(t.get("label") or "").strip()
    }


def version_changes(
    themes: Sequence[ThemeRecord],
    retired: Sequence[RetiredTheme],
    top_terms: Mapping[int, Sequence[str]],
    suggested: Mapping[int, str] | None = None,
) -> VersionChanges:
    """Split a version's themes into carried, new and retired, with names and details.

    Parameters
    ----------
    themes : sequence of ThemeRecord
        :meth:`talkthemes.store.Store.themes` of the version.
    retired : sequence of RetiredTheme
        :meth:`talkthemes.store.Store.retired_themes` of the version.
    top_terms : mapping of int to sequence of str
        Theme id → top terms, most probable first (from the drift report or the
        version); a retired theme's own recorded top terms are used when missing here.
    suggested : mapping of int to str, optional
        Theme id → suggested name (:func:`report_suggested`, or the version's), shown for
        a theme without a label; else its three top terms.

    Returns
    -------
    VersionChanges
        Each list in theme-id order.
    """
    suggested = suggested or {}
    carried, new, gone = [], [], []
    for t in themes:
        tid = t.theme_id
        name = _name(t.label, top_terms.get(tid), tid, suggested.get(tid))
        if t.status == "carried":
            dist = t.distance
            detail = (
                f"kept its id; its words moved by {dist:.3f} (Jensen–Shannon distance)"
                if dist is not None
                else "kept its id"
            )
            carried.append(ThemeChange(tid, name, "carried", detail, _flags(t), _alert_note(t)))
        elif t.status == "new":
            near = t.nearest_previous
            detail = (
                f"closest previous theme #{near.theme_id} ({near.name}) at distance "
                f"{near.distance:.3f}"
                if near is not None
                else "no previous version to compare with"
            )
            new.append(ThemeChange(tid, name, "new", detail, _flags(t), _alert_note(t)))
        else:
            raise InputError(f"theme {tid}: status {t.status!r} is not 'carried' or 'new'")
    for r in retired:
        tid = r.theme_id
        terms = top_terms.get(tid) or r.top_terms
        near = r.nearest_new
        detail = (
            f"closest new theme #{near.theme_id} at distance {near.distance:.3f}"
            if near is not None
            else "no close theme in this version"
        )
        gone.append(ThemeChange(tid, _name(r.label, terms, tid), "retired", detail))

    def order(items: list[ThemeChange]) -> list[ThemeChange]:
        return sorted(items, key=lambda c: c.theme_id)

    return VersionChanges(order(carried), order(new), order(gone))


def report_top_terms(report: Mapping[str, Any] | None) -> dict[int, list[str]]:
    """Theme id → top terms of every theme and retired theme in a drift report."""
    if not report:
        return {}
    return {
        int(t["theme_id"]): list(t.get("top_terms") or [])
        for t in [*report.get("themes", []), *report.get("retired", [])]
    }


def new_theme_examples(
    report: Mapping[str, Any], labels: Mapping[int, str] | None = None, *, masked: bool = True
) -> pd.DataFrame:
    """The new transcripts that best show each new theme, from a drift report.

    Parameters
    ----------
    report : mapping
        A drift report (:func:`talkthemes.drift.drift_report`).
    labels : mapping of int to str, optional
        Current labels by theme id (the report's names are those at refresh time).
    masked : bool
        Mask personal data in the excerpts (:func:`talkthemes.privacy.mask_text`); pass
        False only where the workspace allows the original text.

    Returns
    -------
    DataFrame
        ``theme_id, theme, transcript_id, share, excerpt``: one row per example, new
        themes in id order, examples by decreasing share. Text is not escaped (the page
        escapes it).
    """
    labels = labels or {}
    suggested = report_suggested(report)
    rows = []
    for t in sorted(report.get("themes", []), key=lambda t: int(t["theme_id"])):
        if t.get("status") != "new":
            continue
        tid = int(t["theme_id"])
        name = _name(labels.get(tid, t.get("label", "")), t.get("top_terms"), tid,
                     suggested.get(tid))  # fmt: skip
        for e in sorted(t.get("examples") or [], key=lambda e: -float(e["share"])):
            rows.append(
                {
                    "theme_id": tid,
                    "theme": name,
                    "transcript_id": str(e["transcript_id"]),
                    "share": float(e["share"]),
                    "excerpt": mask_text(str(e.get("excerpt", "")))
                    if masked
                    else str(e.get("excerpt", "")),
                }
            )
    return pd.DataFrame(rows, columns=["theme_id", "theme", "transcript_id", "share", "excerpt"])


def load_drift(ws: Workspace, n: int) -> dict[str, Any] | None:
    """Version ``n``'s ``drift.json``, or None when the version has none (not a refresh).

    Raises
    ------
    InputError
        When the file is not valid JSON or lacks the report's parts.
    """
    path = ws.versions_dir / str(n) / "drift.json"
    if not path.exists():
        return None
    try:
        report = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"{path}: cannot be read as JSON: {exc}") from exc
    if not isinstance(report, dict):
        raise InputError(f"{path}: a drift report must be a JSON object")
    missing = [k for k in ("themes", "retired", "counts") if k not in report]
    if missing:
        raise InputError(f"{path}: the drift report lacks {', '.join(missing)}")
    return report


@dataclass(frozen=True)
class AlertCard:
    """One alert of a refresh, explained (from the drift report's ``alerts`` block).

    Attributes
    ----------
    kind : str
        ``new``, ``riser`` or ``faller``.
    theme_id : int
    name : str
        Its label as it is now, else its suggested name, else its three top terms.
    size : str
        Transcripts it leads among the new ones, in words.
    growth : str
        Its share of new against earlier transcripts, the ratio and its interval.
    top_terms : list of str
    evidence : list of (bool, str)
        Each piece of evidence: whether it held, and what it says.
    examples : list of (str, str)
        ``(transcript id, sentence)``, scrubbed when the prep scrubs.
    """

    kind: str
    theme_id: int
    name: str
    size: str
    growth: str
    top_terms: list[str]
    evidence: list[tuple[bool, str]]
    examples: list[tuple[str, str]]


def _share(x: Any) -> str:
    return "–" if x is None else f"{100 * float(x):.1f}%"


def _card(
    kind: str,
    t: Mapping[str, Any],
    name: str,
    evidence: list[tuple[bool, str]],
    *,
    masked: bool,
) -> AlertCard:
    g = t.get("growth") or {}
    enough = min(int(g.get("calls_new", 0)), int(g.get("calls_earlier", 0))) >= 5
    ratio = (
        f" (×{g['ratio']:.2f}, 95% interval {g['ratio_lo']:.2f}–{g['ratio_hi']:.2f})"
        if g.get("ratio") is not None and enough
        else ""
    )
    return AlertCard(
        kind=kind,
        theme_id=int(t["theme_id"]),
        name=name,
        size=(
            f"leads {int(g.get('calls_new', 0)):,} of {int(g.get('new_transcripts', 0)):,} new "
            f"transcripts ({_share(g.get('share_new'))})"
        ),
        growth=(
            f"{_share(g.get('share_new'))} of new transcripts against "
            f"{_share(g.get('share_earlier'))} of earlier ones{ratio}"
        ),
        top_terms=list(t.get("top_terms") or []),
        evidence=evidence,
        examples=[
            (
                str(e["transcript_id"]),
                mask_text(str(e["sentence"])) if masked else str(e["sentence"]),
            )
            for e in t.get("examples") or []
        ],
    )


def alert_cards(
    report: Mapping[str, Any] | None,
    labels: Mapping[int, str] | None = None,
    *,
    masked: bool = True,
) -> list[AlertCard]:
    """The alerts of a drift report, each explained: new themes alerted, then risers, then
    fallers (empty for a report written before alerts existed).

    Parameters
    ----------
    report : mapping or None
        A drift report with an ``alerts`` block (:func:`talkthemes.versions.alerts.with_alerts`).
    labels : mapping of int to str, optional
        Current labels by theme id.
    masked : bool
        Mask personal data in the example sentences (:func:`talkthemes.privacy.mask_text`;
        they were scrubbed when the refresh wrote them, this also masks names and
        addresses); pass False only where the workspace allows the original text.
    """
    block = (report or {}).get("alerts")
    if not block:
        return []
    labels = labels or {}
    suggested = report_suggested(report)
    cards = []
    for t in block.get("new_themes", []):
        if t.get("alert"):
            tid = int(t["theme_id"])
            evidence = [(bool(e["held"]), str(e["text"])) for e in t.get("evidence", [])]
            name = _name(labels.get(tid, ""), t.get("top_terms"), tid, suggested.get(tid))
            cards.append(_card("new", t, name, evidence, masked=masked))
    rules = block.get("rules") or {}
    by_id = {int(t["theme_id"]): t for t in block.get("changes", [])}
    for kind, ids in (("riser", block.get("rise", [])), ("faller", block.get("fall", []))):
        for tid in ids:
            t = by_id[int(tid)]
            text = str(t.get("text", ""))
            evidence = [
                (True, text),
                (
                    True,
                    f"significant at a false discovery rate of {rules.get('change_fdr', '–')} "
                    f"and beyond ×{rules.get('change_min_ratio', '–')} (or its inverse)",
                ),
            ]
            if t.get("includes"):
                evidence.append(
                    (True, "counted with its split themes " + ", ".join(map(str, t["includes"])))
                )
            name = _name(
                labels.get(int(tid), ""), t.get("top_terms"), int(tid), suggested.get(int(tid))
            )
            cards.append(_card(kind, t, name, evidence, masked=masked))
    return cards
