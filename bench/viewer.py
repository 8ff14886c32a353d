"""Benchmark of the viewer's sections (not a test): data functions + chart building.

    python bench/viewer.py --size 100000            # build a demo workspace, then time
    python bench/viewer.py --workspace ./work       # time an existing published workspace
    python bench/viewer.py --size 20000 --keep --workspace /tmp/bench-20k --runs 7

Building (when the workspace has no version): the invented demo corpus of ``--size`` calls
is written, ingested, prepared, swept (NMF, K = ``--k``, one seed) and published.

Timing: first the loads the viewer caches once per version (version arrays, map layout,
metadata, the lemma table); then, per section, the work the page does on every rerun —
the data functions of :mod:`talkthemes.view` and building each chart's Vega-Lite spec
(``chart.to_dict()``, which validates it) — as the median of ``--runs`` repetitions. The
viewer additionally caches chart specs by their input, so a rerun with unchanged input
skips the chart column; the table shows the uncached cost. Target: < 1.5 s per section
on a 100,000-transcript workspace.
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

TARGET_SECONDS = 1.5


def log(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


def build(root: Path, size: int, k: int) -> None:
    """Create a published demo workspace of ``size`` calls at ``root``."""
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep.run import run_sweep
    from talkthemes.versions.publish import publish
    from talkthemes.workspace import Workspace

    ws = Workspace(root)
    ws.init()
    t0 = time.perf_counter()
    log(f"writing {size:,} demo calls …")
    files = write_demo(root / "demo-source", size=size, seed=7)
    with ws.lock("bench"):
        log("ingesting …")
        ingest(ws, [files.exports], manifests=[files.manifest])
        log("preparing …")
        run_prepare(ws)
        log(f"sweeping NMF K = {k} …")
        run_sweep(ws, k=str(k), families=["nmf"], seeds=1)
        log("publishing …")
        publish(ws, k=k, family="nmf")
    log(f"built in {time.perf_counter() - t0:,.0f} s")


def timed(fn: Callable[[], Any]) -> tuple[float, Any]:
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def median_of(runs: int, fn: Callable[[], Any]) -> float:
    return statistics.median(timed(fn)[0] for _ in range(runs))


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--size", type=int, default=20_000, help="demo calls to build")
    parser.add_argument("--workspace", type=Path, help="use (or build into) this folder")
    parser.add_argument("--k", type=int, default=20, help="themes of the built version")
    parser.add_argument("--runs", type=int, default=5, help="repetitions per section")
    parser.add_argument("--keep", action="store_true", help="keep a built temporary workspace")
    args = parser.parse_args()

    from talkthemes import charts, view
    from talkthemes.versions.load import load_version
    from talkthemes.view.evidence import best_sentences
    from talkthemes.view.over_time import default_comparison, theme_trends
    from talkthemes.view.theme_map import theme_links
    from talkthemes.view.themes import map_frame, term_rows
    from talkthemes.workspace import Workspace

    tmp = None
    root = args.workspace
    if root is None:
        tmp = Path(tempfile.mkdtemp(prefix="tt-bench-viewer-"))
        root = tmp / "ws"
    ws = Workspace(root)
    if view.readiness(ws).version is None:
        build(root, args.size, args.k)

    cold: list[tuple[str, float]] = []
    t, version = timed(lambda: load_version(ws))
    cold.append(("load version", t))
    t, layout = timed(lambda: view.theme_layout(version.topic_terms))
    cold.append(("map layout (JS distance + MDS)", t))
    t, meta = timed(lambda: view.load_metadata(ws, version.doc_ids))
    cold.append(("metadata of every transcript", t))
    t, lemmas = timed(lambda: view.lemma_table("en"))
    cold.append(("lemma table", t))
    t, _ = timed(lambda: version.lead())
    cold.append(("lead themes", t))
    t, sweep = timed(lambda: view.load_sweep(ws))
    cold.append(("sweep cells", t))
    t, trends = timed(lambda: theme_trends(version, meta))
    cold.append(("map trends (last full period vs before)", t))

    pos = int(version.coverage().argmax())
    tid = version.theme_ids[pos]
    lam = ws.settings().view.relevance_lambda
    freq = "week"
    fields = view.segment_fields(meta)
    field = "queue" if "queue" in fields else (fields[0] if fields else None)

    def fresh_version() -> Any:
        import dataclasses

        with ws.store() as store:
            return dataclasses.replace(version, themes=store.themes(version.n))

    def choose_k_data() -> Any:
        s = view.load_sweep(ws)
        fam = s.families[0]
        k = s.recommended.get(fam, s.ks(fam)[0])
        return s, view.cell_themes(ws, s, fam, k, vocabulary=vocab)

    vocab = view.load_prep_vocabulary(ws, sweep.prep_hash)

    def map_data() -> Any:
        v = fresh_version()
        links, _ = theme_links(layout.distances, v.theme_ids)
        return map_frame(view.theme_table(v, layout, lam=lam), trends), links

    def cards_data() -> Any:
        return term_rows(fresh_version(), pos, n=15, lam=lam)

    def calls_data() -> Any:
        v = fresh_version()
        frame = view.calls_table(v, meta, pos, view.CallFilter())
        if field is not None and meta.fields[field].kind == "category":
            flt = view.CallFilter(categories={field: [meta.fields[field].values[0]]})
            view.calls_table(v, meta, pos, flt)
        view.calls_csv(frame, meta)
        head = frame.head(200)  # the rows that show their best sentence
        best_sentences(
            ws,
            v,
            head["transcript_id"].astype(str).tolist(),
            [v.position(int(t)) for t in head["lead_theme_id"]],
            lam=lam,
        )
        if len(frame):
            h = view.TermHighlighter(v.top_terms(pos, 20, lam), lemmas=lemmas)
            view.transcript_html(view.load_transcript(ws, str(frame["transcript_id"].iloc[0]), h))
        return frame

    def time_data() -> Any:
        v = fresh_version()
        out = {}
        if meta.date_field:
            out["trend"] = view.trend_frame(v, meta, freq)
            comparison = default_comparison(meta, freq)
            if comparison is not None:
                out["movers"] = view.movers_frame(
                    v, meta, freq, comparison.before, comparison.after
                )
        if field is not None:
            out["segments"] = view.segment_frame(v, meta, field)
        return out

    sections: list[tuple[str, Callable[[], Any], Callable[[Any], None]]] = [
        (
            "Choose K",
            choose_k_data,
            lambda d: charts.sweep_chart(
                view.scalar_columns(d[0].cells), d[0].recommended or None
            ).to_dict(),
        ),
        (
            "Theme map",
            map_data,
            lambda d: charts.theme_map_chart(d[0], d[1], tid).to_dict(),
        ),
        (
            "Theme cards",
            cards_data,
            lambda d: charts.term_chart(d, view.theme_names(version)[pos], width=560).to_dict(),
        ),
        ("Calls", calls_data, lambda d: None),
        (
            "Over time",
            time_data,
            lambda d: [
                charts.trend_chart(d["trend"], highlight=[tid], freq=freq).to_dict()
                if "trend" in d
                else None,
                charts.segment_chart(d["segments"], field=field or "").to_dict()
                if "segments" in d
                else None,
                charts.movers_chart(d["movers"]).to_dict() if "movers" in d else None,
            ],
        ),
    ]

    print(
        f"workspace {root}: {len(version.doc_ids):,} transcripts, K = {version.k}, "
        f"{len(version.vocabulary):,} terms, {len(meta.fields)} metadata fields"
    )
    print("\nloaded once per version (cached by the viewer)")
    for name, seconds in cold:
        print(f"  {name:<34} {seconds:8.3f} s")
    print(f"\nper section, median of {args.runs} runs after the first load")
    print(f"  {'section':<14} {'data':>8} {'charts':>8} {'total':>8}  target {TARGET_SECONDS} s")
    worst = 0.0
    for name, data_fn, chart_fn in sections:
        data = data_fn()  # warm-up run (fills the version's small caches)
        chart_fn(data)
        data_s = median_of(args.runs, data_fn)
        chart_s = median_of(args.runs, lambda chart_fn=chart_fn, data=data: chart_fn(data))
        total = data_s + chart_s
        worst = max(worst, total)
        verdict = "ok" if total < TARGET_SECONDS else "SLOW"
        print(f"  {name:<14} {data_s:8.3f} {chart_s:8.3f} {total:8.3f}  {verdict}")
    if tmp is not None:
        if args.keep:
            log(f"kept {root}")
        else:
            shutil.rmtree(tmp, ignore_errors=True)
    return 0 if worst < TARGET_SECONDS else 1


if __name__ == "__main__":
    sys.exit(main())
