"""Tests for talkthemes.ingest.manifest (invented data)."""

from __future__ import annotations

import csv
import datetime as dt
import json
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from talkthemes.config import IngestSettings
from talkthemes.ingest.manifest import Manifest, manifest_key, read_manifest

SETTINGS = IngestSettings()


def write_csv(path: Path, rows: list[list[object]]) -> Path:
    with open(path, "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(rows)
    return path


def test_csv_manifest_keys_dates_and_values(tmp_path):
    f = write_csv(
        tmp_path / "manifest.csv",
        [
            ["File Name", "Date", "Queue", "Site", "Duration"],
            ["calls/2024/c-001.wav", "2024-03-01 09:30", "billing", "north", "312"],
            ["c-002.TXT", "2024-03-02", "cards", "", "95.5"],
            ["c-003", "3/4/2024", "cards", "south", ""],
            ["c-004.txt", "yesterday", "billing", "north", "40"],
        ],
    )
    m = read_manifest(f, SETTINGS)
    assert isinstance(m, Manifest)
    assert m.key_column == "File Name"
    assert m.rejects == []
    assert m.entries == {
        "c-001": {
            "Queue": "billing",
            "Site": "north",
            "Duration": "312",
            "date": "2024-03-01T09:30:00",
        },
        "c-002": {"Queue": "cards", "Duration": "95.5", "date": "2024-03-02"},
        "c-003": {"Queue": "cards", "Site": "south", "date": "2024-03-04"},
        "c-004": {"Queue": "billing", "Site": "north", "Duration": "40"},
    }
    assert m.get("c-003") == m.entries["c-003"] and m.get("zzz") is None
    bad = [w for w in m.warnings if w.row == 4]
    assert len(bad) == 1 and "'yesterday'" in bad[0].message and "row 4" in bad[0].message


def test_duplicate_key_later_row_wins_with_warning(tmp_path):
    f = write_csv(tmp_path / "m.csv", [["id", "queue"], ["a", "one"], ["b", "x"], ["a", "two"]])
    m = read_manifest(f, SETTINGS)
    assert m.entries["a"] == {"queue": "two"}
    (w,) = m.warnings
    assert w.row == 3 and "row 1" in w.message


def test_row_without_key_rejected(tmp_path):
    f = write_csv(tmp_path / "m.csv", [["call_id", "queue"], ["", "lost"], ["b", "kept"]])
    m = read_manifest(f, SETTINGS)
    (r,) = m.rejects
    assert r.row == 1 and "call_id" in r.reason
    assert m.entries == {"b": {"queue": "kept"}}


def test_no_key_column_rejected_naming_columns(tmp_path):
    f = write_csv(tmp_path / "m.csv", [["when", "queue"], ["2024-01-01", "x"]])
    m = read_manifest(f, SETTINGS)
    (r,) = m.rejects
    assert "'when'" in r.reason and "'queue'" in r.reason
    assert m.entries == {} and m.key_column == ""


def test_configured_key_and_date_columns(tmp_path):
    f = write_csv(tmp_path / "m.csv", [["ref", "id", "received"], ["r1", "ignored", "01.02.2024"]])
    settings = IngestSettings(manifest_key_column="REF", date_column="received")
    m = read_manifest(f, settings)
    assert m.key_column == "ref"
    assert m.entries == {"r1": {"id": "ignored", "date": "2024-02-01"}}


def test_configured_key_column_missing(tmp_path):
    f = write_csv(tmp_path / "m.csv", [["id", "queue"], ["a", "x"]])
    m = read_manifest(f, IngestSettings(manifest_key_column="file"))
    (r,) = m.rejects
    assert "'file'" in r.reason and "manifest_key_column" in r.reason


def test_jsonl_manifest_with_corrupt_line(tmp_path):
    f = tmp_path / "m.jsonl"
    f.write_text(
        json.dumps({"transcript_id": "a", "site": "east", "agents": 2})
        + "\n{oops\n"
        + json.dumps({"transcript_id": "b", "site": "west"})
        + "\n",
        encoding="utf-8",
    )
    m = read_manifest(f, SETTINGS)
    assert m.entries == {"a": {"site": "east", "agents": "2"}, "b": {"site": "west"}}
    (r,) = m.rejects
    assert r.row == 2 and "line 2" in r.reason


def test_parquet_manifest_with_timestamp(tmp_path):
    f = tmp_path / "m.parquet"
    pq.write_table(
        pa.table(
            {
                "call_id": [1, 2],
                "call_date": [dt.datetime(2024, 5, 1, 8, 0), dt.datetime(2024, 5, 2, 17, 30, 5)],
                "queue": ["a", "b"],
            }
        ),
        f,
    )
    m = read_manifest(f, SETTINGS)
    assert m.entries == {
        "1": {"queue": "a", "date": "2024-05-01T08:00:00"},
        "2": {"queue": "b", "date": "2024-05-02T17:30:05"},
    }


def test_unreadable_manifest_file(tmp_path):
    f = tmp_path / "m.csv"
    f.write_bytes(b"")
    m = read_manifest(f, SETTINGS)
    assert len(m.rejects) == 1 and "empty" in m.rejects[0].reason and m.entries == {}


@pytest.mark.parametrize(
    ("raw", "key"),
    [
        ("c-001", "c-001"),
        (" c-001.txt ", "c-001"),
        ("C:\\calls\\c-001.vtt", "c-001"),
        ("a/b/c-001.MP3", "c-001"),
        ("v1.2", "v1.2"),
        ("call.2024.03", "call.2024.03"),
        ("notes.docx", "notes.docx"),
    ],
)
def test_manifest_key(raw, key):
    assert manifest_key(raw) == key
