"""``refresh`` and ``assign``: bring new transcripts to the published themes.

Exit codes of ``refresh``: 0 published, or nothing new to do; 3 done, but some inputs were
rejected; 4 ``--alert-on-new`` was given and a new theme was alerted (every piece of
evidence held), or ``--alert-on-rise`` and a carried theme rose significantly (4 wins over
3: the JSON document still lists the rejects); 2 usage or settings error, or the workspace
is busy; 1 anything unexpected. ``assign``: 0 done; 3 some inputs rejected; 2 usage (no transcript
found, every path missing, an unwritable ``--out``); 1 unexpected.

The work happens in :class:`talkthemes.Workspace`, which imports numpy, scipy, gensim and
pandas only when a command first needs them (``talkthemes --help`` imports every command
module).
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import typer

from talkthemes.cli._common import (
    JsonOpt,
    WaitOpt,
    WorkspaceOpt,
    check_output,
    emit_json,
    open_workspace,
    out,
    progress_bar,
    say,
    waiting,
)
from talkthemes.errors import ConfigError, InputError

__all__ = ["assign", "refresh"]

#: Rejects listed one per line (the rest are counted).
SHOWN = 20


def refresh(
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
        typer.Option(
            "--alert-on-new",
            help="Exit with code 4 when a new theme is alerted (enough calls, not a split, "
            "new words, not marked not a theme).",
        ),
    ] = False,
    alert_on_rise: Annotated[
        bool,
        typer.Option(
            "--alert-on-rise",
            help="Exit with code 4 when a carried theme's share of the new calls rose "
            "significantly.",
        ),
    ] = False,
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Ingest new transcripts, retrain, keep theme ids and labels, report drift, publish."""
    ws = open_workspace(workspace)
    with progress_bar("refresh", enabled=not as_json) as update:
        result = ws.refresh(
            ingest=ingest or None,
            manifests=manifest or [],
            resweep=resweep,
            alert_on_new=alert_on_new,
            alert_on_rise=alert_on_rise,
            wait=wait,
            on_wait=waiting,
            progress=update,
        )
    if as_json:
        emit_json(result.to_json())
    else:
        print_refresh(result)
    raise typer.Exit(result.exit_code)


def print_refresh(result: Any) -> None:
    """What a refresh ingested and published — for the main language, then each language
    lane: counts, new and retired themes, drift report."""
    several = bool(result.languages)
    if several:
        say((f"Language {result.language}", "bold"), console=out)
    _print_one(result)
    for code, lane in result.languages.items():
        say((f"Language {code}", "bold"), console=out)
        _print_one(lane)


def _print_one(result: Any) -> None:
    if result.ingest is not None:
        totals = result.ingest["totals"]
        say(
            "Ingested: "
            + ", ".join(f"{totals[k]:,} {k}" for k in ("added", "unchanged", "duplicate"))
            + f", {result.rejected:,} rejected."
        )
        for r in result.ingest["rejects"][:SHOWN]:
            where = r["source"] + (f", row {r['row']}" if r["row"] is not None else "")
            say(("rejected", "red"), ": ", where, ": ", r["reason"])
    if result.status == "nothing_new":
        say(
            f"Nothing new to do: no new transcripts since version {result.previous_version}.",
            console=out,
        )
        return
    c = result.counts
    say(
        f"Published version {result.version} ({result.family} K={result.k}) from "
        f"{result.new_transcripts:,} new transcripts: {c.get('carried', 0)} themes carried, "
        f"{c.get('new', 0)} new, {c.get('retired', 0)} retired.",
        console=out,
    )
    if result.resweep:
        say(f"K was chosen again: {result.resweep_reason}.", console=out)
    if (result.room or {}).get("raised"):
        say(f"{result.room['text']}.", console=out)
    print_alerts(result)
    for t in result.retired_themes:
        say(f"  retired theme {t['theme_id']}: ", t["name"], console=out)
    lost = (result.curation or {}).get("not_carried") or []
    for t in lost:
        say(
            ("  could not carry", "yellow"),
            f" the curation of theme {t['theme_id']} (",
            ", ".join(t["curation"]),
            "): the themes changed too much",
            console=out,
        )
    if result.drift_files:
        say(f"Drift report: {result.drift_files[1]}")


def _percent(x: float | None) -> str:
    return "–" if x is None else f"{100 * x:.1f}%"


def _examples(entry: dict[str, Any]) -> None:
    for e in entry.get("examples") or []:
        say("      “", e["sentence"], "” (", e["transcript_id"], ")", console=out)


def print_alerts(result: Any) -> None:
    """Each alert explained: size, growth, top terms, the evidence, example sentences; then
    the new themes not alerted, with the evidence that failed."""
    for t in result.new_themes:
        g = t.get("growth") or {}
        if t.get("alert"):
            say(("ALERT", "bold"), f" new theme {t['theme_id']}: ", t.get("name", ""), console=out)
            say(
                f"    leads {g.get('calls_new', 0):,} of {g.get('new_transcripts', 0):,} new "
                f"calls ({_percent(g.get('share_new'))}; earlier "
                f"{_percent(g.get('share_earlier'))})",
                console=out,
            )
            say("    top terms: ", ", ".join(t["top_terms"][:8]), console=out)
            for e in t.get("evidence") or []:
                say("    ✓ " if e["held"] else "    ✗ ", e["text"], console=out)
            _examples(t)
        else:
            failed = [e["text"] for e in t.get("evidence") or [] if not e["held"]]
            say(
                f"  new theme {t['theme_id']}: ",
                ", ".join(t["top_terms"][:8]),
                f" — not alerted ({str(t.get('verdict', '')).replace('_', ' ')}): ",
                "; ".join(failed),
                console=out,
            )
    for kind, items in (("riser", result.risers), ("faller", result.fallers)):
        for t in items:
            label = ("ALERT", "bold") if kind == "riser" else ("note", "bold")
            say(label, f" {kind} theme {t['theme_id']}: ", t.get("name", ""), console=out)
            say("    ", t["text"], console=out)
            if t.get("includes"):
                say(
                    "    counted with its split themes " + ", ".join(map(str, t["includes"])),
                    console=out,
                )
            say("    top terms: ", ", ".join(t["top_terms"][:8]), console=out)
            _examples(t)


def assign(
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
    workspace: WorkspaceOpt = None,
    wait: WaitOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Theme shares of new transcripts under the current version, to CSV or Parquet."""
    ws = open_workspace(workspace)
    if manifest and not store:
        raise ConfigError("--manifest applies only with --store")
    if not any(p.exists() for p in paths):
        raise InputError(
            "no transcripts found in "
            + ", ".join(str(p) for p in paths)
            + (": no such file or folder" if len(paths) == 1 else ": none of them exists")
        )
    check_output(out_path, "--out")
    with progress_bar("assign", enabled=not as_json) as update:
        result = ws.assign_files(
            paths,
            out=out_path,
            store=store,
            manifests=manifest or [],
            version=version,
            wait=wait,
            on_wait=waiting,
            progress=update,
        )
    if as_json:
        emit_json(result.to_json())
    else:
        print_assign(result)
    raise typer.Exit(result.exit_code)


def print_assign(result: Any) -> None:
    """How many transcripts were assigned, how fast, and the first rejects."""
    say(
        f"Assigned {result.rows:,} transcripts with version {result.version} "
        f"({result.per_second:,.0f} per second) to {result.out}.",
        console=out,
    )
    unthemed = result.unassigned
    say(
        f"Unthemed: {unthemed:,} transcript{'' if unthemed == 1 else 's'}"
        + (
            f" ({100 * unthemed / result.rows:.1f}%) with too few words the themes know "
            "(lead theme 'unthemed', reason in the 'reason' column)."
            if unthemed and result.rows
            else "."
        ),
        console=out,
    )
    for r in result.rejects[:SHOWN]:
        where = r.source + (f", row {r.row}" if r.row is not None else "")
        say(("rejected", "red"), ": ", where, ": ", r.reason)
    if len(result.rejects) > SHOWN:
        say(f"… and {len(result.rejects) - SHOWN} more rejected (see --json).")
