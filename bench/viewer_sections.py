"""The viewer's sections as ``bench/viewer.py`` times them: the data functions and chart
specs each page computes, over the version's viewer tables (bench only)."""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

from talkthemes.workspace import Workspace

__all__ = ["Workspace", "run_sections"]

TARGET_SECONDS = 1.5
TARGET_FIRST_SECONDS = 4.0


def timed(fn: Callable[[], Any]) -> tuple[float, Any]:
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def open_version(ws: Workspace) -> Any:
    """What the viewer caches per version: the version (arrays memory-mapped) and its
    viewer tables; labels read fresh."""
    from talkthemes.versions.load import load_version
    from talkthemes.view.tables import ensure_tables

    version = load_version(ws)
    ensure_tables(ws, version)
    with ws.store() as store:
        return version.with_labels(store)


def make_sections(ws: Workspace, version: Any) -> list[tuple[str, Callable[[Any], None]]]:
    """Each section's work on a version (opened by :func:`open_version`), by name."""
    from talkthemes import view
    from talkthemes.charts.sweep import sweep_chart
    from talkthemes.charts.terms import term_chart
    from talkthemes.charts.theme_map import theme_map_chart
    from talkthemes.charts.trends import movers_chart, segment_chart, trend_chart
    from talkthemes.view.calls import top_calls_table
    from talkthemes.view.counts import call_counts, version_unthemed
    from talkthemes.view.evidence import best_sentences
    from talkthemes.view.over_time import default_comparison, theme_trends
    from talkthemes.view.tables import (
        table_coverage,
        table_layout,
        table_lead_count,
        table_mean_share,
    )
    from talkthemes.view.theme_map import theme_links
    from talkthemes.view.themes import map_frame, term_rows
    from talkthemes.view.transcript import version_lemmas

    lam = ws.settings().view.relevance_lambda
    freq = "week"
    tables = version.tables
    pos = int(table_coverage(version).argmax())
    tid = version.theme_ids[pos]
    fields = view.segment_fields(tables)
    field = "queue" if "queue" in fields else (fields[0] if fields else None)

    def theme_map(v: Any) -> None:
        layout = table_layout(v.tables)
        table = view.theme_table(v, layout, lam=lam)
        links, _ = theme_links(layout.distances, v.theme_ids)
        frame = map_frame(table, theme_trends(v, v.tables))
        theme_map_chart(frame, links, tid).to_dict()
        call_counts(ws, v).sentence()
        version_unthemed(v).sentence()

    def cards(v: Any) -> None:
        cov, mean = table_coverage(v), table_mean_share(v)
        table_lead_count(v, pos)
        call_counts(ws, v).sentence()
        terms = term_rows(v, pos, n=15, lam=lam)
        term_chart(terms, view.theme_names(v)[pos], width=560).to_dict()
        v.evidence(pos)
        assert cov.shape == mean.shape

    def calls_rows(v: Any, frame: Any) -> None:
        head = frame.head(200)  # the rows that show their best sentence
        best_sentences(
            ws,
            v,
            head["transcript_id"].astype(str).tolist(),
            [v.position(int(t)) for t in head["lead_theme_id"]],
            lam=lam,
        )
        if len(frame):
            h = view.TermHighlighter(v.top_terms(pos, 20, lam), lemmas=version_lemmas(v))
            view.transcript_html(view.load_transcript(ws, str(frame["transcript_id"].iloc[0]), h))

    def calls(v: Any) -> None:
        frame = top_calls_table(v, v.tables, pos)
        call_counts(ws, v).sentence()
        calls_rows(v, frame.head(1000))

    def calls_filtered(v: Any) -> None:
        meta = v.tables.call_metadata()  # read on the version's first filter, then kept
        flt = view.CallFilter()
        if field is not None and meta.fields[field].kind == "category":
            flt = view.CallFilter(categories={field: [meta.fields[field].values[0]]})
        frame = view.calls_table(v, meta, pos, flt)
        calls_rows(v, frame.head(1000))

    def over_time(v: Any) -> None:
        t = v.tables
        if t.date_field:
            trend = view.trend_frame(v, t, freq)
            trend_chart(trend, highlight=[tid], freq=freq).to_dict()
            comparison = default_comparison(t, freq)
            if comparison is not None:
                mv = view.movers_frame(v, t, freq, comparison.before, comparison.after)
                movers_chart(mv).to_dict()
        if field is not None:
            seg = view.segment_frame(v, t, field)
            segment_chart(seg, field=field).to_dict()

    sections: list[tuple[str, Callable[[Any], None]]] = []
    if view.readiness(ws).sweep_id is not None:

        def choose_k(v: Any) -> None:
            s = view.load_sweep(ws)
            fam = s.families[0]
            k = s.recommended.get(fam, s.ks(fam)[0])
            vocab = view.load_prep_vocabulary(ws, s.prep_hash)
            view.cell_themes(ws, s, fam, k, vocabulary=vocab)
            sweep_chart(view.scalar_columns(s.cells), s.recommended or None).to_dict()

        sections.append(("Choose K", choose_k))
    sections += [
        ("Theme map", theme_map),
        ("Theme cards", cards),
        ("Calls", calls),
        ("Over time", over_time),
        ("Calls, filtered", calls_filtered),
    ]
    return sections


def run_sections(ws: Workspace, runs: int) -> tuple[float, float]:
    """Time every section's first render (each in a new process) and re-render; print
    the table; return the worst first render and the worst re-render."""
    t_open, version = timed(lambda: open_version(ws))
    tables = version.tables
    print(
        f"workspace {ws.root}: {len(version.doc_ids):,} transcripts, K = {version.k}, "
        f"{len(version.vocabulary):,} terms, {len(tables.fields)} metadata fields; tables "
        f"built at {tables.built}: {len(tables.groups):,} group rows, {len(tables.top):,} "
        f"top-call rows; version + tables opened in {t_open:.3f} s"
    )
    sections = make_sections(ws, version)
    print(
        "\nper section: first render (in a new process, modules imported), re-render "
        f"(median of {runs}, version and tables kept)"
    )
    print(f"  {'section':<16} {'first':>8} {'re-render':>10}  targets {TARGET_FIRST_SECONDS} s / "
          f"{TARGET_SECONDS} s")  # fmt: skip
    worst_first = worst_again = 0.0
    for name, fn in sections:
        first = first_in_new_process(ws, name)
        v = _first(ws, fn)
        again = statistics.median(timed(lambda fn=fn, v=v: fn(v))[0] for _ in range(runs))
        verdict = "ok" if first < TARGET_FIRST_SECONDS and again < TARGET_SECONDS else "SLOW"
        if name != "Calls, filtered":
            worst_first, worst_again = max(worst_first, first), max(worst_again, again)
        print(f"  {name:<16} {first:8.3f} {again:10.3f}  {verdict}")
        sys.stdout.flush()
    return worst_first, worst_again


def first_in_new_process(ws: Workspace, name: str) -> float:
    """Seconds of a section's first render in a fresh Python process (imports excluded:
    a running viewer has them)."""
    out = subprocess.run(
        [sys.executable, __file__, str(ws.root), name],
        check=True,
        capture_output=True,
        text=True,
        env=os.environ.copy(),
    )
    return float(out.stdout.strip().splitlines()[-1])


def _first(ws: Workspace, fn: Callable[[Any], None]) -> Any:
    v = open_version(ws)
    fn(v)
    return v


def _main_first(root: str, name: str) -> None:
    import talkthemes.charts.sweep
    import talkthemes.charts.terms
    import talkthemes.charts.theme_map
    import talkthemes.charts.trends
    import talkthemes.view
    import talkthemes.view.over_time  # noqa: F401

    ws = Workspace(Path(root))
    # Finding the theme and field to show opens the version once (untimed); the section's
    # first render then opens it again, as a fresh viewer would, and does its work.
    fn = dict(make_sections(ws, open_version(ws)))[name]
    seconds, _ = timed(lambda: _first(ws, fn))
    print(f"{seconds:.6f}")


if __name__ == "__main__":
    _main_first(sys.argv[1], sys.argv[2])
