"""Calls: the transcripts a theme dominates, filtered by share, date and any metadata
field, exported to CSV, and read in full with the theme's words highlighted, and why the
call belongs to its top themes.

Transcript text is untrusted. It reaches the page only through
:func:`talkthemes.view.transcript.transcript_html`, which escapes every piece of it, and
``st.html``, which sanitises again and never runs scripts.
"""

from __future__ import annotations

import datetime as dt

import pandas as pd
import streamlit as st

from talkthemes.app import _labelling, _shared
from talkthemes.errors import TalkthemesError
from talkthemes.text import md_inline, percent
from talkthemes.versions.load import Version
from talkthemes.versions.tables import ViewTables
from talkthemes.view.calls import (
    CallFilter,
    calls_csv,
    calls_table,
    plain_filter,
    top_calls_table,
)
from talkthemes.view.evidence import best_sentences
from talkthemes.view.tables import table_coverage, table_lead_count
from talkthemes.view.transcript import (
    TermHighlighter,
    load_transcript,
    original_allowed,
    transcript_html,
    version_lemmas,
)
from talkthemes.workspace import Workspace

MAX_LISTED = 1000  # rows shown in the table; the CSV export has them all
MAX_SENTENCES = 200  # rows of the table that show their best sentence
HIGHLIGHT_TERMS = 20
OPEN_KEY = "calls_open"
TABLE_KEY = "calls_table"


def _filters(meta: ViewTables) -> CallFilter:
    flt = CallFilter()
    with st.expander("Filters", expanded=True, icon=":material/filter_list:"):
        left, right = st.columns(2)
        flt.min_share = (
            left.slider(
                "Least share of this theme in the transcript",
                min_value=0,
                max_value=100,
                value=0,
                step=5,
                format="%d%%",
                key="calls_min_share",
                help="A transcript's share is how much of it the theme accounts for.",
            )
            / 100.0
        )
        flt.lead_only = right.toggle(
            "Only transcripts this theme leads",
            value=True,
            key="calls_lead_only",
            help="Off: every transcript where the theme reaches the least share above, "
            "even when another theme leads it.",
        )
        if meta.date_field is not None:
            info = meta.fields[meta.date_field]
            picked = left.date_input(
                f"Date range ({md_inline(meta.fields[meta.date_field].label)})",
                value=(info.lo, info.hi),
                min_value=info.lo,
                max_value=info.hi,
                key="calls_dates",
            )
            if isinstance(picked, dt.date):
                picked = (picked,)
            # The full range keeps transcripts without a date; a narrower one filters.
            if picked and tuple(picked) != (info.lo, info.hi):
                flt.date_from = picked[0]
                flt.date_to = picked[1] if len(picked) > 1 else picked[0]
        columns = st.columns(3)
        others = [f for f in meta.fields.values() if f.name != meta.date_field]
        for i, info in enumerate(others):
            box = columns[i % 3]
            key = f"calls_field_{info.name}"
            label = md_inline(info.label)
            if info.kind == "category":
                chosen = box.multiselect(label, info.values, key=key, placeholder="all values")
                if chosen:
                    flt.categories[info.name] = list(chosen)
            elif info.kind == "number":
                lo, hi = float(info.lo), float(info.hi)
                if lo < hi:
                    picked = box.slider(label, lo, hi, (lo, hi), key=key)
                    # As for dates: the full range keeps calls without a value.
                    if tuple(picked) != (lo, hi):
                        flt.ranges[info.name] = picked
            elif info.kind == "text":
                text = box.text_input(f"{label} contains", key=key)
                if text.strip():
                    flt.contains[info.name] = text.strip()
            elif info.kind == "date":
                box.caption(f"{label}: a date field (the range above filters by the main one)")
    return flt


def _on_table_select(ids: list[str]) -> None:
    state = st.session_state.get(TABLE_KEY) or {}
    rows = (state.get("selection") or {}).get("rows") or []
    if rows and rows[0] < len(ids):
        st.session_state[OPEN_KEY] = ids[rows[0]]


def _with_sentences(
    ws: Workspace, version: Version, frame: pd.DataFrame, masked: bool
) -> pd.DataFrame:
    """The full list with every call's best sentence, as the CSV download writes it."""
    out = frame.copy()
    out.insert(
        1,
        "best_sentence",
        best_sentences(
            ws,
            version,
            out["transcript_id"].astype(str).tolist(),
            [version.position(int(t)) for t in out["lead_theme_id"]],
            lam=_shared.relevance_lambda(ws),
            masked=masked,
        ),
    )
    return out


def render() -> None:
    """The Calls section."""
    ws = _shared.gate("version")
    version = _shared.current_version(ws)
    tables = _shared.tables(ws, version)
    st.title("Calls")
    tid = _shared.theme_picker(version, key="calls_pick")
    pos = version.position(tid)
    flt = _filters(tables)
    masked = not original_allowed(ws)

    def full_list() -> pd.DataFrame:  # every match: reads every call's share and metadata
        return calls_table(version, _shared.metadata(ws, version), pos, flt, masked=masked)

    try:
        if plain_filter(flt):  # the list as it opens: from the tables
            frame = top_calls_table(version, tables, pos, masked=masked)
            matches = table_lead_count(version, pos)
        else:
            frame = full_list()
            matches = len(frame)
    except TalkthemesError as exc:
        _shared.show_error(exc)
        return
    coverage = float(table_coverage(version)[pos])
    st.caption(
        f"{matches:,} transcripts match, most dominated by the theme first. The theme "
        f"leads {percent(coverage)} of the version's {len(version.doc_ids):,} transcripts. "
        + md_inline(_shared.counts(ws, version).sentence())
        + (f" The table lists the first {MAX_LISTED:,}." if matches > MAX_LISTED else "")
    )
    shown = frame.head(MAX_LISTED).copy()
    ids = shown["transcript_id"].astype(str).tolist()
    head = shown.head(MAX_SENTENCES)
    picked = _shared.sentences(
        ws,
        version,
        head["transcript_id"].astype(str).tolist(),
        [version.position(int(t)) for t in head["lead_theme_id"]],
        masked=masked,
    )
    shown.insert(1, "best_sentence", picked + [""] * (len(shown) - len(picked)))
    st.dataframe(
        shown.drop(columns=["lead_theme_id"]),
        hide_index=True,
        key=TABLE_KEY,
        on_select=lambda: _on_table_select(ids),
        selection_mode="single-row",
        column_config={
            "transcript_id": st.column_config.TextColumn("Transcript"),
            "best_sentence": st.column_config.TextColumn(
                "Best sentence",
                width="large",
                help="The sentence of the call that holds the most of its lead theme's "
                "words, the customer's first; personal data masked.",
            ),
            "share": st.column_config.ProgressColumn(
                "Share of this theme", format="percent", min_value=0.0, max_value=1.0
            ),
            "lead_theme": st.column_config.TextColumn("Lead theme"),
            "lead_share": st.column_config.NumberColumn("Lead share", format="percent"),
            **{
                name: st.column_config.TextColumn(info.label)
                for name, info in tables.fields.items()
                if name in shown.columns
            },
        },
    )
    st.download_button(
        "Download the list (CSV)",
        data=lambda: calls_csv(_with_sentences(ws, version, full_list(), masked), tables),
        file_name=f"theme-{tid}-calls.csv",
        mime="text/csv",
        on_click="ignore",
        icon=":material/download:",
        key="calls_download",
    )
    if not ids:
        st.info("No transcript matches these filters.", icon=":material/search_off:")
        return

    st.subheader("Transcript")
    if st.session_state.get(OPEN_KEY) not in ids:
        st.session_state[OPEN_KEY] = ids[0]
    shares = dict(zip(ids, shown["share"], strict=True))
    tid_open = st.selectbox(
        "Open a transcript",
        ids,
        key=OPEN_KEY,
        format_func=lambda i: f"{i} · {percent(shares[i], 0)} this theme",
    )
    lam = _shared.relevance_lambda(ws)
    terms = version.top_terms(pos, HIGHLIGHT_TERMS, lam)
    highlighter = TermHighlighter(terms, lemmas=version_lemmas(version))
    try:
        turns = load_transcript(ws, tid_open, highlighter)
    except TalkthemesError as exc:
        _shared.show_error(exc)
        return
    row = shown[shown["transcript_id"] == tid_open].iloc[0]
    own = {"transcript_id", "best_sentence", "share", "lead_theme", "lead_theme_id", "lead_share"}
    facts = [
        md_inline(f"{tables.fields[k].label if k in tables.fields else k}: {row[k]}")
        for k in shown.columns
        if k not in own and pd.notna(row.get(k))
    ]
    st.caption(
        " · ".join(
            [f"{len(turns)} turns", f"share of this theme {percent(row['share'], 0)}", *facts]
        )
    )
    st.caption(
        f"Marked words are the theme's {HIGHLIGHT_TERMS} most relevant terms at λ = {lam:g}, "
        "found in the original wording (other forms of the same word count too)."
    )
    st.html(transcript_html(turns))
    _labelling.why_section(ws, version, tid_open)


if __name__ == "__main__":
    render()
