"""Choose K: the sweep's measures against the number of themes, the recommendation and
its reasons, the themes of any cell, and publishing a cell as the next version."""

from __future__ import annotations

import streamlit as st

from talkthemes.app import _shared
from talkthemes.errors import TalkthemesError, WorkspaceBusyError
from talkthemes.text import md_inline
from talkthemes.versions.publish import publish
from talkthemes.view.choose_k import (
    SweepView,
    cell_themes,
    load_sweep,
    measure_name,
    measure_text,
    pick_for,
    scalar_columns,
)
from talkthemes.view.readiness import readiness
from talkthemes.workspace import Workspace

FAMILY_NAMES = {"lda": "LDA", "nmf": "NMF"}
PICK = "tt_cell_pick"  # (family, K) picked in the chart or the select boxes
PENDING = "tt_publish_pending"  # (family, K) waiting for confirmation
CHART_KEY = "choosek_chart"


def _on_chart_select() -> None:
    state = st.session_state.get(CHART_KEY) or {}
    picked = (state.get("selection") or {}).get("cell") or []
    if picked:
        st.session_state[PICK] = (str(picked[0]["family"]), int(picked[0]["k"]))


def _on_family() -> None:
    family = st.session_state["choosek_family"]
    st.session_state[PICK] = (family, st.session_state[PICK][1])


def _on_k() -> None:
    st.session_state[PICK] = (st.session_state[PICK][0], int(st.session_state["choosek_k"]))


def _in_use(ws: Workspace) -> tuple[str | None, int | None]:
    """The current version's family and K (what Choose K opens on), if any."""
    with ws.store() as store:
        record = store.current_version()
    if record is None:
        return None, None
    return record.family, record.k


def _current_pick(ws: Workspace, sweep: SweepView) -> tuple[str, int]:
    family, k = st.session_state.get(PICK) or _in_use(ws)
    family, k = pick_for(sweep, family, k)
    st.session_state[PICK] = (family, k)
    return family, k


def _runner_line(runner: dict, rec: dict) -> str:
    """One runner-up as a list item, its reason in full (a table column would cut it)."""
    facts = []
    if runner.get("coherence") is not None:
        measure = measure_name(rec.get("rank_by", "c_npmi"))
        facts.append(f"coherence ({measure}) {float(runner['coherence']):.3f}")
    if runner.get("stability") is not None:
        facts.append(f"stability {float(runner['stability']):.2f}")
    head = f"K = {int(runner['k'])}" + (f" ({', '.join(facts)})" if facts else "")
    why = measure_text(str(runner.get("why_not") or "").strip())
    return f"- **{md_inline(head)}**" + (f": {md_inline(why)}" if why else "")


def _recommendations(sweep: SweepView) -> None:
    if not sweep.recommendations:
        st.info("This sweep has no recommendation yet: it is still running or was interrupted.")
        return
    columns = st.columns(len(sweep.recommendations))
    for column, (family, rec) in zip(columns, sweep.recommendations.items(), strict=True):
        with column:
            st.subheader(f"{FAMILY_NAMES.get(family, family)}: K = {rec['k']} recommended")
            if rec.get("weak"):
                st.warning(
                    "A weak recommendation: no K gave themes that come back with other "
                    "random seeds often enough.",
                    icon=":material/warning:",
                )
            st.caption(md_inline("Rule: " + measure_text(rec["rule"])))
            st.markdown(
                "\n".join(f"- {md_inline(measure_text(r))}" for r in rec.get("reasons", []))
            )
            runners = rec.get("runners_up") or []
            if runners:
                st.markdown("**Runners-up, and why not**")
                st.markdown("\n".join(_runner_line(r, rec) for r in runners))


def _run_publish(ws: Workspace, family: str, k: int) -> None:
    label = f"{FAMILY_NAMES.get(family, family)} K = {k}"
    try:
        with ws.lock("publish"):
            with st.status(f"Publishing {label} …", expanded=True) as status:
                bar = st.progress(0.0, text="Starting")

                def step(done: int, total: int, what: str = "") -> None:
                    bar.progress(min(1.0, done / max(total, 1)), text=what.capitalize())

                result = publish(ws, k=k, family=family, progress=step)
                status.update(
                    label=f"Published version {result.version} ({label}, fitted in "
                    f"{result.fit_seconds:.1f} s)",
                    state="complete",
                    expanded=False,
                )
    except WorkspaceBusyError as exc:
        busy = str(exc).split(" (use --wait")[0]
        st.error(
            md_inline(f"Not published: the {busy}. Try again when it has finished."),
            icon=":material/hourglass_top:",
        )
        return
    except TalkthemesError as exc:
        _shared.show_error(exc)
        return
    st.session_state.pop(_shared.SELECTED_THEME, None)
    st.success(
        f"Version {result.version} is now current. Its themes are on the other sections.",
        icon=":material/check_circle:",
    )
    st.button("Show the new version", key="choosek_show_new")


def _publish_controls(ws: Workspace, family: str, k: int, n_transcripts: int) -> None:
    label = f"{FAMILY_NAMES.get(family, family)} K = {k}"
    if st.session_state.get(PENDING) != (family, k):
        if st.button(f"Publish {label} …", type="primary", key="choosek_publish"):
            st.session_state[PENDING] = (family, k)
            st.rerun()
        return
    st.warning(
        f"Publish {label} as the next version? This fits the model again on all "
        f"{n_transcripts:,} transcripts (this can take minutes) and makes it the current "
        "version. Labels stay with their themes; earlier versions are kept.",
        icon=":material/help:",
    )
    yes, no = st.columns(2)
    confirmed = yes.button("Yes, publish", type="primary", key="choosek_confirm")
    cancelled = no.button("Cancel", key="choosek_cancel")
    if cancelled:
        st.session_state.pop(PENDING, None)
        st.rerun()
    if confirmed:
        st.session_state.pop(PENDING, None)
        _run_publish(ws, family, k)


def _sample(sweep: SweepView) -> None:
    """A sweep on a sample: which calls, and whether a second sample recommends the same K."""
    lines = sweep.sample_lines
    if not lines:
        return
    st.markdown("**Swept on a sample**")
    st.markdown("\n".join(f"- {md_inline(text.strip())}" for text in lines))
    agreement = sweep.sample_agreement
    if not agreement.empty and not agreement["agree"].all():
        st.warning(
            "A second sample of the calls recommends another K for "
            + ", ".join(
                FAMILY_NAMES.get(f, f) for f in agreement.loc[~agreement["agree"], "family"]
            )
            + ": compare the themes of both K below before publishing.",
            icon=":material/compare_arrows:",
        )


def render() -> None:
    """The Choose K section."""
    ws = _shared.gate("sweep")
    st.title("Choose K")
    st.caption(
        "How many themes should the transcripts be split into? Each point is the average "
        "over the random seeds tried for that number of themes (K); bands show how much "
        "the seeds disagreed. Coherent themes use words that occur together; stable themes "
        "come back with other seeds."
    )
    try:
        sweep = load_sweep(ws)
    except TalkthemesError as exc:
        _shared.show_error(exc)
        return
    if not sweep.scored:
        st.warning(
            f"Sweep {sweep.sweep_id} is still running or was interrupted: only fit measures "
            "are shown. Run `talkthemes sweep` again to finish and score it.",
            icon=":material/pending:",
        )
    _shared.show_chart(
        "sweep",
        scalar_columns(sweep.cells),
        sweep.recommended or None,
        key=CHART_KEY,
        on_select=_on_chart_select,
        selection_mode="cell",
    )
    st.caption(
        f"Sweep {sweep.sweep_id} · {len(sweep.cells)} models fitted · started "
        f"{sweep.created_at}. Click a point to see that model's themes below."
    )
    _recommendations(sweep)
    _sample(sweep)

    st.divider()
    family, k = _current_pick(ws, sweep)
    st.session_state["choosek_family"] = family
    st.session_state["choosek_k"] = k
    left, right = st.columns(2)
    left.selectbox(
        "Model family",
        sweep.families,
        key="choosek_family",
        on_change=_on_family,
        format_func=lambda f: FAMILY_NAMES.get(f, f),
    )
    right.selectbox("Number of themes (K)", sweep.ks(family), key="choosek_k", on_change=_on_k)
    try:
        with st.spinner("Reading the model's themes …"):
            cell = cell_themes(
                ws, sweep, family, k, vocabulary=_shared.prep_vocabulary(ws, sweep.prep_hash)
            )
    except TalkthemesError as exc:
        _shared.show_error(exc)
        return
    st.subheader(f"Themes of {FAMILY_NAMES.get(family, family)} K = {k}")
    st.caption(
        f"Model {cell.cell} (seed {cell.seed}, the seed that agrees most with the others). "
        "Words most likely in each theme, most likely first."
    )
    st.dataframe(
        cell.frame,
        hide_index=True,
        column_config={
            "theme": st.column_config.NumberColumn("Theme", format="%d", width="small"),
            "terms": st.column_config.TextColumn("Top words", width="large"),
        },
    )
    _publish_controls(ws, family, k, readiness(ws).transcripts)


if __name__ == "__main__":
    render()
