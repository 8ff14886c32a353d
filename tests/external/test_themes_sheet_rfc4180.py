"""The themes spreadsheet (``themes --out`` / ``label --from``) against RFC 4180 and
Python's ``csv`` module.

Sources:

* Y. Shafranovich, "Common Format and MIME Type for Comma-Separated Values (CSV) Files",
  RFC 4180, IETF, October 2005, section 2, rules 1 (records end in CRLF), 4 (fields
  separated by commas), 5–7 (quoting: fields holding line breaks, double quotes or commas
  are enclosed in double quotes; a double quote inside is doubled). Recalled from memory
  (no network while writing); the rules are short and widely reproduced.
* Python's standard library ``csv`` module (Python 3.11, ``excel`` dialect), used as the
  reference reader of what we write and the reference writer of what we read.
* The leading apostrophe that keeps a spreadsheet from running a formula follows the
  OWASP guidance on CSV injection (common practice, from memory).
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from talkthemes.versions.spreadsheet import read_label_sheet, sheet_bytes

HOSTILE = [
    "Bills, payments and refunds",  # a comma
    'The "late fee" calls',  # double quotes
    "Two lines\r\nof label",  # CRLF inside a field
    "one\nline feed",  # LF inside a field
    '=HYPERLINK("http://x")',  # a formula
    "-5% discount",  # starts like a formula
    "'=already quoted",  # an apostrophe before a formula start
    "''two apostrophes",
    "'plain apostrophe",
    "Ünïcödé · naïve café",
    "",
]


def _frame(labels: list[str]) -> pd.DataFrame:
    return pd.DataFrame(
        {
            "theme_id": list(range(1, len(labels) + 1)),
            "suggested_name": ["Late fee · charge"] * len(labels),
            "label": labels,
            "note": [f"note, {x}" if x else "" for x in labels],
            "share": [0.125] * len(labels),
        }
    )


def test_what_we_write_is_rfc_4180_as_pythons_csv_reads_it() -> None:
    data = sheet_bytes(_frame(HOSTILE))
    assert data.startswith(b"\xef\xbb\xbf")  # UTF-8 with a byte-order mark
    text = data[3:].decode("utf-8")
    assert text.endswith("\r\n")  # rule 1: every record ends in CRLF
    rows = list(csv.reader(io.StringIO(text, newline="")))
    assert rows[0] == ["theme_id", "suggested_name", "label", "note", "share"]
    labels = [r[2] for r in rows[1:]]
    # rules 5–7: commas, quotes and line breaks survive inside their (quoted) fields
    assert labels[0] == "Bills, payments and refunds"
    assert labels[1] == 'The "late fee" calls'
    assert labels[2] == "Two lines\r\nof label" and labels[3] == "one\nline feed"
    assert '"The ""late fee"" calls"' in text  # rule 7: an inner quote doubled
    # formulas defused: a spreadsheet shows them as text
    assert labels[4] == '\'=HYPERLINK("http://x")' and labels[5] == "'-5% discount"
    assert labels[6] == "''=already quoted" and labels[7] == "'''two apostrophes"
    assert labels[8] == "'plain apostrophe"  # nothing to defuse
    assert all(len(r) == 5 for r in rows)


def test_what_we_write_reads_back_exactly(tmp_path: Path) -> None:
    path = tmp_path / "themes.csv"
    path.write_bytes(sheet_bytes(_frame(HOSTILE)))
    rows, problems = read_label_sheet(path, list(range(1, len(HOSTILE) + 1)))
    assert problems == []
    assert [r.label for r in rows] == HOSTILE
    assert [r.note for r in rows] == [f"note, {x}" if x else "" for x in HOSTILE]
    assert [r.row for r in rows] == list(range(2, len(HOSTILE) + 2))  # header is row 1


def test_what_pythons_csv_writes_we_read(tmp_path: Path) -> None:
    path = tmp_path / "edited.csv"
    with path.open("w", encoding="utf-8", newline="") as fh:  # no byte-order mark
        writer = csv.writer(fh)  # excel dialect: CRLF, minimal quoting
        writer.writerow(["label", "theme_id", "note", "extra column"])
        writer.writerow(['Quote " and, comma', "2", "multi\nline", "ignored"])
        writer.writerow(["", "3.0", "", ""])  # a spreadsheet may write ids as numbers
        writer.writerow(["", "", "", ""])  # and keep empty rows
    rows, problems = read_label_sheet(path, [2, 3])
    assert problems == []
    assert [(r.theme_id, r.label, r.note) for r in rows] == [
        (2, 'Quote " and, comma', "multi\nline"),
        (3, "", ""),
    ]


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(st.lists(st.text(max_size=30), min_size=1, max_size=6))
def test_any_label_round_trips(tmp_path: Path, labels: list[str]) -> None:
    labels = [x.replace("\x00", "") for x in labels]  # NUL is not text a sheet can hold
    path = tmp_path / "any.csv"
    path.write_bytes(sheet_bytes(_frame(labels)))
    rows, problems = read_label_sheet(path, list(range(1, len(labels) + 1)))
    assert problems == [] and [r.label for r in rows] == labels


@pytest.mark.parametrize(
    ("content", "message"),
    [
        (
            b"theme_id,label\r\n1,ok\r\n1,again\r\n",
            "row 3: theme 1 is listed again (first on row 2)",
        ),
        (b"theme_id,label\r\n42,x\r\n", "row 2: there is no theme 42 in version 3"),
        (b"theme_id,label\r\nseven,x\r\n", "row 2: theme_id 'seven' is not a theme id"),
        (b"theme_id,label\r\n1,caf\xe9\r\n", "row 2: column label is not UTF-8 text (byte 0xE9)"),
        (b"theme_id,label\r\n1,a,b\r\n", "row 2: 3 cells, but the header names 2"),
        (b"id,name\r\n1,a\r\n", "no theme_id and no label or note column"),
        (b"theme_id,label\r\n5,x\r\n", "row 2: theme 5 is merged into theme 1"),
        (b"", "empty"),
    ],
)
def test_each_problem_is_named_with_its_row(tmp_path: Path, content: bytes, message: str) -> None:
    path = tmp_path / "bad.csv"
    path.write_bytes(content)
    _, problems = read_label_sheet(path, [1, 2], {5: 1}, version=3)
    assert any(message in p.line(path) for p in problems), [p.line(path) for p in problems]
    assert all(p.line(path).startswith(str(path)) for p in problems)
