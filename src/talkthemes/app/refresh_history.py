"""Refresh history: the versions on a timeline and, for one version, what its refresh
carried over, added and retired, how far the themes moved, and the new themes' calls."""

from __future__ import annotations

import shlex
from typing import Any

import pandas as pd
import streamlit as st

from talkthemes.app import _shared
from talkthemes.charts.drift import drift_chart
from talkthemes.charts.history import timeline_chart
from talkthemes.errors import TalkthemesError
from talkthemes.store.records import VersionRecord
from talkthemes.text import md_inline, percent
from talkthemes.versions.drift import drift_frame
from talkthemes.view.history import (
    AlertCard,
    ThemeChange,
    alert_cards,
    load_drift,
    new_theme_examples,
    report_suggested,
    report_top_terms,
    version_changes,
    versions_timeline,
)
from talkthemes.view.readiness import NextStep
from talkthemes.view.transcript import original_allowed
from talkthemes.workspace import Workspace

PICK = "history_version"
STATUS_TEXT = {
    "carried": ("Carried", "kept their id, label and note"),
    "new": ("New", "appeared in this version"),
    "retired": ("Retired", "no longer found"),
}


@st.cache_data(show_spinner=False, max_entries=8)
def _drift(root: str, n: int, stamp: int) -> dict[str, Any] | None:
    return load_drift(Workspace(root), n)


@st.cache_data(show_spinner=False, max_entries=8)
def _drift_spec(report: dict[str, Any]) -> dict[str, Any]:
    return drift_chart(drift_frame(report)).to_dict()


@st.cache_data(show_spinner=False, max_entries=4)
def _timeline_spec(timeline: pd.DataFrame) -> dict[str, Any]:
    return timeline_chart(timeline).to_dict()


def _version_top_terms(ws: Workspace, n: int) -> dict[int, list[str]]:
    """Top terms of a version's themes from its arrays (for a version without a report)."""
    try:
        version = _shared._version(*_shared.version_key(ws, n))
    except TalkthemesError as exc:
        _shared.show_error(exc)
        return {}
    return {tid: version.top_terms(i, 3) for i, tid in enumerate(version.theme_ids)}


def _names(ws: Workspace, n: int) -> dict[int, str]:
    """Suggested names of a version's themes (for a version without a report)."""
    try:
        version = _shared._version(*_shared.version_key(ws, n))
    except TalkthemesError:
        return {}
    return dict(zip(version.theme_ids, version.suggested_names(), strict=True))


def _theme_list(items: list[ThemeChange], status: str) -> None:
    title, meaning = STATUS_TEXT[status]
    st.markdown(f"**{title}** ({len(items)}): {meaning}")
    if not items:
        st.caption("None.")
        return
    lines = []
    for t in items:
        line = f"- **{md_inline(t.name)}** \\#{t.theme_id}: {md_inline(t.detail)}"
        if t.flags:
            line += " · " + md_inline("; ".join(t.flags))
        if t.alert:
            line += " · *" + md_inline(t.alert) + "*"
        lines.append(line)
    st.markdown("\n".join(lines))


ALERT_TITLE = {"new": "New theme", "riser": "Riser", "faller": "Faller"}


def _alert_card(card: AlertCard) -> None:
    with st.container(border=True):
        st.markdown(
            f"**{ALERT_TITLE[card.kind]} \\#{card.theme_id}: {md_inline(card.name)}**  \n"
            f"{md_inline(card.size[:1].upper() + card.size[1:])}; {md_inline(card.growth)}.  \n"
            f"Top terms: {md_inline(', '.join(card.top_terms[:8]))}"
        )
        st.markdown(
            "\n".join(f"- {'✓' if held else '✗'} {md_inline(text)}" for held, text in card.evidence)
        )
        if card.examples:
            st.markdown(
                "\n".join(f"> “{md_inline(s)}” ({md_inline(t)})  " for t, s in card.examples)
            )


def _alerts(report: dict[str, Any], labels: dict[int, str], *, masked: bool) -> None:
    cards = alert_cards(report, labels, masked=masked)
    if "alerts" not in report:
        return
    st.subheader("Alerts")
    if not cards:
        st.caption(
            "No alert: no new theme passed every test, and no carried theme's share of the "
            "new transcripts changed significantly."
        )
        return
    st.caption(
        "Each alert with the evidence that held and three sentences from new transcripts"
        + (" (personal data masked)" if masked else "")
        + ". A new theme alerts only when it is large enough, not a split of an old theme, "
        "its words are new, and it is not marked not a theme."
    )
    for card in cards:
        _alert_card(card)


def _examples(report: dict[str, Any], labels: dict[int, str], *, masked: bool) -> None:
    st.subheader("The new themes' example calls")
    frame = new_theme_examples(report, labels, masked=masked)
    if frame.empty:
        st.caption("This refresh found no new theme.")
        return
    st.caption(
        "The new transcripts with the largest share of each new theme; the excerpt is the "
        "start of the customer's turns."
    )
    for (tid, name), group in frame.groupby(["theme_id", "theme"], sort=False):
        st.markdown(f"**{md_inline(name)}** \\#{int(tid)}")
        st.markdown(
            "\n".join(
                f"- {md_inline(r.transcript_id)} · {percent(r.share, 0)} · "
                f"{md_inline(r.excerpt) or '(no excerpt)'}"
                for r in group.itertuples()
            )
        )


def _version_details(ws: Workspace, record: VersionRecord) -> None:
    n = record.n
    with ws.store() as store:
        themes = store.themes(n)
        retired = store.retired_themes(n)
    refresh = record.refresh
    report = _drift(*_shared.version_key(ws, n))
    st.subheader(f"Version {n}")
    if refresh is None:
        st.markdown(
            f"Published directly (not by a refresh): its {len(themes)} themes are the first "
            "of their line, so none is carried over."
        )
    else:
        a, b, c, d = st.columns(4)
        counts = (report or {}).get("counts") or {}
        a.metric("New transcripts", f"{refresh.new_transcripts or 0:,}")
        b.metric("Carried", counts.get("carried", sum(t.status == "carried" for t in themes)))
        c.metric("New", counts.get("new", sum(t.status == "new" for t in themes)))
        d.metric("Retired", counts.get("retired", len(retired)))
        prev = refresh.previous_version
        reason = refresh.resweep_reason
        room = (report or {}).get("room") or {}
        st.caption(
            f"Refreshed from version {prev}."
            + (f" K was chosen again: {md_inline(reason)}." if reason else "")
            + (f" {md_inline(room['text'])}." if room.get("raised") else "")
        )
    terms = report_top_terms(report) or _version_top_terms(ws, n)
    changes = version_changes(themes, retired, terms, report_suggested(report) or _names(ws, n))
    cols = st.columns(3)
    for col, status in zip(cols, ("new", "carried", "retired"), strict=True):
        with col:
            _theme_list(getattr(changes, status), status)
    if refresh is not None:
        if changes.flagged:
            st.warning(
                "Possible splits or merges: "
                + "; ".join(
                    f"{md_inline(t.name)} (\\#{t.theme_id}) " + md_inline(", ".join(t.flags))
                    for t in changes.flagged
                ),
                icon=":material/call_split:",
            )
        if report is None:
            st.info(f"Version {n} has no drift report on disk (versions/{n}/drift.json).")
            return
        st.vega_lite_chart(_drift_spec(report), theme=None, width="content", key="history_drift")
        st.caption(
            "Left: how far each carried theme's words moved (Jensen–Shannon distance between "
            "its word distributions before and after). Right: the share of transcripts each "
            "theme leads before (ring) and after (dot) the refresh."
        )
        labels = {t.theme_id: t.label for t in themes}
        masked = not original_allowed(ws)
        _alerts(report, labels, masked=masked)
        _examples(report, labels, masked=masked)


def _refresh_log(ws: Workspace) -> None:
    with ws.store() as store:
        log = store.refreshes(limit=50)
    if not log:
        return
    st.subheader("Refresh runs")
    frame = pd.DataFrame(
        [
            {
                "id": r.id,
                "started_at": r.started_at,
                "status": r.status,
                "previous_version": r.previous_version,
                "version": r.version,
                "new_transcripts": r.new_transcripts,
            }
            for r in log
        ]
    )
    st.dataframe(
        frame,
        hide_index=True,
        column_config={
            "id": st.column_config.NumberColumn("Run", format="%d"),
            "started_at": st.column_config.TextColumn("Started"),
            "status": st.column_config.TextColumn("Outcome"),
            "previous_version": st.column_config.NumberColumn("From version", format="%d"),
            "version": st.column_config.NumberColumn("Made version", format="%d"),
            "new_transcripts": st.column_config.NumberColumn("New transcripts", format="%d"),
        },
    )


def render() -> None:
    """The Refresh history section."""
    ws = _shared.gate("version")
    with ws.store() as store:
        versions = store.versions()
        runs = store.refreshes(limit=1)
    st.title("Refresh history")
    if len(versions) <= 1 and not runs:
        _shared.empty_state(
            NextStep(
                "refresh",
                "Only one version is published and no refresh has run yet: refreshes appear "
                "here after talkthemes refresh adds new transcripts.",
                f"talkthemes refresh --workspace {shlex.quote(str(ws.root))}",
            )
        )
        return
    timeline = versions_timeline(versions)
    st.vega_lite_chart(
        _timeline_spec(timeline), theme=None, width="content", key="history_timeline"
    )
    st.caption(
        "Each dot is a version of the themes, placed at the time it was made; green ones "
        "came from a refresh, blue ones were published directly. Only the last kept "
        "versions are listed."
    )
    numbers = timeline["n"].tolist()
    current = [int(n) for n, cur in zip(timeline["n"], timeline["current"], strict=True) if cur]
    if st.session_state.get(PICK) not in numbers:
        st.session_state[PICK] = current[0] if current else numbers[-1]
    by_n = {v.n: v for v in versions}
    picked = st.selectbox(
        "Version",
        numbers,
        key=PICK,
        format_func=lambda n: (
            f"Version {n}"
            + (" · current" if n in current else "")
            + (" · refresh" if by_n[n].refresh is not None else " · published")
        ),
    )
    try:
        _version_details(ws, by_n[int(picked)])
    except TalkthemesError as exc:
        _shared.show_error(exc)
    _refresh_log(ws)


if __name__ == "__main__":
    render()
