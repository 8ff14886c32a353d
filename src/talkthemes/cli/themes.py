"""``themes``, ``label`` and ``export``: read a version's themes, name and curate them,
export shares.

``label --from FILE.csv`` checks every row of the spreadsheet first and applies all of
them in one transaction, or none: any problem (named with the file and row) exits 2.

The work happens in :class:`talkthemes.Workspace`, which imports numpy and pandas only when
a command first needs them (``talkthemes --help`` imports every command module).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Annotated, Any

import typer

from talkthemes import Workspace
from talkthemes.cli._common import (
    JsonOpt,
    LanguageOpt,
    WorkspaceOpt,
    check_output,
    each_language,
    emit_json,
    language_heading,
    open_workspace,
    out,
    say,
    writing,
)
from talkthemes.cli._shared import ThemesTable
from talkthemes.errors import ConfigError, InputError

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
    evidence: Annotated[
        int,
        typer.Option(
            "--evidence", min=0, help="Also print this many evidence sentences per theme."
        ),
    ] = 0,
    out_path: Annotated[
        Path | None,
        typer.Option(
            "--out",
            help="Write the themes spreadsheet (FILE.csv) to label them: fill its label and "
            "note columns, then read it back with 'talkthemes label --from FILE.csv'.",
        ),
    ] = None,
    version: Annotated[
        int | None, typer.Option("--version", help="Version (default current).")
    ] = None,
    language: LanguageOpt = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """The current version's themes: name (suggested until labelled), coverage, mean share,
    top terms, coherence, and the unthemed group; with --out, the spreadsheet to label them
    in."""
    ws = open_workspace(workspace)
    todo = each_language(ws, language)
    if out_path is not None or len(todo) == 1:
        _themes(todo[0][1], lam, terms, evidence, out_path, version, as_json)
        return
    docs = {}
    for code, lane in todo:  # every language, one after the other
        if lane.current_version() is None:
            if not as_json:
                language_heading(code, lane, True)
                say(
                    f"No version published in {code} yet: talkthemes sweep --language {code}, "
                    f"then talkthemes publish --language {code} --recommended",
                    console=out,
                    soft_wrap=True,
                )
            docs[code] = None
            continue
        if not as_json:
            language_heading(code, lane, True)
        docs[code] = _themes(lane, lam, terms, evidence, None, version, as_json, emit=False)
    if as_json:
        emit_json({"languages": docs})


def _themes(
    ws: Workspace,
    lam: float | None,
    terms: int,
    evidence: int,
    out_path: Path | None,
    version: int | None,
    as_json: bool,
    *,
    emit: bool = True,
) -> dict[str, Any] | None:
    """One language's themes (see :func:`themes`); the JSON document, printed when ``emit``."""
    if out_path is not None:
        check_output(out_path, "--out")
        with writing(out_path, "--out"):
            sheet = ws.themes_sheet(out_path, version=version, lam=lam, n_terms=terms)
        if as_json:
            emit_json(sheet.to_json())
        else:
            say(
                f"Wrote {sheet.rows} themes of version {sheet.version} to {out_path}. Fill the "
                f"label and note columns, then run: talkthemes label --from {out_path}",
                soft_wrap=True,
            )
        return
    v = ws.version(version)
    lam = ws.settings().view.relevance_lambda if lam is None else lam
    summary = v.summary(lam=lam, n_terms=terms)
    sentences = ws.evidence_sentences(v.n)  # personal data masked, as on screens
    for t in summary:
        t["evidence"] = [e.to_json() for e in sentences[t["theme_id"]]]
    unthemed = ws.unthemed(v.n)
    if as_json:
        doc = {"version": v.n, "family": v.info["family"], "k": v.k, "lambda": lam,
               "themes": summary, "unthemed": unthemed.to_json()}  # fmt: skip
        if emit:
            emit_json(doc)
        return doc
    say(
        f"Version {v.n}: {v.info['family']} K={v.k}, {len(v.doc_ids):,} transcripts (λ = {lam:g})",
        console=out,
    )
    shown = sorted(summary, key=lambda t: t["theme_id"])  # ids read the same every version
    out.print(ThemesTable(shown))
    say(unthemed.sentence(), console=out)
    if any(not t["labelled"] for t in summary):
        say(
            "* suggested name, not labelled yet: 'talkthemes label ID TEXT' sets a label.",
            console=out,
        )
    if evidence:
        print_evidence(shown, evidence, stored=v.evidence_stored())


def print_evidence(summary: Sequence[dict], n: int, *, stored: bool) -> None:
    """Each theme's first ``n`` evidence sentences with their calls."""
    if not stored:
        say(
            "This version holds no evidence sentences (it was written before they were kept); "
            "publish or refresh to get them.",
            console=out,
        )
        return
    for t in summary:
        say("", console=out)
        say((f"#{t['theme_id']} ", "bold"), (t["name"], "bold"), console=out)
        sentences = t["evidence"][:n]
        if not sentences:
            say("  (no sentence: the theme leads no call with its terms)", console=out)
        for e in sentences:
            say(f"  “{e['text']}”", (f"  call {e['call_id']}, {e['role']}", "dim"), console=out)


def label(
    theme_id: Annotated[
        int | None, typer.Argument(help="Theme id (see 'talkthemes themes').", show_default=False)
    ] = None,
    text: Annotated[str | None, typer.Argument(help="The label.")] = None,
    note: Annotated[str | None, typer.Option("--note", help="A note kept with the label.")] = None,
    not_a_theme: Annotated[
        bool | None,
        typer.Option(
            "--not-a-theme/--a-theme",
            "--hide/--show",
            help="Mark as not a theme (small talk, noise: hidden from trends and alerts, "
            "still counted and listed), or undo it.",
            show_default=False,
        ),
    ] = None,
    merge_into: Annotated[
        int | None,
        typer.Option(
            "--merge-into",
            help="Merge the theme into theme ID: one theme (shares summed) keeping ID.",
            show_default=False,
        ),
    ] = None,
    unmerge: Annotated[
        bool, typer.Option("--unmerge", help="Undo the merges of the theme.")
    ] = False,
    from_file: Annotated[
        Path | None,
        typer.Option(
            "--from",
            help="Read labels and notes from a themes spreadsheet (see 'themes --out'): "
            "all rows or none.",
            show_default=False,
        ),
    ] = None,
    show_log: Annotated[
        bool, typer.Option("--log", help="Show the curation log (of the theme, if given).")
    ] = False,
    language: LanguageOpt = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Label a theme, note it, mark it not a theme, merge it; kept across versions by id."""
    ws = open_workspace(workspace, language=language)
    if show_log:
        return _show_log(ws, theme_id, as_json)
    if from_file is not None:
        if theme_id is not None or text is not None or note is not None:
            raise ConfigError("--from reads every label from the file: give no theme id or text")
        return _label_from(ws, from_file, as_json)
    if theme_id is None:
        raise ConfigError("give a theme id (see 'talkthemes themes'), or --from FILE.csv")
    if merge_into is not None or unmerge:
        if (
            text is not None
            or note is not None
            or not_a_theme is not None
            or (merge_into is not None and unmerge)
        ):
            raise ConfigError("--merge-into and --unmerge go alone")
        return _merge(ws, theme_id, merge_into, as_json)
    if text is None and note is None and not_a_theme is None:
        raise ConfigError("give a label text, --note, --not-a-theme, --merge-into or --unmerge")
    if text is None and note is None:
        row = ws.mark_not_a_theme(theme_id, bool(not_a_theme))
    else:
        row = ws.label(theme_id, text, note=note, hidden=not_a_theme)
    if as_json:
        emit_json(row.to_json())
        return
    parts = [f"Theme {theme_id}: label “", row.label, "”"]
    if row.note:
        parts += [", note “", row.note, "”"]
    if row.hidden:
        parts.append(", not a theme")
    say(*parts)


def _merge(ws: Workspace, theme_id: int, into: int | None, as_json: bool) -> None:
    if into is None:  # --unmerge
        apart = ws.unmerge(theme_id)
        if as_json:
            emit_json(apart.to_json())
            return
        say(
            f"Theme {theme_id}: merge undone; themes {', '.join(map(str, apart.apart))} are "
            "shown on their own again."
        )
        return
    merged = ws.merge(theme_id, into)
    if as_json:
        emit_json(merged.to_json())
        return
    root = merged.into
    say(
        f"Theme {theme_id} merged into theme {root}: shown as one theme, id {root}, its shares "
        f"the sum of both; later refreshes keep them together. Undo: talkthemes label "
        f"{theme_id} --unmerge",
        soft_wrap=True,
    )


def _label_from(ws: Workspace, path: Path, as_json: bool) -> None:
    """``label --from``: every row checked, then all applied in one transaction or none."""
    result = ws.label_from(path)
    if not result.applied:
        if as_json:
            emit_json(result.to_json())
        for p in result.problems:
            say(("talkthemes: ", ""), p.line(path))
        if as_json:
            raise typer.Exit(result.exit_code)
        raise InputError(
            f"{path}: {len(result.problems)} problem(s) found; nothing was applied (fix the "
            "rows above and run it again)"
        )
    if as_json:
        emit_json(result.to_json())
        return
    say(
        f"{path}: {result.rows} themes read; {len(result.changed)} changed, "
        f"{result.unchanged} unchanged."
    )
    for r in result.changed:
        parts = [f"  theme {r.theme_id}: label “", r.label, "”"]
        if r.note:
            parts += [", note “", r.note, "”"]
        say(*parts)


def _show_log(ws: Workspace, theme_id: int | None, as_json: bool) -> None:
    entries = ws.curation_log(theme_id)
    if as_json:
        emit_json({"theme_id": theme_id, "log": [e.to_json() for e in entries]})
        return
    if not entries:
        say("No curation yet." if theme_id is None else f"No curation of theme {theme_id} yet.")
        return
    for e in entries:
        say(f"{e.at}  theme {e.theme_id}: ", *describe(e), console=out)


def describe(entry: Any) -> tuple[str, ...]:
    """A curation log entry in words (pieces to print literally)."""
    d = entry.detail
    if entry.action in ("label", "note"):
        after = d.get("after") or ""
        return (f"{entry.action} “", after, "”") if after else (f"{entry.action} cleared",)
    return (
        {
            "not_a_theme": "marked not a theme",
            "a_theme": "marked a theme again",
            "merge": f"merged into theme {d.get('into')}",
            "unmerge": f"merge into theme {d.get('from')} undone",
        }.get(entry.action, entry.action),
    )


def export(
    out_path: Annotated[Path, typer.Option("--out", help="FILE.csv or FILE.parquet")],
    version: Annotated[
        int | None, typer.Option("--version", help="Version (default current).")
    ] = None,
    metadata: Annotated[
        str | None,
        typer.Option(
            "--metadata",
            help="Add the manifests' metadata as the last columns: 'all', or fields "
            "separated by commas (masked like the screens unless [view] original_text).",
        ),
    ] = None,
    language: LanguageOpt = None,
    workspace: WorkspaceOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Write every transcript's lead theme, lead share and share per theme to CSV or Parquet,
    and the themes those share columns stand for to FILE.themes.csv (or .parquet)."""
    check_output(out_path, "--out")
    fields: bool | list[str] = False
    if metadata is not None:
        names = [f.strip() for f in metadata.split(",") if f.strip()]
        if not names:
            raise ConfigError("--metadata: give 'all' or field names separated by commas")
        fields = True if names == ["all"] else names
    ws = open_workspace(workspace, language=language)
    with writing(out_path, "--out"):
        result = ws.export(out_path, version=version, metadata=fields)
    if as_json:
        emit_json(result.to_json())
    else:
        say(
            f"Wrote {result.rows:,} transcripts to {out_path}, "
            f"and the themes of its share columns to {result.themes_file}."
        )
