"""``view``, ``report`` and ``demo``: the viewer, the offline HTML report, the guided demo.

The work happens in :class:`talkthemes.Workspace`. The faces these commands start (the
viewer's server, the report, the demo's corpus writer) are imported inside them on purpose:
they pull in Streamlit, Altair and pandas, and ``talkthemes --help`` imports every command
module.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any, NoReturn

import typer

from talkthemes import Workspace
from talkthemes.cli._common import (
    JsonOpt,
    LanguageOpt,
    WorkspaceOpt,
    check_output,
    each_language,
    emit_json,
    open_workspace,
    out,
    progress_bar,
    say,
)
from talkthemes.cli._shared import ThemesTable, print_sweep

__all__ = ["demo", "report", "view"]


def view(
    host: Annotated[
        str | None,
        typer.Option("--host", help="Address to bind (default 127.0.0.1: this machine)."),
    ] = None,
    port: Annotated[int | None, typer.Option("--port", help="Port (default 8501).")] = None,
    open_browser: Annotated[bool, typer.Option("--open", help="Open a browser tab.")] = False,
    language: LanguageOpt = None,
    workspace: WorkspaceOpt = None,
) -> None:
    """Serve the viewer: Choose K, Theme map, Theme cards, Calls, Over time."""
    ws = open_workspace(workspace, language=language)
    settings = ws.settings().view
    _serve(ws, host or settings.host, port or settings.port, open_browser=open_browser)


def _serve(ws: Workspace, host: str, port: int, *, open_browser: bool = False) -> NoReturn:
    # deferred: see the module docstring
    from talkthemes.serve import serve as run_serve

    raise typer.Exit(run_serve(ws.root, host=host, port=port, open_browser=open_browser))


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
    language: LanguageOpt = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Write one self-contained HTML report (opens offline): sweep, map, theme cards, trends."""
    # deferred: see the module docstring
    from talkthemes.report import write_report

    check_output(out_path, "--out")
    if png is not None:
        check_output(png, "--png", folder=True)
    ws = open_workspace(workspace)
    todo = each_language(ws, language)
    if len(todo) > 1:  # one report per language with a version: themes.html, themes.es.html
        todo = [todo[0]] + [(c, lane) for c, lane in todo[1:] if lane.current_version()]
    written = []
    for i, (code, lane) in enumerate(todo):
        target = out_path if i == 0 else out_path.with_name(f"{out_path.stem}.{code}.html")
        pngs = png if png is None or i == 0 else png / code
        with progress_bar(
            f"report {code}" if len(todo) > 1 else "report", enabled=not as_json
        ) as up:
            path = write_report(
                lane.folder, target, png_dir=pngs, lam=lam, excerpts=excerpts, progress=up
            )
        written.append({"language": code, "out": str(path), "png_dir": pngs and str(pngs)})
        if not as_json:
            say(
                f"Report{' (' + code + ')' if len(todo) > 1 else ''} written to {path}"
                + (f"; charts as PNG in {pngs}" if pngs else "")
            )
    if as_json:
        doc = dict(written[0])
        doc.pop("language")
        if len(written) > 1:
            doc["languages"] = written
        emit_json(doc)


def _demo_languages(value: str) -> str:
    # deferred: see the module docstring
    from talkthemes.demo.writer import LANGUAGES as DEMO_LANGUAGES

    codes = [code.strip().lower() for code in value.split(",") if code.strip()]
    unknown = [code for code in codes if code not in DEMO_LANGUAGES]
    if unknown or not codes:
        what = f"unknown language {unknown[0]!r}" if unknown else "no language given"
        raise typer.BadParameter(f"{what}; supported: {', '.join(DEMO_LANGUAGES)}")
    return ",".join(dict.fromkeys(codes))


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
    languages: Annotated[
        str,
        typer.Option(
            "--languages",
            callback=_demo_languages,
            help=(
                "Lines of the invented utility to call, comma-separated: en, es "
                "(en,es: three English calls to one Spanish)."
            ),
        ),
    ] = "en",
    host: Annotated[str, typer.Option("--host", help="Viewer address.")] = "127.0.0.1",
    port: Annotated[int, typer.Option("--port", help="Viewer port.")] = 8501,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Generate the invented demo corpus and run the whole pipeline on it, then view it."""
    ws = Workspace.create(workspace)  # the demo builds its own workspace
    existing = ws.current_version()
    if existing is not None:  # a second run keeps the versions, labels and notes made so far
        say(
            f"{ws.root} already holds the demo (version {existing} is current); "
            "delete the folder to build it again."
        )
        if as_json:
            emit_json({"workspace": str(ws.root), "existing_version": existing})
        elif serve:
            _serve(ws, host, port)
        return
    with ws.hold("demo"):
        doc, themes = _run_demo(
            ws,
            size=size,
            seed=seed,
            k=k,
            seeds=seeds,
            refresh=refresh,
            quiet=as_json,
            languages=tuple(languages.split(",")),
        )
    if as_json:
        emit_json(doc)
        return
    if "refresh" in doc:
        r = doc["refresh"]
        counts = r.get("counts", {})
        say(
            f"Refresh published version {r.get('version')}: "
            f"{counts.get('carried', 0)} themes carried, {counts.get('new', 0)} new, "
            f"{counts.get('retired', 0)} retired.",
            console=out,
        )
        for t in r.get("new_themes", []):
            say(
                f"  new theme {t['theme_id']}: ",
                t.get("name") or "",
                " (",
                ", ".join(w.replace("_", " ") for w in t["top_terms"][:6]),
                ")",
                console=out,
            )
    else:
        published = doc["published"]
        say(
            f"Published version {published['version']}: {published['family']} K={published['k']}.",
            console=out,
        )
        out.print(ThemesTable(themes))
    if serve:
        _serve(ws, host, port)


def _run_demo(
    ws: Workspace,
    *,
    size: int,
    seed: int,
    k: str,
    seeds: int,
    refresh: bool,
    quiet: bool,
    languages: tuple[str, ...] = ("en",),
) -> tuple[dict[str, Any], list[dict[str, Any]]]:
    """Write the invented corpus into the workspace and run every stage on it (the caller
    holds the workspace, so each stage uses that lock).

    Returns the JSON document of the run and the published version's themes.
    """
    # deferred: the demo's generator is only needed here (see the module docstring)
    from talkthemes.demo.writer import write_demo

    source = ws.root / "demo-source"
    lines = f" ({', '.join(languages)})" if languages != ("en",) else ""
    say(f"Writing {size:,} invented calls{lines} to {source} …")
    files = write_demo(
        source, size=size, seed=seed, hold_back_last_month=refresh, languages=languages
    )
    doc: dict[str, Any] = {"workspace": str(ws.root)}
    with progress_bar("ingest", enabled=not quiet) as update:
        report = ws.ingest([files.exports], manifests=[files.manifest], progress=update)
    doc["ingest"] = report.to_json()["totals"]
    with progress_bar("prepare", enabled=not quiet) as update:
        prep = ws.prepare(progress=update)
    doc["prep"] = prep.summary
    with progress_bar("sweep cells", enabled=not quiet) as update:
        result = ws.sweep(k=k, seeds=seeds, progress=update)
    if not quiet:
        print_sweep(result)
    best = ws.recommendation()
    family, best_k = best.family, best.k
    with progress_bar("publish", enabled=not quiet) as update:
        published = ws.publish(k=best_k, family=family, progress=update)
    doc["published"] = {"version": published.version, "family": family, "k": best_k}
    if refresh and files.inbox is not None and not quiet:
        say(f"Published version {published.version}: {family} K={best_k}.", console=out)
        out.print(ThemesTable(published.themes))
    for code, lane in ws.languages_themed()[1:]:  # each other line with enough calls
        if not quiet:
            say((f"Language {code}", "bold"), f" ({lane.root})", console=out)
        with progress_bar(f"prepare {code}", enabled=not quiet) as update:
            lane.prepare(progress=update)
        with progress_bar(f"sweep cells {code}", enabled=not quiet) as update:
            lane_sweep = lane.sweep(k=k, seeds=seeds, progress=update)
        if not quiet:
            print_sweep(lane_sweep)
        choice = lane.recommendation()
        with progress_bar(f"publish {code}", enabled=not quiet) as update:
            lane_published = lane.publish(k=choice.k, family=choice.family, progress=update)
        doc.setdefault("languages", {})[code] = {
            "version": lane_published.version,
            "family": choice.family,
            "k": choice.k,
        }
        if not quiet:
            say(
                f"Published {code} version {lane_published.version}: {choice.family} K={choice.k}.",
                console=out,
            )
            out.print(ThemesTable(lane_published.themes))
    if refresh and files.inbox is not None:
        if not quiet:
            say("Now the held-back last month arrives: refreshing …")
        with progress_bar("refresh", enabled=not quiet) as update:
            refreshed = ws.refresh(ingest=[files.inbox], progress=update)
        doc["refresh"] = refreshed.to_json()
        if not quiet:
            for code, lane_refresh in refreshed.languages.items():
                c = lane_refresh.counts
                say(
                    f"Refresh of {code}: version {lane_refresh.version}, "
                    f"{c.get('carried', 0)} themes carried, {c.get('new', 0)} new.",
                    console=out,
                )
    return doc, published.themes
