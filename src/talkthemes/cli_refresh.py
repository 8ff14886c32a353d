"""The ``refresh`` and ``assign`` commands, added to the ``talkthemes`` app by :func:`register`.

Thin wrappers, like the rest of the command line (DESIGN.md "CLI conventions"): parse,
take the workspace lock where the command writes, call one library function, print. With
``--json`` exactly one JSON document goes to stdout; progress and messages go to stderr.

Exit codes of ``refresh``: 0 published, or nothing new to do; 3 done, but some inputs were
rejected; 4 ``--alert-on-new`` was given and a new theme appeared (4 wins over 3: the
JSON document still lists the rejects); 2 usage or settings error, or the workspace is busy;
1 anything unexpected. ``assign``: 0 done; 3 some inputs rejected; 2 usage; 1 unexpected.
"""

# No ``from __future__ import annotations`` here: the options' annotations refer to the
# base app's shared option types, bound inside register(), and Typer reads them at run time.
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any

import typer

if TYPE_CHECKING:
    from talkthemes.assign import AssignResult
    from talkthemes.refresh import RefreshResult

__all__ = ["register"]

_COMMANDS = ("refresh", "assign")


def register(app: typer.Typer) -> None:
    """Add ``refresh`` and ``assign`` to ``app`` (once; a second call changes nothing)."""
    from talkthemes import cli as base

    have = {c.name or (c.callback.__name__ if c.callback else "") for c in app.registered_commands}
    if set(_COMMANDS) <= have:
        return

    @app.command("refresh")
    def refresh_command(
        ingest: Annotated[
            list[Path] | None,
            typer.Option(
                "--ingest",
                "-i",
                help="Files or folders to ingest first (default: \\[refresh] inbox). A "
                "manifest.csv/.parquet/.jsonl at the top of a folder is read as its manifest.",
            ),
        ] = None,
        manifest: Annotated[
            list[Path] | None,
            typer.Option("--manifest", "-m", help="Metadata table for the ingested transcripts."),
        ] = None,
        resweep: Annotated[
            bool, typer.Option("--resweep", help="Choose K again with the \\[sweep] grid.")
        ] = False,
        alert_on_new: Annotated[
            bool,
            typer.Option("--alert-on-new", help="Exit with code 4 when a new theme appears."),
        ] = False,
        workspace: base.WorkspaceOpt = None,
        wait: base.WaitOpt = False,
        as_json: base.JsonOpt = False,
    ) -> None:
        """Ingest new transcripts, retrain, keep theme ids and labels, report drift, publish."""
        from talkthemes.refresh import refresh

        ws = base._workspace(workspace)
        ws.require()
        with (
            base._lock(ws, "refresh", wait),
            base._progress("refresh", enabled=not as_json) as update,
        ):
            result = refresh(
                ws,
                ingest_paths=ingest or None,
                manifests=manifest or [],
                resweep=resweep,
                alert_on_new=alert_on_new,
                progress=update,
            )
        if as_json:
            base._emit_json(result.to_json())
        else:
            _print_refresh(result)
        raise typer.Exit(result.exit_code)

    @app.command("assign")
    def assign_command(
        paths: Annotated[
            list[Path], typer.Argument(help="Transcript files, tables and folders (recursive).")
        ],
        out_path: Annotated[Path, typer.Option("--out", help="FILE.csv or FILE.parquet")],
        store: Annotated[
            bool, typer.Option("--store", help="Also ingest the transcripts into the store.")
        ] = False,
        manifest: Annotated[
            list[Path] | None,
            typer.Option("--manifest", "-m", help="Metadata table (with --store)."),
        ] = None,
        version: Annotated[
            int | None, typer.Option("--version", help="Version (default current).")
        ] = None,
        workspace: base.WorkspaceOpt = None,
        wait: base.WaitOpt = False,
        as_json: base.JsonOpt = False,
    ) -> None:
        """Theme shares of new transcripts under the current version, to CSV or Parquet."""
        from contextlib import nullcontext

        from talkthemes.assign import assign

        ws = base._workspace(workspace)
        ws.require()
        if manifest and not store:
            from talkthemes.errors import ConfigError

            raise ConfigError("--manifest applies only with --store")
        lock: Any = base._lock(ws, "assign", wait) if store else nullcontext()
        with lock, base._progress("assign", enabled=not as_json) as update:
            result = assign(
                ws,
                paths,
                out=out_path,
                store=store,
                manifests=manifest or [],
                version=version,
                progress=update,
            )
        if as_json:
            base._emit_json(result.to_json())
        else:
            _print_assign(result)
        raise typer.Exit(result.exit_code)


def _print_refresh(result: "RefreshResult") -> None:
    from talkthemes import cli as base

    if result.ingest is not None:
        totals = result.ingest["totals"]
        base.err.print(
            "Ingested: "
            + ", ".join(f"{totals[k]:,} {k}" for k in ("added", "unchanged", "duplicate"))
            + f", {result.rejected:,} rejected."
        )
        for r in result.ingest["rejects"][:20]:
            where = r["source"] + (f", row {r['row']}" if r["row"] is not None else "")
            base.err.print(f"rejected: {where}: {r['reason']}", markup=False, highlight=False)
    if result.status == "nothing_new":
        base.out.print(
            f"Nothing new to do: no new transcripts since version {result.previous_version}."
        )
        return
    c = result.counts
    base.out.print(
        f"Published version {result.version} ({result.family} K={result.k}) from "
        f"{result.new_transcripts:,} new transcripts: {c.get('carried', 0)} themes carried, "
        f"{c.get('new', 0)} new, {c.get('retired', 0)} retired."
    )
    if result.resweep:
        base.out.print(f"K was chosen again: {result.resweep_reason}.", markup=False)
    for t in result.new_themes:
        base.out.print(
            f"  new theme {t['theme_id']}: {', '.join(t['top_terms'][:8])}", markup=False
        )
    for t in result.retired_themes:
        base.out.print(f"  retired theme {t['theme_id']}: {t['name']}", markup=False)
    if result.drift_files:
        base.err.print(f"Drift report: {result.drift_files[1]}")


def _print_assign(result: "AssignResult") -> None:
    from talkthemes import cli as base

    base.out.print(
        f"Assigned {result.rows:,} transcripts with version {result.version} "
        f"({result.per_second:,.0f} per second) to {result.out}."
    )
    if result.unassigned:
        base.out.print(
            f"{result.unassigned:,} had no word in the version's vocabulary: empty lead theme, "
            "reason in the 'reason' column."
        )
    for r in result.rejects[:20]:
        where = r.source + (f", row {r.row}" if r.row is not None else "")
        base.err.print(f"rejected: {where}: {r.reason}", markup=False, highlight=False)
    if len(result.rejects) > 20:
        base.err.print(f"… and {len(result.rejects) - 20} more rejected (see --json).")
