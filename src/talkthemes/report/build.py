"""Gathering the report of the current version, and writing it (with PNGs on request)."""

from __future__ import annotations

from pathlib import Path

from talkthemes.charts.render import chart_png
from talkthemes.errors import NotReadyError
from talkthemes.progress import Progress
from talkthemes.progress import report as tell
from talkthemes.report import sections
from talkthemes.report.page import Report, render_report
from talkthemes.versions.load import load_version
from talkthemes.view.counts import call_counts
from talkthemes.view.metadata import load_metadata
from talkthemes.view.over_time import theme_trends
from talkthemes.view.readiness import readiness
from talkthemes.view.theme_map import theme_layout
from talkthemes.view.themes import theme_table
from talkthemes.workspace import Workspace, atomic_write_bytes, atomic_write_text

__all__ = ["build_report", "write_report"]


def build_report(
    ws: Workspace,
    *,
    lam: float | None = None,
    excerpts: int = 3,
    progress: Progress | None = None,
) -> Report:
    """Gather the report's content for the current version (nothing is written).

    Parameters
    ----------
    ws : Workspace
    lam : float, optional
        Relevance weight for ranking words (default ``[view] relevance_lambda``).
    excerpts : int
        Excerpts per theme card.
    progress : Progress, optional
        Called as ``progress(done, total, what)`` after each of the five parts.

    Raises
    ------
    NotReadyError
        When nothing is published yet (naming the command to run).
    """
    blocker = readiness(ws).blocker("version")
    if blocker is not None:
        raise NotReadyError(f"{blocker.message} Run: {blocker.command}")
    tell(progress, 0, 5, "loading the version")
    version = load_version(ws)
    lam = float(ws.settings().view.relevance_lambda if lam is None else lam)
    meta = load_metadata(ws, version.doc_ids)
    layout = theme_layout(version.topic_terms)
    table = theme_table(version, layout, lam=lam)
    report = Report(title=f"Themes of {ws.root.name} — version {version.n}", body="")

    tell(progress, 1, 5, "the sweep")
    body = [
        sections.header(report, version, meta, table, call_counts(ws, version)),
        sections.sweep_section(ws, version.info.get("sweep_id"), report),
    ]
    tell(progress, 2, 5, "the theme map")
    body.append(sections.map_section(table, layout, report, theme_trends(version, meta)))
    tell(progress, 3, 5, "the theme cards")
    body.append(
        sections.themes_section(
            ws, version, meta, table, lam=lam, n_excerpts=excerpts, report=report
        )
    )
    tell(progress, 4, 5, "the trend")
    body.append(sections.trend_section(version, meta, report))
    body.append(sections.footer(version))
    tell(progress, 5, 5, "done")
    report.body = "".join(body)
    return report


def write_report(
    ws: Workspace,
    out: Path,
    *,
    png_dir: Path | None = None,
    lam: float | None = None,
    excerpts: int = 3,
    progress: Progress | None = None,
) -> Path:
    """Write the report of the current version to ``out`` (and each chart as PNG).

    Parameters
    ----------
    ws : Workspace
    out : Path
        The HTML file to write (replaced atomically).
    png_dir : Path, optional
        Also write every chart as ``<chart id>.png`` into this folder.
    lam : float, optional
        Relevance weight for ranking words (default ``[view] relevance_lambda``).
    excerpts : int
        Excerpts per theme card.
    progress : Progress, optional
        Called as ``progress(done, total, what)`` for the five parts of the report, then
        for each PNG written.

    Returns
    -------
    Path
        ``out``.

    Raises
    ------
    NotReadyError
        When nothing is published yet (naming the command to run).
    """
    report = build_report(ws, lam=lam, excerpts=excerpts, progress=progress)
    atomic_write_text(Path(out), render_report(report))
    if png_dir is not None:
        png_dir = Path(png_dir)
        png_dir.mkdir(parents=True, exist_ok=True)
        for i, (cid, chart) in enumerate(report.charts.items()):
            tell(progress, i, len(report.charts), f"PNG {cid}")
            atomic_write_bytes(png_dir / f"{cid}.png", chart_png(chart))
        tell(progress, len(report.charts), len(report.charts), "PNGs written")
    return Path(out)
