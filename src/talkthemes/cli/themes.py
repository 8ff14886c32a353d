"""``themes``, ``label`` and ``export``: read a version's themes, name them, export shares.

The work happens in :class:`talkthemes.Workspace`, which imports numpy and pandas only when
a command first needs them (``talkthemes --help`` imports every command module).
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from talkthemes.cli._common import (
    JsonOpt,
    WorkspaceOpt,
    check_output,
    emit_json,
    open_workspace,
    out,
    say,
    writing,
)
from talkthemes.cli._shared import ThemesTable
from talkthemes.errors import ConfigError

__all__ = ["export", "label", "themes"]


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
    ws = open_workspace(workspace)
    v = ws.version(version)
    lam = ws.settings().view.relevance_lambda if lam is None else lam
    summary = v.summary(lam=lam, n_terms=terms)
    if as_json:
        emit_json(
            {"version": v.n, "family": v.info["family"], "k": v.k, "lambda": lam, "themes": summary}
        )
        return
    say(
        f"Version {v.n}: {v.info['family']} K={v.k}, {len(v.doc_ids):,} transcripts (λ = {lam:g})",
        console=out,
    )
    out.print(ThemesTable(summary))


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
    ws = open_workspace(workspace)
    if text is None and note is None and hide is None:
        raise ConfigError("give a label text, --note, --hide or --show")
    row = ws.label(theme_id, text, note=note, hidden=hide)
    if as_json:
        emit_json(row.to_json())
        return
    parts = [f"Theme {theme_id}: label “", row.label, "”"]
    if row.note:
        parts += [", note “", row.note, "”"]
    if row.hidden:
        parts.append(", hidden")
    say(*parts)


def export(
    out_path: Annotated[Path, typer.Option("--out", help="FILE.csv or FILE.parquet")],
    version: Annotated[
        int | None, typer.Option("--version", help="Version (default current).")
    ] = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Write every transcript's lead theme, lead share and share per theme to CSV or Parquet."""
    check_output(out_path, "--out")
    ws = open_workspace(workspace)
    with writing(out_path, "--out"):
        result = ws.export(out_path, version=version)
    if as_json:
        emit_json(result.to_json())
    else:
        say(f"Wrote {result.rows:,} transcripts to {out_path}.")
