"""CSV reading checked against RFC 4180 and Python's ``csv`` module.

Sources:

* Y. Shafranovich, "Common Format and MIME Type for Comma-Separated Values (CSV) Files",
  RFC 4180, IETF, October 2005, section 2 ("Definition of the CSV Format"), rules 1–7.
  The rules and the small examples quoted below are recalled from memory (no network
  while writing); they are short and widely reproduced.
* Python's standard library ``csv`` module (Python 3.11, the version this project runs
  on), whose default ``excel`` dialect implements the RFC's quoting: used as the
  reference reader for generated tables.

One deliberate difference: our reader normalises line endings inside quoted fields
(CRLF and CR become LF) before parsing, so reference values are compared after the same
normalisation; empty and whitespace-only cells are read as missing (None).
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from talkthemes.calls.model import Transcript
from talkthemes.config import IngestSettings
from talkthemes.ingest.tables.files import load_table
from talkthemes.ingest.tables.read import read_table

SETTINGS = IngestSettings()


def raw(tmp_path: Path, data: bytes, name: str = "t.csv"):
    f = tmp_path / name
    f.write_bytes(data)
    table, notes = load_table(f, SETTINGS)
    assert notes == [] and table is not None
    return table


def test_rule1_crlf_record_separator(tmp_path):
    # RFC 4180 §2 rule 1: each record on its own line, delimited by CRLF.
    # Example (from memory): aaa,bbb,ccc CRLF zzz,yyy,xxx CRLF
    t = raw(tmp_path, b"h1,h2,h3\r\naaa,bbb,ccc\r\nzzz,yyy,xxx\r\n")
    assert t.rows == [["aaa", "bbb", "ccc"], ["zzz", "yyy", "xxx"]]


def test_rule2_last_record_without_line_break(tmp_path):
    # §2 rule 2: the last record may or may not end with a line break.
    t = raw(tmp_path, b"h1,h2,h3\r\naaa,bbb,ccc\r\nzzz,yyy,xxx")
    assert t.rows[-1] == ["zzz", "yyy", "xxx"]


def test_rule3_header_line(tmp_path):
    # §2 rule 3: an optional header line with the same number of fields gives the names.
    # (We always read the first line as the header.)
    t = raw(tmp_path, b"field_name,field_name2,field_name3\r\naaa,bbb,ccc\r\n")
    assert t.columns == ["field_name", "field_name2", "field_name3"]


def test_rule5_optional_quotes(tmp_path):
    # §2 rule 5: each field may or may not be enclosed in double quotes.
    t = raw(tmp_path, b'h1,h2,h3\r\n"aaa","bbb","ccc"\r\nzzz,yyy,xxx\r\n')
    assert t.rows == [["aaa", "bbb", "ccc"], ["zzz", "yyy", "xxx"]]


def test_rule6_line_breaks_quotes_commas_inside_quotes(tmp_path):
    # §2 rule 6: fields containing line breaks (CRLF), double quotes and commas are quoted.
    # Example (from memory): "aaa","b CRLF bb","ccc" CRLF zzz,yyy,xxx
    t = raw(tmp_path, b'h1,h2,h3\r\n"aaa","b\r\nbb","ccc"\r\nzzz,yyy,xxx\r\n')
    assert t.rows == [["aaa", "b\nbb", "ccc"], ["zzz", "yyy", "xxx"]]
    assert t.numbers == [1, 2]  # a record spanning two lines is still one data row


def test_rule7_doubled_quotes(tmp_path):
    # §2 rule 7: a double quote inside a quoted field is escaped by another double quote.
    # Example (from memory): "aaa","b""bb","ccc"
    t = raw(tmp_path, b'h1,h2,h3\r\n"aaa","b""bb","ccc"\r\n')
    assert t.rows == [["aaa", 'b"bb', "ccc"]]


def test_transcript_text_with_everything_quoted(tmp_path):
    # Rules 6 and 7 together in the text column of a per-transcript table.
    data = (
        b"id,text\r\n"
        b'c1,"Agent: Hello, thanks for calling.\r\nCustomer: I was charged ""twice"", '
        b'see line 2\r\n\r\nAgent: Let me check."\r\n'
        b"c2,plain\r\n"
    )
    f = tmp_path / "t.csv"
    f.write_bytes(data)
    c1, c2 = [x for x in read_table(f, SETTINGS) if isinstance(x, Transcript)]
    assert [(x.speaker, x.text) for x in c1.turns] == [
        ("Agent", "Hello, thanks for calling."),
        ("Customer", 'I was charged "twice", see line 2'),
        ("Agent", "Let me check."),
    ]
    assert c2.source.endswith(":row 2")


def _reference(data: str) -> list[list[str | None]]:
    rows = list(csv.reader(io.StringIO(data, newline="")))
    out = []
    for row in rows[1:]:
        if not row:
            continue
        norm = [c.replace("\r\n", "\n").replace("\r", "\n") for c in row]
        out.append([c if c.strip() else None for c in norm])
    return out


_PIECES = [*'ab ,"\r\n\tzé€;', "\r\n", '""', "Agent: ", "x y"]
cells = (
    st.lists(st.sampled_from(_PIECES), max_size=8)
    .map("".join)
    .map(lambda s: s if s.strip() else "k" + s)  # an all-blank row would be a skipped line
)


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(rows=st.lists(st.lists(cells, min_size=3, max_size=3), min_size=1, max_size=6))
def test_matches_python_csv_module(tmp_path, rows):
    # Tables written by Python's csv.writer (QUOTE_MINIMAL, CRLF terminators: RFC 4180 style)
    # read back cell for cell as Python's csv.reader reads them.
    buf = io.StringIO(newline="")
    writer = csv.writer(buf, lineterminator="\r\n")
    writer.writerow(["id", "text", "note"])
    writer.writerows(rows)
    data = buf.getvalue()
    table = raw(tmp_path, data.encode("utf-8"))
    assert table.rows == _reference(data)
    assert table.numbers == list(range(1, len(rows) + 1))
