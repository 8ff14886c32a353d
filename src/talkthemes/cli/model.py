"""``sweep`` and ``publish``: fit models over a grid of topic counts, and publish one.

The library modules behind these commands are imported inside them on purpose: they pull
in Dask, gensim, scikit-learn, pandas and Altair, and ``talkthemes --help`` imports every
command module.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from talkthemes.cli._common import (
    JsonOpt,
    WaitOpt,
    WorkspaceOpt,
    check_output,
    emit_json,
    lock,
    open_workspace,
    out,
    progress_bar,
    say,
    writing,
)
from talkthemes.cli._shared import ThemesTable, print_sweep, recommended_cell
from talkthemes.errors import ConfigError
from talkthemes.workspace import Workspace

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
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Fit LDA and NMF over a grid of topic counts and seeds; score them; recommend K."""
    # deferred: Dask, gensim and scikit-learn (see module doc)
    from talkthemes.sweep.run import run_sweep

    if chart is not None:
        check_output(chart, "--chart")
    ws = open_workspace(workspace)
    families = [f.strip() for f in family.split(",") if f.strip()] if family else None
    with lock(ws, "sweep", wait), progress_bar("sweep cells", enabled=not as_json) as update:
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
        # deferred: Altair and the PNG renderer (see module doc)
        from talkthemes.charts.render import save_chart
        from talkthemes.charts.sweep import sweep_chart

        recommended = {f: r.k for f, r in result.recommendations.items()}
        with writing(chart, "--chart"):
            files = save_chart(sweep_chart(result.cells, recommended), chart)
        say("Sweep chart: " + ", ".join(map(str, files)))
    if as_json:
        emit_json(result.to_json())
    else:
        print_sweep(result)
        say("Next: talkthemes publish --k K --family F (or --cell ID)")


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
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Publish a sweep cell as the next version (final model on all eligible transcripts)."""
    _check_choice(k=k, family=family, cell=cell, version=version, recommended=recommended)
    ws = open_workspace(workspace)
    with lock(ws, "publish", wait):
        if version is not None:
            _make_current(ws, version, as_json=as_json)
            return
        if recommended:
            family, k = recommended_cell(ws, family)
        if cell is not None and (k is not None or family is not None):
            _check_cell(ws, cell, k=k, family=family)
        # deferred: fitting and scoring the model (see module doc)
        from talkthemes.versions.publish import publish as run_publish

        with progress_bar("publish", enabled=not as_json) as update:
            result = run_publish(ws, k=k, family=family, cell=cell, force=force, progress=update)
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


def _check_cell(ws: Workspace, cell: str, *, k: int | None, family: str | None) -> None:
    """Refuse ``--k``/``--family`` that disagree with the cell ``--cell`` names."""
    with ws.store() as store:
        found = next(
            (c for sid in store.sweep_ids() for c in store.cells(sid) if c.cell == cell),
            None,
        )
    if found is None:
        return  # the publish step names the unknown cell
    if k is not None and found.k != k:
        raise ConfigError(
            f"--cell {cell} has K={found.k}, not --k {k}: give --cell alone, or --k with --family"
        )
    if family is not None and found.family != family:
        raise ConfigError(
            f"--cell {cell} is {found.family}, not --family {family}: give --cell alone, "
            "or --k with --family"
        )


def _make_current(ws: Workspace, version: int, *, as_json: bool) -> None:
    """``publish --version N``: make a kept version current again."""
    # deferred: loading a version reads numpy arrays (see module doc)
    from talkthemes.versions.load import load_version

    with ws.store() as store:
        known = [v.n for v in store.versions()]
        if version not in known:
            raise ConfigError(
                f"--version {version}: no such version (kept: "
                f"{', '.join(map(str, known)) or 'none'})"
            )
        store.set_current_version(version)
    v = load_version(ws, version)
    if as_json:
        emit_json({"version": v.n, "themes": v.summary(lam=ws.settings().view.relevance_lambda)})
    else:
        say(f"Version {v.n} is current again.")
