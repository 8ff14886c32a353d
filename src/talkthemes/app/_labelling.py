"""Labelling on the viewer's pages: a theme's suggested name, evidence sentences and
curation (merge, log) on its card, and why a call belongs to its themes in Calls.

Layout only: the sentences come stored with the version
(:mod:`talkthemes.view.theme_evidence`), the pulls from :mod:`talkthemes.view.why`, the
chart from :mod:`talkthemes.charts.why`. Merges and their undoing go through the public API
(:class:`talkthemes.Workspace`), with the CLI's checks; the log is read from the store.
"""

from __future__ import annotations

import streamlit as st

import talkthemes as tt
from talkthemes.app import _shared
from talkthemes.charts.why import why_chart
from talkthemes.errors import TalkthemesError
from talkthemes.store.records import CurationEntry
from talkthemes.text import md_inline
from talkthemes.versions.call_terms import CallCounter, call_counter, call_counts
from talkthemes.versions.evidence_shown import EvidenceMasker, masked_by_default
from talkthemes.versions.load import Version, load_version
from talkthemes.view.theme_evidence import evidence_html, evidence_note, evidence_views
from talkthemes.view.themes import theme_names
from talkthemes.view.transcript import version_lemmas
from talkthemes.view.why import why_frame
from talkthemes.workspace import Workspace

__all__ = ["curation_section", "evidence_section", "suggested_caption", "why_section"]

EVIDENCE_SHOWN = 10


def suggested_caption(version: Version, position: int) -> None:
    """Under a theme's title: its suggested name, marked as such until it is labelled."""
    theme = version.themes[position]
    suggested = version.suggested_names()[position]
    if theme.label.strip():
        st.caption(f"Suggested name: {md_inline(suggested)}")
    else:
        st.caption(
            f"**Suggested name**, not labelled yet: {md_inline(suggested)}. Built from the "
            "theme's most relevant phrases and words; type a label to replace it."
        )
    merged = theme.merged
    if merged:
        st.caption(
            "Merged: themes "
            + ", ".join(f"#{m}" for m in merged)
            + f" are shown as part of theme #{theme.theme_id} (their shares added)."
        )


def evidence_section(ws: Workspace, version: Version, position: int) -> None:
    """The theme's evidence sentences, its words highlighted, each with its call."""
    st.subheader("Evidence sentences")
    st.caption(
        "The sentences of the calls this theme leads that carry its words most, customers "
        "first, no two from the same call, picked for variety when the version was "
        "published. Marked words are the theme's top words; personal data is masked."
    )
    note = evidence_note(version, position)
    if note is not None:
        st.info(md_inline(note), icon=":material/info:")
        return
    masker = EvidenceMasker(ws) if masked_by_default(ws) else None
    views = evidence_views(
        version, position, version_lemmas(version), limit=EVIDENCE_SHOWN, masker=masker
    )
    st.html(evidence_html(views))
    calls = [v.call_id for v in views]
    left, right = st.columns([3, 1])
    pick = left.selectbox(
        "Read one of these calls in full", calls, key=f"evidence_call_{position}_{version.n}"
    )
    if right.button("Open in Calls", icon=":material/call:", key=f"evidence_open_{version.n}"):
        _shared.select_theme(version.themes[position].theme_id)
        st.session_state["calls_open"] = pick
        st.session_state["calls_lead_only"] = True
        st.switch_page("calls.py")


def _merge(root: str, theme_id: int, key: str) -> None:
    into = st.session_state.get(key)
    if into is None:
        return
    try:
        kept = tt.Workspace.open(root).merge(theme_id, int(into)).into
    except TalkthemesError as exc:
        st.session_state["curation_error"] = str(exc)
        return
    _shared.select_theme(kept)
    st.toast(f"Theme #{theme_id} merged into theme #{kept}.", icon=":material/merge:")


def _unmerge(root: str, theme_id: int) -> None:
    try:
        apart = tt.Workspace.open(root).unmerge(theme_id).apart
    except TalkthemesError as exc:
        st.session_state["curation_error"] = str(exc)
        return
    st.toast(
        "Shown on their own again: " + ", ".join(f"#{t}" for t in apart), icon=":material/undo:"
    )


def curation_section(ws: Workspace, version: Version, position: int) -> None:
    """Merge the theme into another (or undo a merge), and its curation log."""
    theme = version.themes[position]
    tid = theme.theme_id
    names = dict(zip(version.theme_ids, theme_names(version), strict=True))
    others = [t for t in version.theme_ids if t != tid]
    with st.expander("Merge into another theme", icon=":material/merge:"):
        st.caption(
            "Two themes that are one reason to call become one theme: it keeps the other "
            "theme's id and label, its share of each call is the sum of both, and later "
            "refreshes keep them together. Nothing is deleted; it can be undone."
        )
        key = f"curation_into_{tid}"
        st.selectbox(
            "Merge this theme into",
            others,
            index=None,
            key=key,
            format_func=lambda t: f"{names[t]} (#{t})",
            placeholder="pick a theme",
        )
        st.button(
            "Merge",
            key=f"curation_merge_{tid}",
            on_click=_merge,
            args=(str(ws.root), tid, key),
            disabled=st.session_state.get(key) is None,
        )
        if theme.merged:
            st.button(
                "Undo the merge: show " + ", ".join(f"#{m}" for m in theme.merged) + " apart",
                key=f"curation_unmerge_{tid}",
                on_click=_unmerge,
                args=(str(ws.root), tid),
            )
    error = st.session_state.pop("curation_error", None)
    if error:
        st.error(md_inline(error), icon=":material/error:")
    with st.expander("Curation log", icon=":material/history:"):
        with ws.store() as store:
            log = store.curation_log(tid, limit=50)
        if not log:
            st.caption("Nothing recorded for this theme yet.")
        for e in log:
            st.caption(md_inline(f"{e.at} · {_describe(e)}"))


def _describe(entry: CurationEntry) -> str:
    d = entry.detail
    if entry.action in ("label", "note"):
        after = d.get("after") or ""
        return f"{entry.action} set to “{after}”" if after else f"{entry.action} cleared"
    return {
        "not_a_theme": "marked not a theme",
        "a_theme": "marked a theme again",
        "merge": f"merged into theme #{d.get('into')}",
        "unmerge": f"merge into theme #{d.get('from')} undone",
    }.get(entry.action, entry.action)


@st.cache_resource(show_spinner=False, max_entries=2)
def _counter(root: str, n: int, stamp: int) -> CallCounter:
    return call_counter(Workspace(root), load_version(Workspace(root), n))


def why_section(ws: Workspace, version: Version, call_id: str) -> None:
    """Why this call: the terms that pulled it to each of its top themes."""
    st.subheader("Why this call")
    try:
        row = version.doc_ids.index(call_id)
    except ValueError:
        st.info("This call is not in the version.", icon=":material/info:")
        return
    try:
        with st.spinner("Counting the call's words …"):
            counter = _counter(*_shared.version_key(ws, version.n))
            counts = call_counts(ws, version, call_id, counter)
    except TalkthemesError as exc:
        _shared.show_error(exc)
        return
    frame = why_frame(version, counts, version.doc_topics[row])
    if frame.empty:
        st.caption("None of the call's top themes has words in it.")
        return
    st.vega_lite_chart(why_chart(frame).to_dict(), theme=None, width="content")
