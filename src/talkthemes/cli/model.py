"""``sweep`` and ``publish``: fit models over a grid of topic counts, and publish one.

The work happens in :class:`talkthemes.Workspace`. The chart modules are imported inside
``sweep`` on purpose: they pull in Altair and pandas, and ``talkthemes --help`` imports
every command module.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from talkthemes import Workspace
from talkthemes.cli._common import (
    JsonOpt,
    LanguageOpt,
    WaitOpt,
    WorkspaceOpt,
    check_output,
    each_language,
    emit_json,
    language_heading,
    open_workspace,
    out,
    progress_bar,
    say,
    waiting,
    writing,
)
from talkthemes.cli._shared import ThemesTable, print_sweep
from talkthemes.errors import ConfigError

__all__ = ["publish", "sweep"]


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
    sample: Annotated[
        int | None,
        typer.Option(
            "--sample",
            help="Sweep a stratified random sample of N calls (by month and segment fields).",
        ),
    ] = None,
    language: LanguageOpt = None,
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Fit LDA and NMF over a grid of topic counts and seeds; score them; recommend K — for
    the main language and each language lane (or the one --language names)."""
    if chart is not None:
        check_output(chart, "--chart")
    ws = open_workspace(workspace)
    todo = each_language(ws, language)
    several = len(todo) > 1
    families = [f.strip() for f in family.split(",") if f.strip()] if family else None
    docs = {}
    for code, lane in todo:
        language_heading(code, lane, several and not as_json)
        with progress_bar(
            f"sweep cells {code}" if several else "sweep cells", enabled=not as_json
        ) as update:
            result = lane.sweep(
                k=k,
                families=families,
                seeds=seeds,
                scheduler=scheduler,
                workers=workers,
                force=force,
                wait=wait,
                on_wait=waiting,
                progress=update,
                sample=sample,
            )
        if chart is not None:
            # deferred: Altair and the PNG renderer (see module doc)
            from talkthemes.charts.render import save_chart
            from talkthemes.charts.sweep import sweep_chart

            recommended = {f: r.k for f, r in result.recommendations.items()}
            target = chart.with_name(f"{chart.name}.{code}") if code != todo[0][0] else chart
            with writing(target, "--chart"):
                files = save_chart(sweep_chart(result.cells, recommended), target)
            say("Sweep chart: " + ", ".join(map(str, files)))
        if as_json:
            docs[code] = result.to_json()
        else:
            print_sweep(result)
    if as_json:
        emit_json(docs[todo[0][0]] if not several else {"languages": docs})
    else:
        say(
            "Next: talkthemes publish --k K --family F (or --cell ID)"
            + (" [--language CODE]" if several else "")
        )


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
    force: Annotated[
        bool, typer.Option("--force", help="Publish again even if it is the current version.")
    ] = False,
    language: LanguageOpt = None,
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Publish a sweep cell as the next version (final model on all eligible transcripts) of
    the main language, or of the language --language names."""
    _check_choice(k=k, family=family, cell=cell, version=version, recommended=recommended)
    ws = open_workspace(workspace, language=language)
    if version is not None:
        _make_current(ws, version, wait=wait, as_json=as_json)
        return
    with progress_bar("publish", enabled=not as_json) as update:
        result = ws.publish(
            k=k,
            family=family,
            cell=cell,
            recommended=recommended,
            force=force,
            wait=wait,
            on_wait=waiting,
            progress=update,
        )
    if as_json:
        emit_json(result.to_json())
        return
    say(result.message, console=out)
    if result.status == "already_current":
        return
    out.print(ThemesTable(result.themes))
    say('Next: talkthemes label THEME_ID "Label"  ·  talkthemes view')


def _check_choice(
    *, k: int | None, family: str | None, cell: str | None, version: int | None, recommended: bool
) -> None:
    """Refuse options that name two different things to publish."""
    if version is not None and (k is not None or family or cell or recommended):
        raise ConfigError(
            "--version makes a published version current again; "
            "it does not go with --k, --family, --cell or --recommended"
        )
    if recommended and (k is not None or cell):
        raise ConfigError("--recommended chooses K itself: give it without --k and --cell")


def _make_current(ws: Workspace, version: int, *, wait: bool, as_json: bool) -> None:
    """``publish --version N``: make a kept version current again."""
    v = ws.make_current(version, wait=wait, on_wait=waiting)
    if as_json:
        emit_json({"version": v.n, "themes": v.summary(lam=ws.settings().view.relevance_lambda)})
    else:
        say(f"Version {v.n} is current again.")
