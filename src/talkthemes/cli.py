"""The ``talkthemes`` command line: thin wrappers that parse, call one function, print.

Conventions (DESIGN.md "CLI conventions"): every command takes ``--workspace``; commands
that report take ``--json`` and then print exactly one JSON document on stdout, with
progress and warnings on stderr; exit codes 0 done, 2 usage or settings error, 3 done but
some inputs rejected, 4 alert asked for occurred, 1 unexpected.
"""

from __future__ import annotations

import json
import logging
import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated, Any

import click
import typer
from rich.console import Console
from rich.progress import (
    BarColumn,
    MofNCompleteColumn,
    Progress,
    TextColumn,
    TimeElapsedColumn,
    TimeRemainingColumn,
)
from rich.table import Table
from typer.core import TyperGroup

from talkthemes.errors import ConfigError, TalkthemesError
from talkthemes.workspace import Workspace, resolve_workspace


class _Group(TyperGroup):
    """Turns talkthemes errors into one line on stderr and the documented exit code."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except (
            typer.Exit,
            typer.Abort,
            click.exceptions.Exit,
            click.ClickException,
            click.exceptions.Abort,
        ):
            raise
        except TalkthemesError as exc:
            if _state["debug"]:
                raise
            err.print(f"talkthemes: {exc}", markup=False, highlight=False)
            raise typer.Exit(exc.exit_code) from None
        except KeyboardInterrupt:
            err.print("talkthemes: interrupted; finished work is kept", markup=False)
            raise typer.Exit(130) from None
        except Exception as exc:
            if _state["debug"]:
                raise
            err.print(
                f"talkthemes: unexpected error: {type(exc).__name__}: {exc} "
                "(run with --debug for the traceback)",
                markup=False,
                highlight=False,
            )
            raise typer.Exit(1) from None


app = typer.Typer(
    cls=_Group,
    name="talkthemes",
    help="Topic and theme discovery for transcript corpora.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)

out = Console()  # results
err = Console(stderr=True, soft_wrap=True)  # progress, warnings, messages (never wrapped)

_state: dict[str, bool] = {"debug": False}

WorkspaceOpt = Annotated[
    Path | None,
    typer.Option(
        "--workspace",
        "-w",
        help="Workspace folder (else $TALKTHEMES_WORKSPACE, else ./talkthemes-work).",
        show_default=False,
    ),
]
JsonOpt = Annotated[bool, typer.Option("--json", help="Print one JSON document on stdout.")]
WaitOpt = Annotated[
    bool, typer.Option("--wait", help="Wait for another command holding the workspace.")
]


@app.callback()
def _main(
    debug: Annotated[bool, typer.Option("--debug", help="Show tracebacks and debug logs.")] = False,
) -> None:
    _state["debug"] = debug
    logging.basicConfig(
        level=logging.DEBUG if debug else logging.WARNING,
        format="%(levelname)s %(name)s: %(message)s",
        stream=sys.stderr,
    )
    if not debug:  # libraries' progress chatter is not for users; our own warnings are
        for noisy in ("gensim", "distributed", "tornado", "bokeh", "streamlit"):
            logging.getLogger(noisy).setLevel(logging.ERROR)


def _emit_json(doc: Any) -> None:
    sys.stdout.write(json.dumps(doc, indent=2, ensure_ascii=False, default=str) + "\n")
    sys.stdout.flush()


@contextmanager
def _progress(label: str, *, enabled: bool = True) -> Iterator[Callable[[int, int, str], None]]:
    """A rich progress bar on stderr; yields ``update(done, total, current)``."""
    if not enabled:
        yield lambda done, total, current: None
        return
    columns = (
        TextColumn("[bold]{task.description}"),
        BarColumn(),
        MofNCompleteColumn(),
        TimeElapsedColumn(),
        TimeRemainingColumn(),
        TextColumn("{task.fields[current]}", style="dim"),
    )
    with Progress(*columns, console=err, transient=False) as bar:
        task = bar.add_task(label, total=None, current="")

        def update(done: int, total: int, current: str) -> None:
            name = current if len(current) <= 40 else "…" + current[-39:]
            bar.update(task, completed=done, total=total, current=name)

        yield update


def _workspace(path: Path | None) -> Workspace:
    return Workspace(resolve_workspace(path))


def _lock(ws: Workspace, command: str, wait: bool) -> Any:
    """The workspace's writer lock for ``command``; with ``wait``, say so and wait."""
    return ws.lock(command, wait=wait, on_wait=lambda m: err.print(f"{m}; waiting…"))


# -- init ---------------------------------------------------------------------------
@app.command()
def init(
    folder: Annotated[
        Path | None, typer.Argument(help="Folder to create (default: --workspace).")
    ] = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Create a workspace: a commented talkthemes.toml with every default and an empty store."""
    ws = Workspace(folder) if folder else _workspace(workspace)
    created = ws.init()
    if as_json:
        _emit_json({"workspace": str(ws.root), "created": created})
        return
    if created:
        err.print(f"Workspace ready at [bold]{ws.root}[/] (settings: {ws.settings_path.name}).")
    else:
        err.print(f"Workspace {ws.root} already exists; nothing changed.")


# -- ingest --------------------------------------------------------------------------
@app.command()
def ingest(
    paths: Annotated[
        list[Path], typer.Argument(help="Transcript files, tables and folders (recursive).")
    ],
    manifest: Annotated[
        list[Path] | None,
        typer.Option(
            "--manifest", "-m", help="Metadata table keyed by transcript id or file name."
        ),
    ] = None,
    rejects: Annotated[
        Path | None,
        typer.Option("--rejects", help="Write one CSV row per rejected input, with the reason."),
    ] = None,
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Read transcripts (txt, vtt, csv, jsonl, parquet) and metadata manifests into the store."""
    from talkthemes.ingest.run import ingest as run_ingest
    from talkthemes.ingest.run import write_rejects_csv

    ws = _workspace(workspace)
    if not ws.exists():
        ws.init()
    with (
        _lock(ws, "ingest", wait),
        _progress("ingest", enabled=not as_json) as update,
    ):
        report = run_ingest(ws, paths, manifests=manifest or [], progress=update)
    if rejects is not None:
        write_rejects_csv(rejects, report.rejects)
    if as_json:
        _emit_json(report.to_json())
    else:
        _print_ingest_report(report)
        if rejects is not None:
            err.print(f"Rejected inputs written to {rejects}.")
    raise typer.Exit(report.exit_code)


def _print_ingest_report(report: Any) -> None:
    from talkthemes.ingest.run import OUTCOMES

    table = Table(title=f"Ingest run {report.run_id}: {report.files} files", title_justify="left")
    table.add_column("format")
    for o in OUTCOMES:
        table.add_column(o, justify="right")
    for fmt, c in sorted(report.counts.items()):
        table.add_row(fmt, *(f"{c[o]:,}" for o in OUTCOMES))
    table.add_row("total", *(f"{report.total(o):,}" for o in OUTCOMES), style="bold")
    out.print(table)
    if report.manifest_rows:
        out.print(f"Manifest rows applied: {report.manifest_rows:,}")
    for w in report.warnings[:20]:
        where = f"{w.source}" + (f", row {w.row}" if w.row is not None else "")
        err.print(f"[yellow]warning[/]: {where}: {w.message}", markup=True, highlight=False)
    if len(report.warnings) > 20:
        err.print(f"… and {len(report.warnings) - 20} more warnings (see --json).")
    for r in report.rejects[:20]:
        where = f"{r.source}" + (f", row {r.row}" if r.row is not None else "")
        err.print(f"[red]rejected[/]: {where}: {r.reason}", markup=True, highlight=False)
    if len(report.rejects) > 20:
        err.print(f"… and {len(report.rejects) - 20} more rejected (see --rejects FILE.csv).")


# -- status --------------------------------------------------------------------------
def status_data(ws: Workspace) -> dict[str, Any]:
    """Everything ``status`` shows, as a JSON-ready dict."""
    ws.require()
    with ws.store() as store:
        summary = store.summary()
        stages = store.stages()
    return {"workspace": str(ws.root), **summary, "stages": stages}


@app.command()
def status(workspace: WorkspaceOpt = None, as_json: JsonOpt = False) -> None:
    """What the workspace holds: counts by role, format, month and metadata; stage of each step."""
    ws = _workspace(workspace)
    data = status_data(ws)
    if as_json:
        _emit_json(data)
        return
    out.print(f"[bold]Workspace[/] {data['workspace']}")
    out.print(
        f"{data['transcripts']:,} transcripts, {data['words']:,} words"
        + (
            f", dated {data['date_range'][0]} to {data['date_range'][1]}"
            if data["date_range"]
            else ", no dates"
        )
    )
    t = Table(title="By format", title_justify="left")
    t.add_column("format")
    t.add_column("transcripts", justify="right")
    for k, v in data["by_format"].items():
        t.add_row(k, f"{v:,}")
    out.print(t)
    t = Table(title="By role", title_justify="left")
    t.add_column("role")
    t.add_column("turns", justify="right")
    t.add_column("transcripts with it", justify="right")
    for k, v in data["turns_by_role"].items():
        t.add_row(k, f"{v:,}", f"{data['transcripts_with_role'].get(k, 0):,}")
    out.print(t)
    if data["by_month"]:
        t = Table(title="By month", title_justify="left")
        t.add_column("month")
        t.add_column("transcripts", justify="right")
        for k, v in data["by_month"].items():
            t.add_row(k, f"{v:,}")
        out.print(t)
    if data["metadata_fields"]:
        t = Table(title="Metadata fields", title_justify="left")
        t.add_column("field")
        t.add_column("transcripts", justify="right")
        t.add_column("distinct", justify="right")
        t.add_column("most common")
        for k, v in data["metadata_fields"].items():
            top = ", ".join(f"{val} ({n:,})" for val, n in v["top"].items())
            t.add_row(k, f"{v['transcripts']:,}", f"{v['distinct']:,}", top)
        out.print(t)
    if data["manifest_rows_without_transcript"]:
        out.print(
            f"{data['manifest_rows_without_transcript']:,} manifest ids have no stored "
            "transcript yet."
        )
    if data["interrupted_ingest_runs"]:
        out.print(
            f"[yellow]{data['interrupted_ingest_runs']} ingest run(s) did not finish[/]; "
            "what they stored is complete per transcript — re-run ingest to finish."
        )
    st = data["stages"]
    t = Table(title="Stages", title_justify="left")
    t.add_column("stage")
    t.add_column("state")
    t.add_row(
        "prepared",
        f"{st['prepared']['hash'][:12]} at {st['prepared']['at']}"
        if st["prepared"]
        else "not yet — run 'talkthemes prepare'",
    )
    t.add_row(
        "swept",
        f"sweep {st['swept']['id']} ({st['swept']['status']}) at {st['swept']['at']}"
        if st["swept"]
        else "not yet — run 'talkthemes sweep'",
    )
    t.add_row(
        "published",
        f"version {st['published']['version']} at {st['published']['at']}"
        if st["published"]
        else "not yet — run 'talkthemes publish'",
    )
    out.print(t)


# -- prepare -------------------------------------------------------------------------
@app.command()
def prepare(
    explain: Annotated[
        bool, typer.Option("--explain", help="Show what each step removed or joined, and why.")
    ] = False,
    force: Annotated[bool, typer.Option("--force", help="Run even if nothing changed.")] = False,
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Run the preprocessing chain (the prepare settings) into a cached prepared corpus."""
    from talkthemes.prepare.explain import explain_json, render_explain
    from talkthemes.prepare.run import run_prepare

    ws = _workspace(workspace)
    ws.require()
    with (
        _lock(ws, "prepare", wait),
        _progress("prepare", enabled=not as_json) as update,
    ):
        result = run_prepare(ws, force=force, progress=update)
    if as_json:
        doc = explain_json(result)
        _emit_json(doc)
        return
    s = result.summary
    if result.cached:
        err.print(f"Nothing changed since prep {result.prep_hash[:12]}: using it as it is.")
    out.print(
        f"Prep {result.prep_hash[:12]}: {s.get('transcripts', 0):,} transcripts for training, "
        f"{s.get('terms', 0):,} terms, {s.get('excluded', 0):,} excluded."
    )
    if explain:
        render_explain(out, result.explain)
    err.print("Next: talkthemes sweep")


# -- sweep -------------------------------------------------------------------------
def _fmt_metric(mean: float, spread: float) -> str:
    if mean != mean:  # NaN
        return "–"
    digits = 0 if abs(mean) >= 100 else 3
    if spread != spread or spread == 0:
        return f"{mean:,.{digits}f}"
    return f"{mean:,.{digits}f} ± {spread:,.{digits}f}"


def _print_sweep(result: Any) -> None:
    frame = result.cells
    metrics = [
        ("c_npmi", "C_NPMI"),
        ("c_v", "C_V"),
        ("u_mass", "U_Mass"),
        ("stability", "stability"),
        ("diversity", "diversity"),
        ("perplexity", "perplexity"),
        ("reconstruction_error", "recon. error"),
        ("fit_seconds", "fit s"),
    ]
    metrics = [(c, n) for c, n in metrics if c in frame.columns]
    title = f"Sweep {result.sweep_id}" + (" (already done; reused)" if result.cached else "")
    table = Table(title=title, title_justify="left", caption="mean ± sd over seeds; ★ recommended")
    table.add_column("family")
    table.add_column("K", justify="right")
    for _, name in metrics:
        table.add_column(name, justify="right")
    for (family, k), g in frame.groupby(["family", "k"], sort=True):
        rec = result.recommendations.get(family)
        star = rec is not None and rec.k == k
        cells = []
        for col, _ in metrics:
            vals = g[col].astype(float)
            cells.append(_fmt_metric(vals.mean(), vals.std(ddof=1) if len(vals) > 1 else 0.0))
        table.add_row(
            family, f"{k}{' ★' if star else ''}", *cells, style="bold green" if star else None
        )
    out.print(table)
    for family, rec in result.recommendations.items():
        out.print(
            f"[bold]{family.upper()}: recommended K = {rec.k}[/]"
            + (" [yellow](weak)[/]" if rec.weak else "")
        )
        out.print(f"  rule: {rec.rule}")
        for r in rec.reasons:
            out.print(f"  • {r}")
        if rec.runners_up:
            out.print(
                "  runners-up: " + "; ".join(f"K={r['k']} ({r['why_not']})" for r in rec.runners_up)
            )
    for f in result.failed:
        err.print(f"[red]cell failed[/]: {f['cell']}: {f['error']}")


@app.command()
def sweep(
    k: Annotated[str | None, typer.Option("--k", help="Topic counts: 4:30:2 or 5,10,15.")] = None,
    family: Annotated[str | None, typer.Option("--family", help="lda, nmf or lda,nmf.")] = None,
    seeds: Annotated[int | None, typer.Option("--seeds", min=1, help="Seeds per cell.")] = None,
    scheduler: Annotated[
        str | None, typer.Option("--scheduler", help="Dask scheduler address (tcp://host:8786).")
    ] = None,
    workers: Annotated[
        int | None, typer.Option("--workers", min=0, help="Local Dask workers (0 = per core).")
    ] = None,
    chart: Annotated[
        Path | None,
        typer.Option("--chart", help="Write the sweep chart as PATH.png and PATH.html."),
    ] = None,
    force: Annotated[bool, typer.Option("--force", help="Run again even if done.")] = False,
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Fit LDA and NMF over a grid of topic counts and seeds; score them; recommend K."""
    from talkthemes.sweep import run_sweep

    ws = _workspace(workspace)
    ws.require()
    families = [f.strip() for f in family.split(",") if f.strip()] if family else None
    with (
        _lock(ws, "sweep", wait),
        _progress("sweep cells", enabled=not as_json) as update,
    ):
        result = run_sweep(
            ws,
            k=k,
            families=families,
            seeds=seeds,
            scheduler=scheduler,
            workers=workers,
            force=force,
            progress=update,
        )
    if chart is not None:
        from talkthemes.charts import sweep_chart
        from talkthemes.render import save_chart

        files = save_chart(
            sweep_chart(result.cells, {f: r.k for f, r in result.recommendations.items()}), chart
        )
        err.print("Sweep chart: " + ", ".join(map(str, files)))
    if as_json:
        _emit_json(result.to_json())
    else:
        _print_sweep(result)
        err.print("Next: talkthemes publish --k K --family F (or --cell ID)")


# -- publish, themes, label, export -------------------------------------------------
@app.command()
def publish(
    k: Annotated[int | None, typer.Option("--k", help="Topic count to publish.")] = None,
    family: Annotated[str | None, typer.Option("--family", help="lda or nmf.")] = None,
    cell: Annotated[str | None, typer.Option("--cell", help="A cell id from the sweep.")] = None,
    version: Annotated[
        int | None, typer.Option("--version", help="Make an existing version current again.")
    ] = None,
    recommended: Annotated[
        bool, typer.Option("--recommended", help="Publish the sweep's recommendation.")
    ] = False,
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Publish a sweep cell as the next version (final model on all eligible transcripts)."""
    from talkthemes.versions import load_version
    from talkthemes.versions import publish as run_publish

    ws = _workspace(workspace)
    ws.require()
    with _lock(ws, "publish", wait):
        if version is not None:
            with ws.store() as store:
                known = [v["n"] for v in store.versions()]
                if version not in known:
                    raise ConfigError(
                        f"--version {version}: no such version (kept: "
                        f"{', '.join(map(str, known)) or 'none'})"
                    )
                store.set_current_version(version)
            v = load_version(ws, version)
            doc = {"version": v.n, "themes": v.summary(lam=ws.settings().view.relevance_lambda)}
            if as_json:
                _emit_json(doc)
            else:
                err.print(f"Version {v.n} is current again.")
            return
        if recommended:
            family, k = _recommended_cell(ws, family)
        steps: dict[str, Any] = {}
        with _progress("publish", enabled=not as_json) as update:

            def on_step(name: str, done: int, total: int) -> None:
                steps["last"] = name
                update(done, total, name)

            result = run_publish(ws, k=k, family=family, cell=cell, progress=on_step)
    if as_json:
        _emit_json(result.to_json())
        return
    out.print(
        f"Published version {result.version}: {result.family} K={result.k} "
        f"(cell {result.cell}, fit in {result.fit_seconds:.1f} s)."
    )
    _print_themes(result.themes)
    err.print('Next: talkthemes label THEME_ID "Label"  ·  talkthemes view')


def _recommended_cell(ws: Workspace, family: str | None) -> tuple[str, int]:
    """(family, K) of the latest finished sweep's recommendation (best family if none given)."""
    import pandas as pd

    from talkthemes.recommend import Recommendation, best_family

    with ws.store() as store:
        sweep = next(
            (s for s in map(store.get_sweep, store.sweep_ids()) if s and s.get("recommendations")),
            None,
        )
        cells = pd.DataFrame(store.cells(sweep["id"])) if sweep else pd.DataFrame()
    if sweep is None:
        raise ConfigError("no finished sweep with a recommendation: run 'talkthemes sweep'")
    recs = {f: Recommendation(**r) for f, r in sweep["recommendations"].items()}
    if family is None:
        scored = ws.sweeps_dir / str(sweep["id"]) / "cells.parquet"
        family = best_family(recs, pd.read_parquet(scored) if scored.exists() else cells)
    if family not in recs:
        raise ConfigError(f"the sweep has no recommendation for --family {family}")
    return family, recs[family].k


def _print_themes(themes: list[dict[str, Any]]) -> None:
    table = Table(title_justify="left")
    table.add_column("id", justify="right")
    table.add_column("theme")
    table.add_column("coverage", justify="right")
    table.add_column("mean share", justify="right")
    table.add_column("C_NPMI", justify="right")
    table.add_column("top terms (by relevance)")
    for t in themes:
        coh = t["coherence"].get("c_npmi")
        name = t["name"] + (" [dim](hidden)[/]" if t["hidden"] else "")
        table.add_row(
            str(t["theme_id"]),
            name,
            f"{t['coverage']:.1%}",
            f"{t['mean_share']:.1%}",
            "–" if coh is None else f"{coh:.3f}",
            ", ".join(t["top_terms"]),
        )
    out.print(table)


@app.command()
def themes(
    lam: Annotated[
        float | None,
        typer.Option(
            "--lambda",
            min=0.0,
            max=1.0,
            help="Relevance weight: 1 ranks by probability, 0 by lift (default 0.6).",
        ),
    ] = None,
    terms: Annotated[int, typer.Option("--terms", min=1, help="Terms per theme.")] = 10,
    version: Annotated[
        int | None, typer.Option("--version", help="Version (default current).")
    ] = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """The current version's themes: label, coverage, mean share, top terms, coherence."""
    from talkthemes.versions import load_version

    ws = _workspace(workspace)
    ws.require()
    v = load_version(ws, version)
    lam = ws.settings().view.relevance_lambda if lam is None else lam
    summary = v.summary(lam=lam, n_terms=terms)
    if as_json:
        _emit_json(
            {"version": v.n, "family": v.info["family"], "k": v.k, "lambda": lam, "themes": summary}
        )
        return
    out.print(
        f"Version {v.n}: {v.info['family']} K={v.k}, {len(v.doc_ids):,} transcripts (λ = {lam:g})"
    )
    _print_themes(summary)


@app.command()
def label(
    theme_id: Annotated[int, typer.Argument(help="Theme id (see 'talkthemes themes').")],
    text: Annotated[str | None, typer.Argument(help="The label.")] = None,
    note: Annotated[str | None, typer.Option("--note", help="A note kept with the label.")] = None,
    hide: Annotated[
        bool | None, typer.Option("--hide/--show", help="Hide the theme as noise, or show it.")
    ] = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Set a theme's label, note, or hidden flag; kept across versions by theme id."""
    ws = _workspace(workspace)
    ws.require()
    if text is None and note is None and hide is None:
        raise ConfigError("give a label text, --note, --hide or --show")
    with ws.store() as store:
        row = store.set_label(theme_id, label=text, note=note, hidden=hide)
    if as_json:
        _emit_json(row)
    else:
        err.print(
            f"Theme {theme_id}: label {row['label']!r}"
            + (f", note {row['note']!r}" if row["note"] else "")
            + (", hidden" if row["hidden"] else "")
        )


@app.command()
def export(
    out_path: Annotated[Path, typer.Option("--out", help="FILE.csv or FILE.parquet")],
    version: Annotated[
        int | None, typer.Option("--version", help="Version (default current).")
    ] = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Write every transcript's lead theme, lead share and share per theme to CSV or Parquet."""
    from talkthemes.versions import export_shares, load_version, write_table

    ws = _workspace(workspace)
    ws.require()
    frame = export_shares(load_version(ws, version))
    write_table(frame, out_path)
    if as_json:
        _emit_json({"out": str(out_path), "rows": len(frame), "columns": list(frame.columns)})
    else:
        err.print(f"Wrote {len(frame):,} transcripts to {out_path}.")


# -- view and report ------------------------------------------------------------------
@app.command()
def view(
    host: Annotated[
        str | None,
        typer.Option("--host", help="Address to bind (default 127.0.0.1: this machine)."),
    ] = None,
    port: Annotated[int | None, typer.Option("--port", help="Port (default 8501).")] = None,
    open_browser: Annotated[bool, typer.Option("--open", help="Open a browser tab.")] = False,
    workspace: WorkspaceOpt = None,
) -> None:
    """Serve the viewer: Choose K, Theme map, Theme cards, Calls, Over time."""
    ws = _workspace(workspace)
    ws.require()
    settings = ws.settings().view
    _serve(ws, host or settings.host, port or settings.port, open_browser=open_browser)


@app.command()
def report(
    out_path: Annotated[Path, typer.Option("--out", help="The HTML file to write.")] = Path(
        "themes.html"
    ),
    png: Annotated[
        Path | None, typer.Option("--png", help="Also write each chart as PNG into this folder.")
    ] = None,
    lam: Annotated[
        float | None,
        typer.Option("--lambda", min=0.0, max=1.0, help="Relevance weight for theme terms."),
    ] = None,
    excerpts: Annotated[
        int, typer.Option("--excerpts", min=0, help="Example excerpts per theme.")
    ] = 3,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Write one self-contained HTML report (opens offline): sweep, map, theme cards, trends."""
    from talkthemes.report import write_report

    ws = _workspace(workspace)
    ws.require()
    with _progress("report", enabled=not as_json) as update:
        path = write_report(
            ws,
            out_path,
            png_dir=png,
            lam=lam,
            excerpts=excerpts,
            progress=lambda s, d, t: update(d, t, s),
        )
    if as_json:
        _emit_json({"out": str(path), "png_dir": None if png is None else str(png)})
    else:
        err.print(f"Report written to {path}" + (f"; charts as PNG in {png}" if png else ""))


# -- demo ----------------------------------------------------------------------------
@app.command()
def demo(
    size: Annotated[int, typer.Option("--size", min=20, help="Number of invented calls.")] = 3000,
    seed: Annotated[int, typer.Option("--seed", help="Random seed of the generator.")] = 7,
    k: Annotated[str, typer.Option("--k", help="Topic counts swept on the demo.")] = "6:16:2",
    seeds: Annotated[int, typer.Option("--seeds", min=1, help="Seeds per cell.")] = 2,
    serve: Annotated[
        bool, typer.Option("--serve/--no-serve", help="Serve the viewer at the end.")
    ] = True,
    refresh: Annotated[
        bool,
        typer.Option(
            "--refresh/--no-refresh",
            help="Hold back the last month, then refresh with it (shows a new theme).",
        ),
    ] = True,
    host: Annotated[str, typer.Option("--host", help="Viewer address.")] = "127.0.0.1",
    port: Annotated[int, typer.Option("--port", help="Viewer port.")] = 8501,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Generate the invented demo corpus and run the whole pipeline on it, then view it."""
    from talkthemes.demo import write_demo
    from talkthemes.ingest.run import ingest as run_ingest
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep import run_sweep
    from talkthemes.versions import publish as run_publish

    ws = _workspace(workspace)
    ws.init()
    with ws.store() as store:
        existing = store.current_version()
    if existing is not None:  # a second run keeps the versions, labels and notes made so far
        err.print(
            f"{ws.root} already holds the demo (version {existing['n']} is current); "
            "delete the folder to build it again."
        )
        if as_json:
            _emit_json({"workspace": str(ws.root), "existing_version": existing["n"]})
        elif serve:
            _serve(ws, host, port)
        return
    source = ws.root / "demo-source"
    err.print(f"Writing {size:,} invented calls to {source} …")
    files = write_demo(source, size=size, seed=seed, hold_back_last_month=refresh)
    doc: dict[str, Any] = {"workspace": str(ws.root)}
    quiet = as_json
    with ws.lock("demo"):
        with _progress("ingest", enabled=not quiet) as update:
            report = run_ingest(ws, [files.exports], manifests=[files.manifest], progress=update)
        doc["ingest"] = report.to_json()["totals"]
        with _progress("prepare", enabled=not quiet) as update:
            prep = run_prepare(ws, progress=update)
        doc["prep"] = prep.summary
        with _progress("sweep cells", enabled=not quiet) as update:
            result = run_sweep(ws, k=k, seeds=seeds, progress=update)
        if not quiet:
            _print_sweep(result)
        family, best_k = _recommended_cell(ws, None)
        with _progress("publish", enabled=not quiet) as update:
            published = run_publish(
                ws, k=best_k, family=family, progress=lambda s, d, t: update(d, t, s)
            )
        doc["published"] = {"version": published.version, "family": family, "k": best_k}
        if refresh and files.inbox is not None:
            from talkthemes.refresh import refresh as run_refresh

            if not quiet:
                out.print(f"Published version {published.version}: {family} K={best_k}.")
                _print_themes(published.themes)
                err.print("Now the held-back last month arrives: refreshing …")
            with _progress("refresh", enabled=not quiet) as update:
                refreshed = run_refresh(ws, ingest_paths=[files.inbox], progress=update)
            doc["refresh"] = refreshed.to_json()
    if as_json:
        _emit_json(doc)
    elif "refresh" in doc:
        r = doc["refresh"]
        counts = r.get("counts", {})
        out.print(
            f"Refresh published version {r.get('version')}: "
            f"{counts.get('carried', 0)} themes carried, {counts.get('new', 0)} new, "
            f"{counts.get('retired', 0)} retired."
        )
        for t in r.get("new_themes", []):
            out.print(f"  new theme {t['theme_id']}: {', '.join(t['top_terms'][:6])}")
    else:
        out.print(f"Published version {published.version}: {family} K={best_k}.")
        _print_themes(published.themes)
    if serve and not as_json:
        _serve(ws, host, port)


def _serve(ws: Workspace, host: str, port: int, *, open_browser: bool = False) -> None:
    from talkthemes.serve import serve as run_serve

    raise typer.Exit(run_serve(ws.root, host=host, port=port, open_browser=open_browser))


def _register_extras() -> None:
    from talkthemes.cli_refresh import register

    register(app)


_register_extras()


def main() -> None:
    """Console entry point."""
    app()


if __name__ == "__main__":
    main()
