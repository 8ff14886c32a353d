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

from talkthemes import Workspace
from talkthemes.cli._common import (
    LANGUAGE_KINDS,
    JsonOpt,
    LanguageOpt,
    WaitOpt,
    WorkspaceOpt,
    cell,
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
    if report.languages and not (len(report.languages) == 1 and report.languages[0].kind == "main"):
        say("Languages: ", language_summary(report.languages, report.lanes), console=out)
    for w in report.warnings[:SHOWN]:
        say(("warning", "yellow"), ": ", _where(w.source, w.row), ": ", w.message)
    if len(report.warnings) > SHOWN:
        say(f"… and {len(report.warnings) - SHOWN} more warnings (see --json).")
    for r in report.rejects[:SHOWN]:
        say(("rejected", "red"), ": ", _where(r.source, r.row), ": ", r.reason)
    if len(report.rejects) > SHOWN:
        say(f"… and {len(report.rejects) - SHOWN} more rejected (see --rejects FILE.csv).")


def language_summary(states: Any, lanes: Any = ()) -> str:
    """``en 2,700 (themed here) · es 300 (lane languages/es, 300 copied in) · …``."""
    copied = {lane.language: lane for lane in lanes}
    parts = []
    for st in states:
        if st.kind == "lane":
            sync = copied.get(st.code)
            what = f"lane languages/{st.code}"
            if sync is not None and sync.busy:
                what += ", busy: copied in at the next ingest"
            elif sync is not None and (sync.added or sync.removed):
                what += f", {sync.added:,} copied in" + (
                    f", {sync.removed:,} moved out" if sync.removed else ""
                )
        else:
            what = LANGUAGE_KINDS[st.kind]
        parts.append(f"{st.code} {st.calls:,} ({what})")
    return " · ".join(parts)


def _where(source: str, row: int | None) -> str:
    return f"{source}" + (f", row {row}" if row is not None else "")


def prepare(
    explain: Annotated[
        bool, typer.Option("--explain", help="Show what each step removed or joined, and why.")
    ] = False,
    force: Annotated[bool, typer.Option("--force", help="Run even if nothing changed.")] = False,
    language: LanguageOpt = None,
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Run the preprocessing chain (the prepare settings) into a cached prepared corpus, for
    the main language and each language lane (or the one --language names)."""
    ws = open_workspace(workspace)
    todo = each_language(ws, language)
    several = len(todo) > 1
    docs = {}
    for code, lane in todo:
        language_heading(code, lane, several and not as_json)
        with progress_bar(f"prepare {code}" if several else "prepare", enabled=not as_json) as up:
            result = lane.prepare(force=force, wait=wait, on_wait=waiting, progress=up)
        # names removed by the chain are people's data: shown only where the workspace allows
        original = ws.settings().view.original_text
        if as_json:
            docs[code] = result.to_json(original_text=original)
            continue
        s = result.summary
        if result.cached:
            say(f"Nothing changed since prep {result.prep_hash[:12]}: using it as it is.")
        say(
            f"Prep {result.prep_hash[:12]}: {s.get('transcripts', 0):,} transcripts for "
            f"training, {s.get('terms', 0):,} terms, {s.get('excluded', 0):,} excluded.",
            console=out,
        )
        if explain:
            render_explain(out, result, original_text=original)
    if as_json:
        emit_json(docs[todo[0][0]] if not several else {"languages": docs})
        return
    if explain:
        print_chains(ws)
    say("Next: talkthemes sweep")


def print_chains(ws: Workspace) -> None:
    """Which chain each language's calls took (prepare --explain): the main language's, a
    lane's, or none."""
    states = ws.languages()
    if len(states) < 2 and all(s.kind == "main" for s in states):
        return
    main = ws.main_language()
    t = Table(title="Which chain each call took", title_justify="left")
    for name in ("language", "calls", "given", "detected", "chain"):
        t.add_column(name, justify="right" if name in ("calls", "given", "detected") else "left")
    for st in states:
        if st.kind == "lane":
            chain = f"its lane, languages/{st.code}"
        else:
            chain = LANGUAGE_KINDS[st.kind].replace("themed here", f"{main}: this workspace")
        t.add_row(cell(st.code), f"{st.calls:,}", f"{st.given:,}", f"{st.detected:,}", cell(chain))
    out.print(t)
