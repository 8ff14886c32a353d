"""Tables that several command groups share: the themes table and the sweep table.

Both tables fit the console they are printed on (80 columns and wider): numbers are never
cut, a theme's terms stay on one line (shortened with ``…`` at the end), and a sweep's
metric columns that do not fit beside each other continue in a second table.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import Any

from rich import box
from rich.cells import cell_len
from rich.console import Console, ConsoleOptions, RenderableType
from rich.table import Table
from rich.text import Text

from talkthemes.cli._common import cell, line, out, say
from talkthemes.text import percent

__all__ = [
    "SweepTable",
    "ThemesTable",
    "fmt_metric",
    "print_sweep",
    "recommendation_lines",
]

#: Columns between two cells (one space of padding and the separator).
_GAP = 2
#: When name and terms do not both fit, the name column keeps this width (or half the room
#: left by the number columns, when that is more) and wraps a longer name inside it.
_NAME_MAX = 24
#: The narrowest the terms column gets (below it the table no longer fits 80 columns anyway).
_TERMS_MIN = 12


def _table(**kwargs: Any) -> Table:
    """Our table look: a rule under the header, no outer frame, two columns between cells."""
    return Table(
        box=box.SIMPLE_HEAD,
        show_edge=False,
        pad_edge=False,
        collapse_padding=True,
        title_justify="left",
        **kwargs,
    )


def _width(text: Text | str) -> int:
    plain = text.plain if isinstance(text, Text) else text
    return max((cell_len(part) for part in plain.split("\n")), default=0)


# -- themes ---------------------------------------------------------------------------------
@dataclass
class ThemesTable:
    """The themes of a version as a table: id, name, coverage, mean share, C_NPMI, terms.

    ``themes`` are :meth:`talkthemes.versions.Version.summary` rows. A theme not labelled yet
    shows its suggested name in italics, marked with a ``*``; a theme marked not a theme
    says so, and a merged theme names the themes merged into it. Coverage and mean share
    are shown as percentages with one decimal, C_NPMI with three decimals.
    """

    themes: Sequence[dict[str, Any]]

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> Iterator[Table]:
        rows = []
        for t in self.themes:
            suggested = not t.get("labelled", True)
            name = cell(t["name"], "italic" if suggested else "")
            if suggested:
                name.append(" *", style="dim")
            if t["hidden"]:
                name.append(" (not a theme)", style="dim")
            if t.get("merged"):
                name.append(" (+ " + ", ".join(f"#{m}" for m in t["merged"]) + ")", style="dim")
            coh = t["coherence"].get("c_npmi")
            rows.append(
                [
                    cell(t["theme_id"]),
                    name,
                    Text(percent(t["coverage"])),
                    Text(percent(t["mean_share"])),
                    Text("–" if coh is None else f"{coh:.3f}"),
                    cell(", ".join(t["top_terms"])),
                ]
            )
        headers = ["id", "theme", "coverage", "mean\nshare", "C_NPMI", "top terms (by relevance)"]
        widths = [max([_width(h)] + [_width(r[i]) for r in rows]) for i, h in enumerate(headers)]
        room = options.max_width - sum(widths[i] for i in (0, 2, 3, 4)) - _GAP * 5
        if widths[1] + widths[5] > room:  # the name gets up to half the room, terms the rest
            widths[1] = min(widths[1], max(_NAME_MAX, room // 2))
            widths[5] = max(_TERMS_MIN, min(widths[5], room - widths[1]))

        table = _table()
        table.add_column("id", justify="right", no_wrap=True)
        table.add_column("theme", max_width=widths[1], overflow="fold")
        for header in headers[2:5]:
            table.add_column(header, justify="right", no_wrap=True)
        table.add_column(headers[5], width=widths[5], no_wrap=True, overflow="ellipsis")
        for r in rows:
            r[5].no_wrap, r[5].overflow = True, "ellipsis"
            table.add_row(*r)
        yield table


# -- sweep ----------------------------------------------------------------------------------
#: The metric columns of the sweep table, in order: (column of the cells frame, header).
SWEEP_METRICS = (
    ("c_npmi", "C_NPMI"),
    ("c_v", "C_V"),
    ("u_mass", "U_Mass"),
    ("stability", "stability"),
    ("diversity", "diversity"),
    ("perplexity", "perplexity"),
    ("reconstruction_error", "recon. error"),
    ("fit_seconds", "fit s"),
)


def fmt_metric(mean: float, spread: float) -> str:
    """``mean ± sd`` as the sweep table shows it: 3 decimals, none from 100 up; ``–`` for NaN."""
    if math.isnan(mean):
        return "–"
    digits = 0 if abs(mean) >= 100 else 3
    if math.isnan(spread) or spread == 0:
        return f"{mean:,.{digits}f}"
    return f"{mean:,.{digits}f} ± {spread:,.{digits}f}"


@dataclass
class SweepTable:
    """A sweep's cells as mean ± sd over seeds per (family, K); ★ marks the recommended K.

    ``cells`` is the sweep's cells frame (``family``, ``k`` and the metric columns),
    ``recommended`` the recommended K per family. When the metric columns do not fit the
    console side by side, they continue in further tables, each repeating family and K.
    """

    cells: Any  # pandas.DataFrame
    recommended: dict[str, int]
    title: str

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> Iterator[Table]:
        frame = self.cells
        metrics = [(col, name) for col, name in SWEEP_METRICS if col in frame.columns]
        keys: list[list[Text]] = []
        stars: list[bool] = []
        values: list[list[Text]] = []
        for (family, k), group in frame.groupby(["family", "k"], sort=True):
            star = self.recommended.get(str(family)) == k
            stars.append(star)
            keys.append([cell(family), Text(f"{k}{' ★' if star else ''}")])
            row = []
            for col, _ in metrics:
                vals = group[col].astype(float)
                spread = float(vals.std(ddof=1)) if len(vals) > 1 else 0.0
                row.append(Text(fmt_metric(float(vals.mean()), spread)))
            values.append(row)
        key_width = sum(
            max([_width(h)] + [_width(r[i]) for r in keys]) for i, h in enumerate(("family", "K"))
        )
        widths = [
            max([_width(name)] + [_width(r[i]) for r in values])
            for i, (_, name) in enumerate(metrics)
        ]
        chunks = _chunks(widths, options.max_width - key_width - _GAP)
        for n, chunk in enumerate(chunks):
            last = n == len(chunks) - 1
            table = _table(
                title=line((self.title if n == 0 else f"{self.title} (continued)", "bold")),
                caption=line("mean ± sd over seeds; ★ recommended") if last else None,
                caption_justify="left",
            )
            table.add_column("family", no_wrap=True)
            table.add_column("K", justify="right", no_wrap=True)
            for i in chunk:
                table.add_column(metrics[i][1], justify="right", no_wrap=True)
            for key, row, star in zip(keys, values, stars, strict=True):
                table.add_row(*key, *(row[i] for i in chunk), style="bold green" if star else None)
            yield table


def _chunks(widths: Sequence[int], room: int) -> list[list[int]]:
    """Split column indices, in order, into runs whose widths (with gaps) fit ``room``."""
    chunks: list[list[int]] = [[]]
    used = 0
    for i, w in enumerate(widths):
        if chunks[-1] and used + _GAP + w > room:
            chunks.append([])
            used = 0
        chunks[-1].append(i)
        used += _GAP + w
    return chunks


def recommendation_lines(recommendations: dict[str, Any]) -> Iterator[RenderableType]:
    """Per family: the recommended K, the rule, the reasons and the runners-up."""
    for family, rec in recommendations.items():
        yield line(
            (f"{family.upper()}: recommended K = {rec.k}", "bold"),
            (" (weak)", "yellow") if rec.weak else "",
        )
        yield line(f"  rule: {rec.rule}")
        for reason in rec.reasons:
            yield line(f"  • {reason}")
        if rec.runners_up:
            yield line(
                "  runners-up: " + "; ".join(f"K={r['k']} ({r['why_not']})" for r in rec.runners_up)
            )


def print_sweep(result: Any) -> None:
    """The sweep table, the recommendation per family and the cells that failed."""
    title = f"Sweep {result.sweep_id}" + (" (already done; reused)" if result.cached else "")
    recommended = {f: r.k for f, r in result.recommendations.items()}
    out.print(SweepTable(result.cells, recommended, title))
    for renderable in recommendation_lines(result.recommendations):
        out.print(renderable)
    for text in result.sample_lines:
        out.print(line(text))
    for f in result.failed:
        say(("cell failed", "red"), f": {f['cell']}: {f['error']}")
