"""Tests for talkthemes.ingest.tables: CSV, JSONL and Parquet tables (invented data)."""

from __future__ import annotations

import csv
import datetime as dt
import json
import os
import time
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.ingest.tables.columns import find_column
from talkthemes.ingest.tables.dates import date_order, normalise_date
from talkthemes.ingest.tables.files import load_table
from talkthemes.ingest.tables.read import read_table

SETTINGS = IngestSettings()


def write_csv(path: Path, rows: list[list[object]], **kw) -> Path:
    with open(path, "w", newline="", encoding=kw.pop("encoding", "utf-8")) as fh:
        csv.writer(fh, **kw).writerows(rows)
    return path


def write_jsonl(path: Path, records: list[object]) -> Path:
    path.write_text("\n".join(json.dumps(r) for r in records) + "\n", encoding="utf-8")
    return path


def read(path: Path, settings: IngestSettings = SETTINGS) -> list:
    return list(read_table(path, settings))


def only(items: list, kind: type) -> list:
    return [x for x in items if isinstance(x, kind)]


# --- per transcript -------------------------------------------------------------------------


def test_per_transcript_csv_with_metadata_and_turns_in_text(tmp_path):
    f = write_csv(
        tmp_path / "calls.csv",
        [
            ["Call ID", "Transcript", "Queue", "Call Date"],
            ["c1", "Agent: hello\nCustomer: my card, it was declined", "cards", "2024-03-01"],
            ["c2", "no   labels here", "billing", "03/02/2024"],
        ],
    )
    items = read(f)
    assert not only(items, Reject)
    (w,) = only(items, Warning_)  # 03/02/2024 alone cannot tell day from month
    assert "'Call Date'" in w.message
    t1, t2 = only(items, Transcript)
    assert (t1.tid, t1.format, t1.source) == ("c1", "csv", f"{f}:row 1")
    assert [(x.speaker, x.role, x.text) for x in t1.turns] == [
        ("Agent", "agent", "hello"),
        ("Customer", "customer", "my card, it was declined"),
    ]
    assert t1.metadata == {"Queue": "cards", "date": "2024-03-01"}
    assert t2.turns[0].text == "no labels here" and t2.turns[0].role == "unknown"
    assert t2.metadata["date"] == "2024-03-02"  # month/day/year assumed
    assert t2.source == f"{f}:row 2"


def test_ambiguous_slash_dates_warn_once(tmp_path):
    f = write_csv(
        tmp_path / "t.csv",
        [["id", "text", "date"], ["a", "x", "03/02/2024"], ["b", "y", "04/05/2024"]],
    )
    items = read(f)
    warnings = only(items, Warning_)
    assert len(warnings) == 1 and "month/day/year" in warnings[0].message
    assert [t.metadata["date"] for t in only(items, Transcript)] == ["2024-03-02", "2024-04-05"]


def test_day_first_column_is_recognised(tmp_path):
    f = write_csv(
        tmp_path / "t.csv",
        [["id", "text", "date"], ["a", "x", "03/02/2024"], ["b", "y", "25/12/2024"]],
    )
    items = read(f)
    assert not only(items, Warning_)
    assert [t.metadata["date"] for t in only(items, Transcript)] == ["2024-02-03", "2024-12-25"]


def test_unreadable_date_warns_with_row_and_is_left_out(tmp_path):
    f = write_csv(tmp_path / "t.csv", [["id", "text", "date"], ["a", "x", "soon"], ["b", "y", ""]])
    items = read(f)
    warnings = only(items, Warning_)
    assert len(warnings) == 1 and warnings[0].row == 1 and "'soon'" in warnings[0].message
    assert [t.metadata for t in only(items, Transcript)] == [{}, {}]


def test_empty_text_row_rejected_with_data_row_number(tmp_path):
    f = write_csv(tmp_path / "t.csv", [["id", "text"], ["a", "hello"], ["b", "   "], ["c", "bye"]])
    items = read(f)
    (rej,) = only(items, Reject)
    assert rej.row == 2 and rej.format == "csv" and rej.source == str(f)
    assert "row 2" in rej.reason and "after the header" in rej.reason and "empty text" in rej.reason
    assert [t.tid for t in only(items, Transcript)] == ["a", "c"]


def test_missing_id_gets_stem_and_row(tmp_path):
    f = write_csv(tmp_path / "export.csv", [["id", "text"], ["", "hello"], ["b", "bye"]])
    items = read(f)
    assert [t.tid for t in only(items, Transcript)] == ["export-1", "b"]
    (w,) = only(items, Warning_)
    assert w.row == 1 and "export-1" in w.message


def test_no_id_column_gives_stem_row_ids_with_one_warning(tmp_path):
    f = write_csv(tmp_path / "notes.csv", [["text", "site"], ["hello", "north"], ["bye", "south"]])
    items = read(f)
    assert [(t.tid, t.metadata) for t in only(items, Transcript)] == [
        ("notes-1", {"site": "north"}),
        ("notes-2", {"site": "south"}),
    ]
    assert len(only(items, Warning_)) == 1


def test_no_text_column_is_one_reject_naming_columns(tmp_path):
    f = write_csv(tmp_path / "t.csv", [["id", "words", "queue"], ["a", "x", "y"], ["b", "z", "w"]])
    items = read(f)
    assert len(items) == 1
    (rej,) = items
    assert isinstance(rej, Reject) and rej.row is None
    assert "no text column" in rej.reason
    assert all(f"'{c}'" in rej.reason for c in ("id", "words", "queue"))


def test_configured_columns_case_insensitive(tmp_path):
    f = write_csv(tmp_path / "t.csv", [["Ref", "Words", "text"], ["r1", "said this", "not this"]])
    settings = IngestSettings(id_column="ref", text_column="WORDS")
    (t,) = only(read(f, settings), Transcript)
    assert t.tid == "r1" and t.text() == "said this" and t.metadata == {"text": "not this"}


def test_configured_column_missing_is_rejected(tmp_path):
    f = write_csv(tmp_path / "t.csv", [["id", "text"], ["a", "x"]])
    (rej,) = read(f, IngestSettings(text_column="body"))
    assert isinstance(rej, Reject)
    assert "'body'" in rej.reason and "text_column" in rej.reason and "'id'" in rej.reason


def test_header_only_table_is_rejected(tmp_path):
    f = write_csv(tmp_path / "t.csv", [["id", "text"]])
    (rej,) = read(f)
    assert isinstance(rej, Reject) and "no rows" in rej.reason


def test_ragged_csv_row_is_rejected(tmp_path):
    f = tmp_path / "t.csv"
    f.write_text("id,text\na,hello\nb,hello, world\nc,bye,\nd\n", encoding="utf-8")
    items = read(f)
    rejects = only(items, Reject)
    assert [r.row for r in rejects] == [2, 4]
    assert "3 fields" in rejects[0].reason and "header has 2" in rejects[0].reason
    # a trailing empty field is tolerated; a short row is padded (and then has no text)
    assert "empty text" in rejects[1].reason
    assert [t.tid for t in only(items, Transcript)] == ["a", "c"]


def test_short_row_without_text_is_rejected(tmp_path):
    f = tmp_path / "t.csv"
    f.write_text("id,text\na,hello\nd\n", encoding="utf-8")
    items = read(f)
    (rej,) = only(items, Reject)
    assert rej.row == 2 and "empty text" in rej.reason


def test_semicolon_and_tab_delimiters(tmp_path):
    for name, delim in (("semi.csv", ";"), ("tab.csv", "\t")):
        f = write_csv(tmp_path / name, [["id", "text"], ["a", "one, two"]], delimiter=delim)
        (t,) = only(read(f), Transcript)
        assert (t.tid, t.text()) == ("a", "one, two")


def test_csv_bom_crlf_and_cp1252(tmp_path):
    f = tmp_path / "t.csv"
    f.write_bytes('id,text\r\na,"caf\u00e9 \u20ac5\r\nline two"\r\n'.encode("cp1252"))
    items = read(f)
    (t,) = only(items, Transcript)
    assert t.text() == "café €5 line two"
    assert any("cp1252" in w.message for w in only(items, Warning_))
    g = tmp_path / "bom.csv"
    g.write_bytes(b"\xef\xbb\xbfid,text\r\nb,hi\r\n")
    (t,) = only(read(g), Transcript)
    assert t.tid == "b"  # the BOM does not stick to the first column name


def test_huge_field_is_read(tmp_path):
    big = "word " * 60_000  # 300 KB, over the csv module's default field limit
    f = write_csv(tmp_path / "t.csv", [["id", "text"], ["a", big]])
    (t,) = only(read(f), Transcript)
    assert len(t.text().split()) == 60_000
    assert csv.field_size_limit() == 131072  # not left changed


# --- per turn -------------------------------------------------------------------------------


def test_per_turn_grouping_order_and_metadata(tmp_path):
    f = write_csv(
        tmp_path / "turns.csv",
        [
            ["conversation_id", "speaker", "text", "queue", "sentiment"],
            ["k2", "Agent", "hello two", "billing", "pos"],
            ["k1", "Agent", "hello one", "cards", "neu"],
            ["k2", "Caller", "my bill", "billing", "neg"],
            ["k1", "Customer 1", "my   card", "cards", "neu"],
            ["k2", "Agent", "let me see", "billing", "pos"],
        ],
    )
    items = read(f)
    assert not only(items, Reject) and not only(items, Warning_)
    k2, k1 = only(items, Transcript)
    assert k2.tid == "k2" and k1.tid == "k1"
    assert [(x.speaker, x.role, x.text) for x in k2.turns] == [
        ("Agent", "agent", "hello two"),
        ("Caller", "customer", "my bill"),
        ("Agent", "agent", "let me see"),
    ]
    assert k1.turns[1].text == "my card"
    assert k2.metadata == {"queue": "billing"}  # sentiment varies within k2
    assert k1.metadata == {"queue": "cards", "sentiment": "neu"}
    assert k2.source == f"{f}:rows 1-5" and k1.source == f"{f}:rows 2-4"


def test_per_turn_sorted_by_start_when_given(tmp_path):
    f = write_csv(
        tmp_path / "t.csv",
        [
            ["call_id", "role", "utterance", "start_time", "end_time"],
            ["a", "customer", "second", "00:12", "15.5"],
            ["a", "agent", "first", "3.5", "00:00:10"],
            ["b", "agent", "only", "", ""],
        ],
    )
    items = read(f)
    a, b = only(items, Transcript)
    assert [(x.text, x.role, x.start, x.end) for x in a.turns] == [
        ("first", "agent", 3.5, 10.0),
        ("second", "customer", 12.0, 15.5),
    ]
    assert b.turns[0].start is None


def test_per_turn_keeps_row_order_when_a_start_is_missing(tmp_path):
    f = write_csv(
        tmp_path / "t.csv",
        [["id", "speaker", "text", "start"], ["a", "x", "one", "9"], ["a", "y", "two", ""]],
    )
    (a,) = only(read(f), Transcript)
    assert [x.text for x in a.turns] == ["one", "two"]


def test_unreadable_start_times_give_one_warning(tmp_path):
    f = write_csv(
        tmp_path / "t.csv",
        [["id", "speaker", "text", "start"], ["a", "x", "one", "soon"], ["a", "y", "two", "later"]],
    )
    items = read(f)
    (w,) = only(items, Warning_)
    assert "2 start/end" in w.message and w.row == 1


def test_speaker_and_role_columns_together(tmp_path):
    f = write_jsonl(
        tmp_path / "t.jsonl",
        [
            {"id": "a", "speaker": "Priya", "role": "agent", "text": "hello"},
            {"id": "a", "speaker": "Tom", "role": "customer", "text": "hi"},
        ],
    )
    (t,) = only(read(f), Transcript)
    assert [(x.speaker, x.role) for x in t.turns] == [("Priya", "agent"), ("Tom", "customer")]


def test_repeated_ids_without_speaker_are_grouped(tmp_path):
    f = write_csv(
        tmp_path / "t.csv",
        [
            ["id", "text", "start"],
            ["a", "one", "1"],
            ["b", "x", ""],
            ["a", "Agent: two\nCaller: ok", "5"],
        ],
    )
    items = read(f)
    (w,) = only(items, Warning_)
    assert "'a' repeats" in w.message
    a, b = only(items, Transcript)
    assert [(x.speaker, x.role, x.text, x.start) for x in a.turns] == [
        ("", "unknown", "one", 1.0),
        ("Agent", "agent", "two", 5.0),
        ("Caller", "customer", "ok", None),
    ]
    assert b.tid == "b"


def test_per_turn_row_without_id_or_text_is_rejected(tmp_path):
    f = write_csv(
        tmp_path / "t.csv",
        [
            ["id", "speaker", "text"],
            ["a", "Agent", "hi"],
            ["", "Agent", "lost"],
            ["a", "Caller", ""],
        ],
    )
    items = read(f)
    rejects = only(items, Reject)
    assert [
        (r.row, "no transcript id" in r.reason or "empty text" in r.reason) for r in rejects
    ] == [
        (2, True),
        (3, True),
    ]
    (t,) = only(items, Transcript)
    assert [x.text for x in t.turns] == ["hi"]


def test_per_turn_without_id_column_is_one_transcript(tmp_path):
    f = write_csv(
        tmp_path / "single call.csv", [["speaker", "text"], ["Agent", "hi"], ["Caller", "yo"]]
    )
    items = read(f)
    (t,) = only(items, Transcript)
    assert t.tid == "single call" and len(t.turns) == 2
    assert len(only(items, Warning_)) == 1


# --- JSONL ----------------------------------------------------------------------------------


def test_jsonl_corrupt_line_rejected_rest_kept(tmp_path):
    f = tmp_path / "t.jsonl"
    f.write_text(
        '{"id": "a", "text": "hello", "meta": {"site": "north"}, "n": 3}\n'
        '{"id": "b", "text": \n'
        "\n"
        "[1, 2]\n"
        '{"id": 7, "text": "bye", "score": 1.5, "flag": true, "none": null}\n',
        encoding="utf-8",
    )
    items = read(f)
    rejects = only(items, Reject)
    assert [r.row for r in rejects] == [2, 4]
    assert "line 2" in rejects[0].reason and "not valid JSON" in rejects[0].reason
    assert "line 4" in rejects[1].reason and "not an object" in rejects[1].reason
    a, seven = only(items, Transcript)
    assert a.metadata == {"meta": '{"site": "north"}', "n": "3"}
    assert (seven.tid, seven.metadata) == ("7", {"score": "1.5", "flag": "true"})
    assert seven.source == f"{f}:line 5" and seven.format == "jsonl"


def test_ndjson_extension(tmp_path):
    f = write_jsonl(tmp_path / "t.ndjson", [{"id": "a", "text": "x"}])
    (t,) = only(read(f), Transcript)
    assert t.format == "jsonl"


# --- Parquet --------------------------------------------------------------------------------


def test_parquet_per_transcript_types(tmp_path):
    f = tmp_path / "t.parquet"
    pq.write_table(
        pa.table(
            {
                "transcript_id": [101, 102],
                "text": ["Agent: hi\nCaller: hello", "plain"],
                "call_date": [dt.date(2024, 5, 1), dt.date(2024, 5, 2)],
                "duration": [61.0, 62.5],
                "site": ["north", None],
            }
        ),
        f,
    )
    items = read(f)
    assert not only(items, Reject) and not only(items, Warning_)
    a, b = only(items, Transcript)
    assert (a.tid, a.format, a.source) == ("101", "parquet", f"{f}:row 1")
    assert a.metadata == {"duration": "61", "site": "north", "date": "2024-05-01"}
    assert b.metadata == {"duration": "62.5", "date": "2024-05-02"}
    assert [x.role for x in a.turns] == ["agent", "customer"]


def test_parquet_per_turn(tmp_path):
    f = tmp_path / "turns.parquet"
    pq.write_table(
        pa.table(
            {
                "call_id": ["x", "y", "x"],
                "party": ["agent", "agent", "customer"],
                "content": ["a1", "b1", "a2"],
                "offset": [0.0, 1.0, 2.5],
            }
        ),
        f,
    )
    x, y = only(read(f), Transcript)
    assert [(t.role, t.text, t.start) for t in x.turns] == [
        ("agent", "a1", 0.0),
        ("customer", "a2", 2.5),
    ]
    assert y.source == f"{f}:row 2"


def test_corrupt_parquet_rejected(tmp_path):
    f = tmp_path / "t.parquet"
    f.write_bytes(b"PAR1 this is not really parquet")
    (rej,) = read(f)
    assert isinstance(rej, Reject) and "Parquet" in rej.reason and rej.format == "parquet"


def test_parquet_size_limit_and_empty(tmp_path):
    f = tmp_path / "t.parquet"
    pq.write_table(pa.table({"text": [os.urandom(4000).hex()]}), f)
    (rej,) = read(f, IngestSettings(max_file_mb=0.001))
    assert "max_file_mb" in rej.reason
    g = tmp_path / "e.parquet"
    g.write_bytes(b"")
    (rej,) = read(g)
    assert "empty" in rej.reason


# --- helpers --------------------------------------------------------------------------------


def test_find_column():
    cols = ["Call ID", "Speaker-Role", "TEXT"]
    assert find_column(cols, "", ("transcript_id", "call_id")) == 0
    assert find_column(cols, "", ("speaker", "speaker_role")) == 1
    assert find_column(cols, "text", ()) == 2
    assert find_column(cols, "body", ("text",)) is None
    assert find_column(cols, "", ("nothing",)) is None


def test_load_table_cells(tmp_path):
    f = write_csv(tmp_path / "t.csv", [["a", "", "a"], ["1", " ", "x"]])
    table, notes = load_table(f, SETTINGS)
    assert table is not None and notes == []
    assert table.columns == ["a", "column_2", "a_2"]
    assert table.rows == [["1", None, "x"]] and table.numbers == [1]


@pytest.mark.parametrize(
    ("value", "order", "expected"),
    [
        ("2024-03-01", "mdy", "2024-03-01"),
        ("2024-03-01T10:15:00Z", "mdy", "2024-03-01T10:15:00+00:00"),
        ("2024-03-01 10:15", "mdy", "2024-03-01T10:15:00"),
        ("2024-03-01T10:15:00+02:00", "mdy", "2024-03-01T10:15:00+02:00"),
        ("2024/3/1", "mdy", "2024-03-01"),
        ("01.03.2024", "mdy", "2024-03-01"),
        ("03/01/2024", "mdy", "2024-03-01"),
        ("03/01/2024", "dmy", "2024-01-03"),
        ("03-01-24", "mdy", "2024-03-01"),
        ("3/1/2024 2:05 pm", "mdy", "2024-03-01T14:05:00"),
        ("3/1/2024 12:05 AM", "mdy", "2024-03-01T00:05:00"),
        ("01.03.2024 14:05:09.5", "mdy", "2024-03-01T14:05:09.500000"),
        ("1 March 2024", "mdy", "2024-03-01"),
        ("Mar 1, 2024", "mdy", "2024-03-01"),
        ("2024-02-30", "mdy", None),
        ("13/13/2024", "mdy", None),
        ("3/1/2024 13:00 pm", "mdy", None),
        ("soon", "mdy", None),
        ("", "mdy", None),
        ("12345", "mdy", None),
    ],
)
def test_normalise_date(value, order, expected):
    assert normalise_date(value, order) == expected


def test_date_order():
    assert date_order(["03/02/2024", "25/12/2024"]) == ("dmy", False)
    assert date_order(["03/02/2024", "12/25/2024"]) == ("mdy", False)
    assert date_order(["03/02/2024", None]) == ("mdy", True)
    assert date_order(["2024-03-02", "01.02.2024"]) == ("mdy", False)


def test_hundred_thousand_turn_rows_are_quick(tmp_path):
    f = tmp_path / "big.csv"
    with open(f, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["call_id", "speaker", "text", "start"])
        for k in range(100_000):
            # calls interleaved so rows of one call are not contiguous
            w.writerow([f"c{k % 2000}", "Agent" if k % 2 else "Caller", f"turn {k} text", k])
    began = time.perf_counter()
    items = read(f)
    elapsed = time.perf_counter() - began
    transcripts = only(items, Transcript)
    assert len(transcripts) == 2000 and not only(items, Reject)
    assert sum(len(t.turns) for t in transcripts) == 100_000
    assert [x.text for x in transcripts[3].turns[:2]] == ["turn 3 text", "turn 2003 text"]
    assert elapsed < 20, elapsed  # typically ~1 s; generous for a shared 2-core machine


@pytest.mark.parametrize("name", ["t.csv", "t.jsonl"])
@pytest.mark.parametrize(
    ("content", "reason"),
    [(b"", "empty"), (b" \r\n \n", "whitespace"), (b"id,text\x00\x00\x01\x02", "binary")],
)
def test_empty_whitespace_and_binary_tables(tmp_path, name, content, reason):
    f = tmp_path / name
    f.write_bytes(content)
    (rej,) = read(f)
    assert isinstance(rej, Reject) and reason in rej.reason and rej.row is None


def test_per_turn_date_is_earliest_and_turn_id_is_not_the_transcript_id(tmp_path):
    f = write_csv(
        tmp_path / "t.csv",
        [
            ["id", "conversation", "speaker", "text", "datetime"],
            ["1", "k", "Agent", "hi", "2024-03-01T10:00:05"],
            ["2", "k", "Caller", "yo", "2024-03-01T09:59:58"],
        ],
    )
    (t,) = only(read(f), Transcript)
    assert t.tid == "k"
    assert t.metadata == {"date": "2024-03-01T09:59:58"}


def test_channel_column_in_per_transcript_table_is_metadata(tmp_path):
    f = write_csv(
        tmp_path / "t.csv",
        [
            ["call_id", "channel", "text"],
            ["a", "phone", "Agent: hi\nCustomer: my bill"],
            ["b", "chat", "Agent: hello"],
        ],
    )
    a, b = only(read(f), Transcript)
    assert b.metadata == {"channel": "chat"}
    assert a.metadata == {"channel": "phone"}
    assert [x.role for x in a.turns] == ["agent", "customer"]


def test_speaker_column_with_unique_ids_is_per_turn(tmp_path):
    f = write_csv(
        tmp_path / "t.csv", [["call_id", "speaker", "text"], ["a", "Caller", "hi: there"]]
    )
    (a,) = only(read(f), Transcript)
    assert [(x.speaker, x.role, x.text) for x in a.turns] == [("Caller", "customer", "hi: there")]


# --- ids: one row per call -----------------------------------------------------------------


def test_a_repeated_id_in_a_per_call_table_rejects_the_later_row(tmp_path):
    rows = [["call_id", "transcript", "agent"]]
    rows += [[f"k{i}", f"Agent: hello {i}\nCaller: question {i}", "Noor"] for i in range(5)]
    rows += [["k1", "Agent: hi\nCaller: another call entirely", "Sam"]]
    rows += [["k3", "Agent: hello 3\nCaller: question 3", "Noor"]]  # an exact copy of row 4
    items = read(write_csv(tmp_path / "calls.csv", rows))
    assert [t.tid for t in only(items, Transcript)] == [f"k{i}" for i in range(5)]
    (rej,) = only(items, Reject)
    assert rej.row == 6 and rej.source.endswith("calls.csv")
    assert rej.reason.startswith("row 6 (counting data rows after the header): transcript id 'k1'")
    assert "row 2 (counting data rows after the header)" in rej.reason
    assert "never merged" in rej.reason
    (copy,) = only(items, Warning_)
    assert copy.row == 7 and "repeats row 4" in copy.message and "skipped" in copy.message


def test_ids_that_mostly_repeat_make_a_per_turn_table(tmp_path):
    rows = [["id", "text"]]
    rows += [[f"c{i}", f"turn {j} of call {i}"] for i in range(3) for j in range(3)]
    rows += [["c9", "a call with a single row"]]
    items = read(write_csv(tmp_path / "turns.csv", rows))
    assert not only(items, Reject)
    calls = only(items, Transcript)
    assert [(t.tid, len(t.turns)) for t in calls] == [("c0", 3), ("c1", 3), ("c2", 3), ("c9", 1)]
