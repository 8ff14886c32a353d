"""``ingest`` and ``prepare``: read transcripts into the store, and prepare them for models.

The work happens in :class:`talkthemes.Workspace`; what ``prepare --explain`` prints is drawn
by :mod:`talkthemes.cli._explain` from the result's JSON document. The ingest outcomes' column
order is imported inside the command on purpose: the ingest package pulls in numpy, and
``talkthemes --help`` imports every command module.
"""

from __future__ import annotations

from contextlib import nullcontext
from pathlib import Path
from typing import Annotated, Any

import typer
from rich.table import Table

from talkthemes.cli._common import (
    JsonOpt,
    WaitOpt,
    WorkspaceOpt,
    cell,
    check_output,
    emit_json,
    open_workspace,
    out,
    progress_bar,
    say,
    waiting,
    writing,
)
from talkthemes.cli._explain import render_explain

__all__ = ["ingest", "prepare"]

#: Warnings and rejects listed one per line after an ingest (the rest are counted).
SHOWN = 20


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
    create: Annotated[
        bool, typer.Option("--create", help="Create the workspace if it does not exist yet.")
    ] = False,
    update_metadata: Annotated[
        bool,
        typer.Option(
            "--update-metadata",
            help="Let manifests overwrite stored metadata values (else such changes are rejected).",
        ),
    ] = False,
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Read transcripts (txt, vtt, csv, jsonl, parquet) and metadata manifests into the store."""
    if rejects is not None:
        check_output(rejects, "--rejects")
    ws = open_workspace(workspace, create=create, create_flag="--create")
    with (
        writing(rejects, "--rejects") if rejects is not None else nullcontext(),
        progress_bar("ingest", enabled=not as_json) as update,
    ):
        report = ws.ingest(
            paths,
            manifests=manifest or [],
            update_metadata=update_metadata,
            rejects_csv=rejects,
            wait=wait,
            on_wait=waiting,
            progress=update,
        )
    if as_json:
        emit_json(report.to_json())
    else:
        print_ingest_report(report)
        if rejects is not None:
            say(f"Rejected inputs written to {rejects}.")
    raise typer.Exit(report.exit_code)


def print_ingest_report(report: Any) -> None:
    """The tally per format, then the first warnings and rejects, one per line."""
    # deferred: see the module docstring
    from talkthemes.ingest.run import OUTCOMES

    table = Table(title=f"Ingest run {report.run_id}: {report.files} files", title_justify="left")
    table.add_column("format")
    for o in OUTCOMES:
        table.add_column(o, justify="right")
    for fmt, c in sorted(report.counts.items()):
        table.add_row(cell(fmt), *(f"{c[o]:,}" for o in OUTCOMES))
    table.add_row("total", *(f"{report.total(o):,}" for o in OUTCOMES), style="bold")
    out.print(table)
    if report.manifest_rows:
        say(f"Manifest rows applied: {report.manifest_rows:,}", console=out)
    for w in report.warnings[:SHOWN]:
        say(("warning", "yellow"), ": ", _where(w.source, w.row), ": ", w.message)
    if len(report.warnings) > SHOWN:
        say(f"… and {len(report.warnings) - SHOWN} more warnings (see --json).")
    for r in report.rejects[:SHOWN]:
        say(("rejected", "red"), ": ", _where(r.source, r.row), ": ", r.reason)
    if len(report.rejects) > SHOWN:
        say(f"… and {len(report.rejects) - SHOWN} more rejected (see --rejects FILE.csv).")


def _where(source: str, row: int | None) -> str:
    return f"{source}" + (f", row {row}" if row is not None else "")


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
    ws = open_workspace(workspace)
    with progress_bar("prepare", enabled=not as_json) as update:
        result = ws.prepare(force=force, wait=wait, on_wait=waiting, progress=update)
    # names removed by the chain are people's data: shown only where the workspace allows
    original = ws.settings().view.original_text
    if as_json:
        emit_json(result.to_json(original_text=original))
        return
    s = result.summary
    if result.cached:
        say(f"Nothing changed since prep {result.prep_hash[:12]}: using it as it is.")
    say(
        f"Prep {result.prep_hash[:12]}: {s.get('transcripts', 0):,} transcripts for training, "
        f"{s.get('terms', 0):,} terms, {s.get('excluded', 0):,} excluded.",
        console=out,
    )
    if explain:
        render_explain(out, result, original_text=original)
    say("Next: talkthemes sweep")
