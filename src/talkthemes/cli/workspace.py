"""``init`` and ``status``: create a workspace, and show what it holds."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import typer
from rich.table import Table
from rich.text import Text

from talkthemes import Workspace
from talkthemes.cli._common import (
    LANGUAGE_KINDS,
    JsonOpt,
    WorkspaceOpt,
    cell,
    emit_json,
    open_workspace,
    out,
    say,
)

__all__ = ["init", "status"]


def init(
    folder: Annotated[
        Path | None, typer.Argument(help="Folder to create (default: --workspace).")
    ] = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Create a workspace: a commented talkthemes.toml with every default and an empty store."""
    ws = Workspace.create(folder if folder else workspace)
    if as_json:
        emit_json({"workspace": str(ws.root), "created": ws.created})
    elif ws.created:
        settings = ws.folder.settings_path.name
        say("Workspace ready at ", (str(ws.root), "bold"), f" (settings: {settings}).")
    else:
        say(f"Workspace {ws.root} already exists; nothing changed.")


def status(workspace: WorkspaceOpt = None, as_json: JsonOpt = False) -> None:
    """What the workspace holds: counts by role, format, month and metadata; stage of each step."""
    data = open_workspace(workspace).status().to_json()
    if as_json:
        emit_json(data)
        return
    dates = data["date_range"]
    say(("Workspace", "bold"), " ", data["workspace"], console=out)
    say(
        f"{data['transcripts']:,} transcripts, {data['words']:,} words",
        f", dated {dates[0]} to {dates[1]}" if dates else ", no dates",
        console=out,
    )
    _counts("By format", ("format", "transcripts"), data["by_format"])
    t = _titled("By role", "role", "turns", "transcripts with it")
    for k, v in data["turns_by_role"].items():
        t.add_row(cell(k), f"{v:,}", f"{data['transcripts_with_role'].get(k, 0):,}")
    out.print(t)
    if data["by_month"]:
        _counts("By month", ("month", "transcripts"), data["by_month"])
    if data["metadata_fields"]:
        t = _titled("Metadata fields", "field", "transcripts", "distinct", "most common")
        t.columns[3].justify = "left"
        for k, v in data["metadata_fields"].items():
            top = Text(", ").join(cell(f"{val} ({n:,})") for val, n in v["top"].items())
            t.add_row(cell(k), f"{v['transcripts']:,}", f"{v['distinct']:,}", top)
        out.print(t)
    if data["manifest_rows_without_transcript"]:
        say(
            f"{data['manifest_rows_without_transcript']:,} manifest ids have no stored "
            "transcript yet.",
            console=out,
        )
    reexports = data["likely_reexports"]
    if reexports["count"]:
        say(
            f"{reexports['count']:,} likely re-export(s) of stored calls "
            f"({reexports['skipped']:,} skipped, {reexports['kept']:,} kept), first:",
            console=out,
        )
        for p in reexports["first"]:
            say(f"  {p['id']} = {p['same_text_as']}", " (kept)" if p["kept"] else "", console=out)
    if data["interrupted_ingest_runs"]:
        say(
            (f"{data['interrupted_ingest_runs']} ingest run(s) did not finish", "yellow"),
            "; what they stored is complete per transcript — re-run ingest to finish.",
            console=out,
        )
    for u in data["unfinished_sweeps"]:
        say(
            (f"Sweep {u['id']} did not finish", "yellow"),
            f" ({u['status']}, {u['cells_done']} of {u['cells_total']} cells done); "
            f"re-run to finish: {u['rerun']}",
            console=out,
            soft_wrap=True,
        )
    out.print(_stages(data["stages"]))
    _languages(data["languages"])


def _languages(languages: list[dict[str, Any]]) -> None:
    """The calls per language and where each language is themed (when there is more than
    the main language)."""
    if not languages or (len(languages) == 1 and languages[0]["kind"] == "main"):
        return
    t = _titled("By language", "language", "calls", "given", "detected", "themes")
    t.columns[4].justify = "left"
    for lang in languages:
        if lang["kind"] == "lane":
            v = lang.get("version")
            where = f"lane languages/{lang['language']}: " + (
                f"version {v}" if v else f"none yet (sweep --language {lang['language']})"
            )
        else:
            where = LANGUAGE_KINDS[lang["kind"]]
        t.add_row(
            cell(lang["language"]),
            f"{lang['calls']:,}",
            f"{lang['given']:,}",
            f"{lang['detected']:,}",
            cell(where),
        )
    out.print(t)


def _titled(title: str, *columns: str) -> Table:
    table = Table(title=title, title_justify="left")
    table.add_column(columns[0])
    for name in columns[1:]:
        table.add_column(name, justify="right")
    return table


def _counts(title: str, columns: tuple[str, str], counts: dict[str, int]) -> None:
    table = _titled(title, *columns)
    for key, n in counts.items():
        table.add_row(cell(key), f"{n:,}")
    out.print(table)


def _stages(st: dict[str, Any]) -> Table:
    table = Table(title="Stages", title_justify="left")
    table.add_column("stage")
    table.add_column("state")
    prepared, swept, published = st["prepared"], st["swept"], st["published"]
    table.add_row(
        "prepared",
        cell(f"{prepared['hash'][:12]} at {prepared['at']}")
        if prepared
        else "not yet — run 'talkthemes prepare'",
    )
    table.add_row(
        "swept",
        cell(f"sweep {swept['id']} ({swept['status']}) at {swept['at']}")
        if swept
        else "not yet — run 'talkthemes sweep'",
    )
    table.add_row(
        "published",
        cell(f"version {published['version']} at {published['at']}{_unthemed(published)}")
        if published
        else "not yet — run 'talkthemes publish'",
    )
    return table


def _unthemed(published: dict[str, Any]) -> str:
    """ "; 17 unthemed (2.4%)": the published version's unthemed group, as ``status`` says it."""
    group = published.get("unthemed")
    if not group:
        return ""
    return f"; {group['count']:,} unthemed ({100 * group['share']:.1f}%)"
