"""Theme cards: a theme's words ranked by relevance, its suggested name and evidence
sentences, and its label, note and *not a theme* flag (saved to the workspace as soon as
they change, through the public API: :meth:`talkthemes.Workspace.label` and
:meth:`~talkthemes.Workspace.mark_not_a_theme`, with the CLI's checks), merges and curation
log."""

from __future__ import annotations

import streamlit as st

import talkthemes as tt
from talkthemes.app import _labelling, _shared
from talkthemes.errors import TalkthemesError
from talkthemes.metrics.prominence import boilerplate_like
from talkthemes.store.records import ThemeRecord
from talkthemes.text import md_inline, percent
from talkthemes.view.tables import table_coverage, table_lead_count, table_mean_share
from talkthemes.view.themes import boilerplate_advice, term_rows, theme_names
from talkthemes.workspace import Workspace

LAMBDA_HELP = (
    "λ decides how the words are ranked. At 1 they are ranked by how often the theme uses "
    "them, so everyday words that every theme uses can come first. At 0 they are ranked "
    "by how much more this theme uses them than the transcripts overall, so rare, "
    "telling words come first. Values in between mix the two; around 0.6 usually reads "
    "best (Sievert & Shirley 2014)."
)


def _field_key(what: str, theme_id: int) -> str:
    return f"cards_{what}_{theme_id}"


def _save(root: str, theme_id: int, what: str) -> None:
    value = st.session_state[_field_key(what, theme_id)]
    try:
        workspace = tt.Workspace.open(root)
        if what == "hidden":
            workspace.mark_not_a_theme(theme_id, bool(value))
        else:
            workspace.label(theme_id, **{what: str(value).strip()})
    except TalkthemesError as exc:
        st.session_state["cards_error"] = str(exc)
        return
    words = {"label": "Label", "note": "Note", "hidden": "Hidden flag"}[what]
    st.toast(f"{words} of theme #{theme_id} saved.", icon=":material/check:")


def _editor(ws: Workspace, theme: ThemeRecord) -> None:
    tid = theme.theme_id
    saved = {"label": theme.label, "note": theme.note, "hidden": theme.hidden}
    for what, value in saved.items():
        key = _field_key(what, tid)
        if key not in st.session_state:
            st.session_state[key] = value
    st.text_input(
        "Label",
        key=_field_key("label", tid),
        on_change=_save,
        args=(str(ws.root), tid, "label"),
        placeholder="Name this theme, e.g. what callers want",
        help="Saved as soon as you press Enter or leave the field; kept across versions.",
        max_chars=200,
    )
    st.text_area(
        "Note",
        key=_field_key("note", tid),
        on_change=_save,
        args=(str(ws.root), tid, "note"),
        placeholder="What belongs here, what does not, open questions…",
        help="Saved when you leave the field (or press Ctrl+Enter).",
    )
    st.toggle(
        "Not a theme (hide as noise)",
        key=_field_key("hidden", tid),
        on_change=_save,
        args=(str(ws.root), tid, "hidden"),
        help="Small talk, hang-ups, noise: drawn faint on the map and left out of the charts "
        "over time and of alerts, still counted and listed.",
    )
    error = st.session_state.pop("cards_error", None)
    if error:
        st.error(md_inline(error), icon=":material/error:")


def render() -> None:
    """The Theme cards section."""
    ws = _shared.gate("version")
    version = _shared.current_version(ws)
    st.title("Theme cards")
    tid = _shared.theme_picker(version, key="cards_pick")
    pos = version.position(tid)
    theme = version.themes[pos]
    name = theme_names(version)[pos]

    st.subheader(md_inline(name))
    _labelling.suggested_caption(version, pos)
    coverage, mean_share = table_coverage(version), table_mean_share(version)
    cov, mean = float(coverage[pos]), float(mean_share[pos])
    coherence = (version.info.get("coherence") or {}).get("c_npmi")
    a, b, c = st.columns(3)
    a.metric("Leads", percent(cov), help="Share of transcripts whose lead theme it is.")
    b.metric("Average share", percent(mean), help="Its average share per transcript.")
    if coherence and coherence[pos] is not None:  # None: a merged theme (not scored)
        c.metric(
            "Coherence (C_NPMI)",
            f"{coherence[pos]:.3f}",
            help="How often its top words occur together in the transcripts (−1 to 1).",
        )
    st.caption(
        f"Theme #{tid} · {md_inline(theme.status)} in version {version.n} · "
        f"leads {table_lead_count(version, pos):,} of the version's "
        f"{len(version.doc_ids):,} transcripts. "
        + md_inline(_shared.counts(ws, version).sentence())
    )
    if bool(boilerplate_like(coverage, mean_share)[pos]) and not theme.hidden:
        row = {"mean_share": mean, "coverage": cov}
        st.warning(md_inline(boilerplate_advice(row)), icon=":material/visibility_off:")

    controls, editor = st.columns([3, 2], gap="large")
    with controls:
        st.session_state["cards_lambda"] = _shared.relevance_lambda(ws)
        lam = st.slider(
            "λ: rank words by frequency (1) or by how telling they are (0)",
            min_value=0.0,
            max_value=1.0,
            step=0.05,
            key="cards_lambda",
            on_change=lambda: _shared.set_relevance_lambda(st.session_state["cards_lambda"]),
            help=LAMBDA_HELP,
        )
        n = st.slider("Words shown", min_value=5, max_value=40, value=15, key="cards_n")
    with editor:
        _editor(ws, theme)
        st.page_link("calls.py", label="Read the calls it leads", icon=":material/call:")
        _labelling.curation_section(ws, version, pos)
    terms = term_rows(version, pos, n=n, lam=lam)
    _shared.show_chart("terms", terms, name, width=560)
    _labelling.evidence_section(ws, version, pos)


if __name__ == "__main__":
    render()
