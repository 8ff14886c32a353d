"""What every viewer page shares: the workspace, cached loaders and the selected theme.

Loaded data is cached per workspace path, version number and the modification time of
the version's ``version.json`` (a re-publish of the same number, or a new version,
makes a new key): arrays and tables with ``st.cache_resource`` (one shared copy, never
mutated), aggregated frames with ``st.cache_data``. The sections count from the version's
viewer tables (:func:`talkthemes.view.tables.ensure_tables`), not its share matrix; the
calls' full metadata is read only when the Calls list is filtered. Labels, notes and hidden
flags are read fresh from the store on every run, so an edit shows everywhere at once.
"""

from __future__ import annotations

import argparse
import functools
import sys
from pathlib import Path
from typing import Any

import pandas as pd
import streamlit as st
from PIL import Image, ImageDraw

from talkthemes.charts.style import BLUE
from talkthemes.charts.sweep import sweep_chart
from talkthemes.charts.terms import term_chart
from talkthemes.charts.theme_map import theme_map_chart
from talkthemes.charts.trends import movers_chart, segment_chart, trend_chart
from talkthemes.errors import TalkthemesError
from talkthemes.languages.lanes import LANES_DIR
from talkthemes.text import md_inline
from talkthemes.versions.load import Version, load_version
from talkthemes.view.choose_k import load_prep_vocabulary
from talkthemes.view.counts import CallCounts, call_counts
from talkthemes.view.evidence import best_sentences
from talkthemes.view.metadata import MetaTable, load_metadata
from talkthemes.view.over_time import movers_frame, segment_frame, theme_trends, trend_frame
from talkthemes.view.readiness import Need, NextStep, Readiness
from talkthemes.view.readiness import readiness as workspace_readiness
from talkthemes.view.tables import ViewTables, ensure_tables, table_coverage, table_layout
from talkthemes.view.theme_map import ThemeLayout
from talkthemes.view.themes import theme_names, with_names
from talkthemes.workspace import DB_FILE, Workspace, resolve_workspace

#: Session-state key of the theme selected anywhere in the viewer (a theme id).
SELECTED_THEME = "tt_theme_id"


# --------------------------------------------------------------------------- workspace


def workspace_root() -> Path:
    """The workspace folder: ``--workspace`` after ``--`` on the command line, else
    ``$TALKTHEMES_WORKSPACE``, else ``./talkthemes-work``."""
    parser = argparse.ArgumentParser(add_help=False, allow_abbrev=False)
    parser.add_argument("--workspace", default=None)
    args, _ = parser.parse_known_args(sys.argv[1:])
    return resolve_workspace(args.workspace).expanduser().resolve()


@functools.cache
def favicon() -> Image.Image:
    """The browser-tab icon, drawn here so the page loads nothing from the network."""
    img = Image.new("RGBA", (64, 64), (0, 0, 0, 0))
    draw = ImageDraw.Draw(img)
    draw.rounded_rectangle((2, 6, 62, 50), radius=12, fill=BLUE)
    draw.polygon([(14, 46), (14, 62), (30, 46)], fill=BLUE)
    for y, right in ((17, 50), (28, 42), (39, 34)):
        draw.rounded_rectangle((13, y, right, y + 5), radius=2, fill="#ffffff")
    return img


#: Session-state key of the language whose themes the viewer shows (a lane's code).
LANGUAGE = "tt_language"


def language_choices(root: Path) -> list[str]:
    """The main language of the workspace at ``root``, then each language lane's code."""
    main = Workspace(root).settings().prepare.lang
    lanes = root / LANES_DIR
    codes = (
        sorted(p.name for p in lanes.iterdir() if (p / DB_FILE).is_file() and p.name != main)
        if lanes.is_dir()
        else []
    )
    return [main, *codes]


def chosen_language(root: Path) -> str:
    """The language picked in the sidebar (or the ``?language=`` of the address), else the
    main language."""
    choices = language_choices(root)
    wanted = st.session_state.get(LANGUAGE) or st.query_params.get("language")
    return wanted if wanted in choices else choices[0]


def workspace() -> Workspace:
    """The viewer's workspace: the main one, or the lane of the language picked."""
    root = workspace_root()
    code = chosen_language(root)
    if code == language_choices(root)[0]:
        return Workspace(root)
    return Workspace(root / LANES_DIR / code)


def readiness() -> Readiness:
    """Readiness of the viewer's workspace (read on every run: it is cheap)."""
    return workspace_readiness(workspace())


def empty_state(step: NextStep) -> None:
    """Say what is missing and the one command to run next."""
    st.info(
        f"{md_inline(step.message)} Run this next, then reload this page:",
        icon=":material/info:",
    )
    st.code(step.command, language="bash")


def gate(need: Need) -> Workspace:
    """Stop the page with an empty state unless the workspace has what ``need`` names."""
    ws = workspace()
    step = readiness().blocker(need)
    if step is not None:
        empty_state(step)
        st.stop()
    return ws


def show_error(exc: TalkthemesError) -> None:
    """A one-line error for something the user can fix."""
    st.error(md_inline(str(exc)), icon=":material/error:")


# --------------------------------------------------------------------------- cached loaders


def _stamp(path: Path) -> int:
    try:
        return path.stat().st_mtime_ns
    except FileNotFoundError:
        return 0


def version_key(ws: Workspace, n: int) -> tuple[str, int, int]:
    """Cache key of a version: workspace path, number, and a stamp of its
    ``version.json`` modification time and the merged themes (which change its rows)."""
    with ws.store() as store:
        merges = tuple(sorted(store.theme_merges().items()))
    return str(ws.root), int(n), hash((_stamp(ws.versions_dir / str(n) / "version.json"), merges))


@st.cache_resource(show_spinner=False, max_entries=4)
def _version(root: str, n: int, stamp: int) -> Version:
    version = load_version(Workspace(root), n)
    ensure_tables(Workspace(root), version)  # attached: version.tables
    return version


def _tables(root: str, n: int, stamp: int) -> ViewTables:
    return _version(root, n, stamp).tables


@st.cache_resource(show_spinner=False, max_entries=4)
def _layout(root: str, n: int, stamp: int) -> ThemeLayout:
    return table_layout(_tables(root, n, stamp))


@st.cache_resource(show_spinner=False, max_entries=4)
def _metadata(root: str, n: int, stamp: int) -> MetaTable:
    try:  # the calls' metadata kept with the tables (one Parquet file)
        return _tables(root, n, stamp).call_metadata()
    except (OSError, ValueError):  # not kept: every call's rows in the store
        return load_metadata(Workspace(root), _version(root, n, stamp).doc_ids)


def current_version(ws: Workspace) -> Version:
    """The current version, its arrays cached, its labels fresh from the store."""
    with ws.store() as store:
        record = store.current_version()
        if record is None:  # published meanwhile? gate() runs first, so rare
            raise TalkthemesError("no version published yet: run 'talkthemes publish'")
        n = record.n
    key = version_key(ws, n)
    with st.spinner(f"Loading version {n} and its tables …"):
        version = _version(*key)
    with ws.store() as store:
        return version.with_labels(store)


def counts(ws: Workspace, version: Version) -> CallCounts:
    """Transcripts in the version, stored, and left out by reason (read on every run)."""
    return call_counts(ws, version)


def layout(ws: Workspace, version: Version) -> ThemeLayout:
    """Map coordinates of the version's themes (cached)."""
    with st.spinner("Placing the themes on the map …"):
        return _layout(*version_key(ws, version.n))


def metadata(ws: Workspace, version: Version) -> MetaTable:
    """Every transcript's metadata (read once, cached; as the version's tables keep it):
    only a filtered Calls list needs it; the sections' fields and dates are in
    :func:`tables`."""
    with st.spinner(f"Reading the metadata of {len(version.doc_ids):,} transcripts …"):
        return _metadata(*version_key(ws, version.n))


def tables(ws: Workspace, version: Version) -> ViewTables:
    """The version's viewer tables (read with the version, cached)."""
    return version.tables if version.tables is not None else _tables(*version_key(ws, version.n))


@st.cache_data(show_spinner=False, max_entries=8)
def _trend(root: str, n: int, stamp: int, freq: str) -> pd.DataFrame:
    return trend_frame(_version(root, n, stamp), _tables(root, n, stamp), freq)  # type: ignore[arg-type]


@st.cache_data(show_spinner=False, max_entries=4)
def _theme_trends(root: str, n: int, stamp: int) -> pd.DataFrame:
    return theme_trends(_version(root, n, stamp), _tables(root, n, stamp))


def trends(ws: Workspace, version: Version) -> pd.DataFrame:
    """How each theme is moving (last full period against the ones before; cached)."""
    with st.spinner("Comparing the last full period with the ones before …"):
        return _theme_trends(*version_key(ws, version.n))


@st.cache_data(show_spinner=False, max_entries=16)
def _segments(root: str, n: int, stamp: int, field: str) -> pd.DataFrame:
    return segment_frame(_version(root, n, stamp), _tables(root, n, stamp), field)


@st.cache_data(show_spinner=False, max_entries=16)
def _movers(
    root: str, n: int, stamp: int, freq: str, before: tuple[str, ...], after: str
) -> pd.DataFrame:
    return movers_frame(
        _version(root, n, stamp),
        _tables(root, n, stamp),
        freq,  # type: ignore[arg-type]
        [pd.Timestamp(b) for b in before],
        pd.Timestamp(after),
    )


def trend(ws: Workspace, version: Version, freq: str) -> pd.DataFrame:
    """Shares per period with bootstrap intervals (numbers cached, names fresh)."""
    with st.spinner("Counting themes per period and resampling for the intervals …"):
        return with_names(_trend(*version_key(ws, version.n), freq), version)


def segments(ws: Workspace, version: Version, field: str) -> pd.DataFrame:
    """Shares per segment of a metadata field (numbers cached, names fresh)."""
    with st.spinner(f"Comparing themes by {md_inline(field)} …"):
        return with_names(_segments(*version_key(ws, version.n), field), version)


def movers(
    ws: Workspace,
    version: Version,
    freq: str,
    before: tuple[pd.Timestamp, ...],
    after: pd.Timestamp,
) -> pd.DataFrame:
    """Ranked change of each theme's share from the ``before`` periods to ``after``."""
    with st.spinner("Comparing the periods …"):
        pool = tuple(pd.Timestamp(b).isoformat() for b in before)
        frame = _movers(*version_key(ws, version.n), freq, pool, after.isoformat())
        return with_names(frame, version)


@st.cache_data(show_spinner=False, max_entries=32)
def _sentences(
    root: str,
    n: int,
    stamp: int,
    ids: tuple[str, ...],
    positions: tuple[int, ...],
    lam: float,
    masked: bool,
) -> list[str]:
    return best_sentences(
        Workspace(root), _version(root, n, stamp), ids, positions, lam=lam, masked=masked
    )


def sentences(
    ws: Workspace, version: Version, ids: list[str], positions: list[int], *, masked: bool
) -> list[str]:
    """Each call's best sentence for the theme at ``positions`` (cached per list)."""
    lam = relevance_lambda(ws)
    with st.spinner(f"Picking the best sentence of {len(ids):,} calls …"):
        key = version_key(ws, version.n)
        return _sentences(*key, tuple(ids), tuple(int(p) for p in positions), lam, masked)


@st.cache_resource(show_spinner=False, max_entries=2)
def _prep_vocabulary(root: str, prep_hash: str) -> list[str]:
    return load_prep_vocabulary(Workspace(root), prep_hash)


def prep_vocabulary(ws: Workspace, prep_hash: str) -> list[str]:
    """A prep's vocabulary (cached)."""
    return _prep_vocabulary(str(ws.root), prep_hash)


def clear_caches() -> None:
    """Forget every cached load (the next run reads the workspace again)."""
    st.cache_resource.clear()
    st.cache_data.clear()


# --------------------------------------------------------------------------- charts

_BUILDERS: dict[str, Any] = {
    "sweep": sweep_chart,
    "map": theme_map_chart,
    "terms": term_chart,
    "trend": trend_chart,
    "segments": segment_chart,
    "movers": movers_chart,
}


@st.cache_data(show_spinner=False, max_entries=64)
def chart_spec(kind: str, frame: pd.DataFrame, *args: Any, **kwargs: Any) -> dict[str, Any]:
    """The Vega-Lite spec of a :mod:`talkthemes.charts` chart, cached by its input.

    Building and validating an Altair chart takes a noticeable fraction of a second
    (seconds for the many-panel sweep chart); the same frame gives the same spec.
    """
    return _BUILDERS[kind](frame, *args, **kwargs).to_dict()


def show_chart(
    kind: str,
    frame: pd.DataFrame,
    *args: Any,
    key: str | None = None,
    on_select: Any = "ignore",
    selection_mode: str | None = None,
    **kwargs: Any,
) -> Any:
    """Draw a chart with its own look (no Streamlit theme), at its own size."""
    with st.spinner("Drawing the chart …"):
        spec = chart_spec(kind, frame, *args, **kwargs)
    return st.vega_lite_chart(
        spec,
        theme=None,
        width="content",
        key=key,
        on_select=on_select,
        selection_mode=selection_mode,
    )


# --------------------------------------------------------------------------- selected theme


def default_theme(version: Version) -> int:
    """The shown theme that leads the most transcripts (any theme if all are hidden)."""
    cov = table_coverage(version)
    shown = [i for i, t in enumerate(version.themes) if not t.hidden] or list(range(version.k))
    best = max(shown, key=lambda i: (cov[i], -i))
    return version.themes[best].theme_id


def selected_theme(version: Version) -> int:
    """The theme selected in any section (kept valid for this version)."""
    tid = st.session_state.get(SELECTED_THEME)
    if tid not in version.theme_ids:
        tid = default_theme(version)
        st.session_state[SELECTED_THEME] = tid
    return int(tid)


def select_theme(theme_id: int) -> None:
    """Make ``theme_id`` the selected theme for every section."""
    st.session_state[SELECTED_THEME] = int(theme_id)


def theme_picker(version: Version, *, key: str, label: str = "Theme") -> int:
    """A select box of the version's themes, bound to the shared selection."""
    names = dict(zip(version.theme_ids, theme_names(version), strict=True))
    hidden = {t.theme_id for t in version.themes if t.hidden}
    suggested = {t.theme_id for t in version.themes if not t.label.strip()}
    current = selected_theme(version)
    st.session_state[key] = current

    def changed() -> None:
        select_theme(st.session_state[key])

    st.selectbox(
        label,
        options=version.theme_ids,
        key=key,
        on_change=changed,
        format_func=lambda t: (
            f"{names[t]} (#{t})"
            + (" · suggested name" if t in suggested else "")
            + (" · hidden" if t in hidden else "")
        ),
    )
    return selected_theme(version)


# --------------------------------------------------------------------------- sidebar


def sidebar(ready: Readiness) -> None:
    """Workspace path and the current version's facts."""
    with st.sidebar:
        root = workspace_root()
        choices = language_choices(root) if ready.has_workspace else []
        if len(choices) > 1:  # hidden when the calls are in one language
            current = chosen_language(root)
            picked = st.selectbox(
                "Language",
                choices,
                index=choices.index(current),
                help="Each language's calls have themes of their own.",
            )
            if picked != current:
                st.session_state[LANGUAGE] = picked
                st.query_params["language"] = picked
                st.rerun()
        st.caption("Workspace")
        st.code(str(ready.root), language=None)
        if ready.version is not None:
            try:
                version = current_version(Workspace(ready.root))
            except TalkthemesError as exc:
                show_error(exc)
                return
            info: dict[str, Any] = version.info
            labelled = sum(1 for t in version.themes if t.label)
            hidden = sum(1 for t in version.themes if t.hidden)
            st.markdown(
                f"**Version {version.n}** · {str(info.get('family', '')).upper()} "
                f"K = {version.k}  \n{len(version.doc_ids):,} transcripts  \n"
                f"{labelled} of {version.k} themes labelled"
                + (f", {hidden} hidden" if hidden else "")
            )
            st.caption(md_inline(counts(Workspace(ready.root), version).sentence()))
        elif ready.has_workspace:
            step = ready.next_step
            if step is not None:
                st.caption("Next")
                st.code(step.command, language="bash")
        if st.button("Reload data", help="Read the workspace again (after a publish or ingest)."):
            clear_caches()
            st.rerun()


# --------------------------------------------------------------------------- relevance λ

LAMBDA = "tt_lambda"


def relevance_lambda(ws: Workspace) -> float:
    """The λ the user last picked (default: ``[view] relevance_lambda``)."""
    if LAMBDA not in st.session_state:
        st.session_state[LAMBDA] = float(ws.settings().view.relevance_lambda)
    return float(st.session_state[LAMBDA])


def set_relevance_lambda(value: float) -> None:
    """Keep the λ picked on the Theme cards for every section."""
    st.session_state[LAMBDA] = float(value)
