"""Escaping in one place for every face: HTML, Markdown, spreadsheet cells and the terminal.

Transcript text, labels, notes, metadata values and file names are untrusted. Whatever shows
them (viewer, report, drift report, CLI, exports) passes them through one of these functions so
that no HTML, Markdown, terminal markup or spreadsheet formula in them is ever interpreted.
"""

from __future__ import annotations

import html
import re
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pandas is imported where it is used: the CLI's start-up must not pay it
    import pandas as pd

__all__ = [
    "FORMULA_START",
    "csv_cell",
    "csv_frame",
    "html_text",
    "md_file_inline",
    "md_inline",
    "terminal_text",
]

#: Characters that make a spreadsheet read a cell as a formula or a command (OWASP, "CSV
#: Injection": ``=``, ``+``, ``-``, ``@``, tab and carriage return at the start of a cell).
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")

# Every character with a meaning in CommonMark inline syntax (``&`` starts an entity
# reference such as ``&amp;``), plus ``|`` (tables), ``~``
# (strike-through), ``$`` (maths in some renderers), and ``:`` and ``/`` (emoji and icon
# shortcodes such as ``:material/name:``, which some renderers expand before Markdown).
_MD_SPECIAL = re.compile(r"([\\`*_{}\[\]()#+\-.!|<>~$:/&])")
_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")
# Markdown files (drift.md) are read as plain text as often as rendered: escape only what
# CommonMark and GitHub's extensions (tables, strike-through, maths, autolinks) give a
# meaning to, so that call ids, dates and phrases read as they are and can be searched for.
_MD_FILE_SPECIAL = re.compile(r"([\\`*\[\]<>&|~$@])")
_MD_FILE_AUTOLINK = re.compile(r"(?i)(?<=www)\.|:(?=//)")
_MD_FILE_BLOCK = re.compile(r"^(\d{1,9})([.)])|^([#>+=-])")
_UNDERSCORES = re.compile(r"_+")


def html_text(value: Any) -> str:
    """``value`` as HTML text: ``& < > " '`` escaped, safe in element content and attributes."""
    return html.escape(str(value), quote=True)


def md_inline(value: Any) -> str:
    """``value`` as one line of Markdown that renders as the literal text.

    Whitespace runs (newlines included) become one space, so the text cannot start a heading,
    list or table row, and every character with a Markdown meaning is backslash-escaped, so it
    cannot become a link, image, emphasis, code span or HTML.
    """
    one_line = " ".join(str(value).split())
    return _MD_SPECIAL.sub(r"\\\1", one_line)


def md_file_inline(value: Any) -> str:
    """``value`` as one line of a Markdown *file* that renders as the literal text and
    reads as it is when the file is read as plain text.

    Like :func:`md_inline`, whitespace runs become one space and nothing can become a link,
    image, emphasis, code span, HTML, entity, table cell, strike-through or maths; but only
    the characters that need it are escaped: ``\\ ` * [ ] < > & | ~ $ @`` always, ``_``
    unless inside a word (CommonMark never reads ``fall_line`` as emphasis), ``:`` before
    ``//`` and ``.`` after ``www`` (autolinks), and a leading ``#``, ``>``, ``+``, ``=``,
    ``-`` or ``1.`` (a heading, quote or list). Call ids and dates such as
    ``C2026-10-000141`` or ``2026-12-05T07:16:24+00:00`` come out unchanged. Not for
    screens whose renderer expands shortcodes (``:name:``): use :func:`md_inline` there.
    """
    text = " ".join(str(value).split())
    text = _MD_FILE_SPECIAL.sub(r"\\\1", text)
    text = _MD_FILE_AUTOLINK.sub(lambda m: "\\" + m.group(0), text)
    text = _UNDERSCORES.sub(lambda m: _underscores(text, m), text)
    return _MD_FILE_BLOCK.sub(
        lambda m: f"{m.group(1)}\\{m.group(2)}" if m.group(1) else "\\" + m.group(3), text
    )


def _underscores(text: str, m: re.Match[str]) -> str:
    """A run of ``_`` kept inside a word, escaped at a word's edge."""
    before = text[m.start() - 1] if m.start() > 0 else " "
    after = text[m.end()] if m.end() < len(text) else " "
    if before.isalnum() and after.isalnum():
        return m.group(0)
    return "\\_" * len(m.group(0))


def terminal_text(value: Any) -> str:
    """``value`` for a terminal: control characters (escape sequences) shown as ``?``.

    Print it with markup and highlighting off (``console.print(..., markup=False)``) or pass it
    through :func:`rich.markup.escape` when it is part of a marked-up line.
    """
    return _CONTROL.sub("?", str(value))


def csv_cell(value: Any) -> Any:
    """A value for a spreadsheet-bound CSV cell: a text starting a formula gets a ``'`` prefix.

    Follows the OWASP guidance on CSV injection: a cell starting with ``=``, ``+``, ``-``,
    ``@``, tab or carriage return is prefixed with a single quote so that spreadsheet programs
    show it as text. Numbers and other non-text values are returned unchanged.
    """
    if isinstance(value, str) and value.startswith(FORMULA_START):
        return "'" + value
    return value


def csv_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """A copy of ``frame`` with :func:`csv_cell` applied to every text cell (columns included)."""
    import pandas as pd  # deferred: heavy, and only CSV writers need it

    out = frame.copy()
    for col in out.columns:
        if out[col].dtype == object or pd.api.types.is_string_dtype(out[col].dtype):
            out[col] = out[col].map(csv_cell)
    out.columns = [csv_cell(c) if isinstance(c, str) else c for c in out.columns]
    return out
