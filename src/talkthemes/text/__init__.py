"""Text made safe for every place it is shown: HTML, Markdown, CSV cells, the terminal."""

from talkthemes.text.escape import (
    csv_cell,
    csv_frame,
    html_text,
    md_file_inline,
    md_inline,
    terminal_text,
)
from talkthemes.text.format import percent

__all__ = [
    "csv_cell",
    "csv_frame",
    "html_text",
    "md_file_inline",
    "md_inline",
    "percent",
    "terminal_text",
]
