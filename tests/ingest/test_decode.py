"""Tests for talkthemes.ingest.decode: encodings, binary detection, newlines, size limit."""

from __future__ import annotations

import builtins
import codecs

import pytest

from talkthemes.calls.model import Reject, Warning_
from talkthemes.config import IngestSettings
from talkthemes.errors import ConfigError, InputError
from talkthemes.ingest import decode
from talkthemes.ingest.decode import (
    BinaryInputError,
    decode_bytes,
    load_text,
    looks_binary,
    normalise_newlines,
)


def test_plain_utf8_has_no_warning():
    text, warnings = decode_bytes("Grüße, café".encode(), "f.txt", "cp1252")
    assert text == "Grüße, café"
    assert warnings == []


def test_utf8_bom_is_removed():
    text, warnings = decode_bytes(codecs.BOM_UTF8 + b"Agent: hi", "f.txt", "cp1252")
    assert text == "Agent: hi"
    assert warnings == []


@pytest.mark.parametrize("codec", ["utf-16-le", "utf-16-be", "utf-32-le", "utf-32-be"])
def test_utf16_and_utf32_with_bom(codec):
    bom = {
        "utf-16-le": codecs.BOM_UTF16_LE,
        "utf-16-be": codecs.BOM_UTF16_BE,
        "utf-32-le": codecs.BOM_UTF32_LE,
        "utf-32-be": codecs.BOM_UTF32_BE,
    }[codec]
    data = bom + "Agent: Grüße\r\nCustomer: hi".encode(codec)
    text, warnings = decode_bytes(data, "f.txt", "cp1252")
    assert text == "Agent: Grüße\nCustomer: hi"
    assert warnings == []


def test_utf16_without_bom_is_recognised_with_a_warning():
    data = "Agent: hello there\nCustomer: my bill".encode("utf-16-le")
    text, warnings = decode_bytes(data, "f.txt", "cp1252")
    assert text == "Agent: hello there\nCustomer: my bill"
    assert len(warnings) == 1 and "utf-16-le" in warnings[0].message


def test_cp1252_fallback_warns_and_names_codec():
    data = "Customer: the café charged €5".encode("cp1252")
    text, warnings = decode_bytes(data, "calls/f.txt", "cp1252")
    assert text == "Customer: the café charged €5"
    assert len(warnings) == 1
    assert isinstance(warnings[0], Warning_)
    assert warnings[0].source == "calls/f.txt"
    assert "cp1252" in warnings[0].message and "UTF-8" in warnings[0].message


def test_fallback_replaces_unmappable_bytes():
    # 0x81 is undefined in cp1252
    text, warnings = decode_bytes(b"ab\x81cd \xe9", "f.txt", "cp1252")
    assert text == "ab\ufffdcd é"
    assert warnings


def test_other_fallback_codec_is_used():
    text, warnings = decode_bytes("naïve".encode("latin-1"), "f.txt", "latin-1")
    assert text == "naïve"
    assert "latin-1" in warnings[0].message


def test_unknown_fallback_codec_is_a_config_error():
    with pytest.raises(ConfigError, match="encoding_fallback"):
        decode_bytes(b"caf\xe9", "f.txt", "no-such-codec")


def test_binary_raises_input_error():
    with pytest.raises(BinaryInputError):
        decode_bytes(b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", "f.txt", "cp1252")
    assert issubclass(BinaryInputError, InputError)


@pytest.mark.parametrize(
    ("data", "expected"),
    [
        (b"plain text\twith tab\r\n", False),
        (b"", False),
        (b"a\x00b", True),
        (bytes(range(1, 32)) * 10, True),
        (b"mostly text " * 20 + b"\x01\x02", False),
        (codecs.BOM_UTF16_LE + "hi".encode("utf-16-le"), False),
        ("Grüße".encode("cp1252"), False),
    ],
)
def test_looks_binary(data, expected):
    assert looks_binary(data) is expected


@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        ("a\r\nb\r\n", "a\nb\n"),
        ("a\rb\rc", "a\nb\nc"),
        ("a\r\n\rb\n", "a\n\nb\n"),
        ("no newline", "no newline"),
    ],
)
def test_normalise_newlines(raw, expected):
    assert normalise_newlines(raw) == expected


def test_decode_bytes_normalises_crlf_and_cr():
    text, _ = decode_bytes(b"one\r\ntwo\rthree\n", "f.txt", "cp1252")
    assert text == "one\ntwo\nthree\n"


def test_load_text_reads_file(tmp_path):
    f = tmp_path / "a.txt"
    f.write_bytes(codecs.BOM_UTF8 + b"Agent: hi\r\n")
    text, notes = load_text(f, IngestSettings(), "txt")
    assert text == "Agent: hi\n"
    assert notes == []


@pytest.mark.parametrize(
    ("content", "reason"),
    [(b"", "empty"), (b"  \r\n\t \n", "whitespace"), (b"\x00\x01\x02abc", "binary")],
)
def test_load_text_rejects(tmp_path, content, reason):
    f = tmp_path / "a.txt"
    f.write_bytes(content)
    text, notes = load_text(f, IngestSettings(), "txt")
    assert text is None
    assert len(notes) == 1 and isinstance(notes[0], Reject)
    assert reason in notes[0].reason
    assert notes[0].source == str(f) and notes[0].format == "txt"


def test_load_text_missing_file_and_folder(tmp_path):
    text, notes = load_text(tmp_path / "nope.txt", IngestSettings(), "txt")
    assert text is None and "does not exist" in notes[0].reason
    text, notes = load_text(tmp_path, IngestSettings(), "txt")
    assert text is None and "folder" in notes[0].reason


def test_oversize_file_is_rejected_without_reading(tmp_path, monkeypatch):
    f = tmp_path / "big.txt"
    with open(f, "wb") as fh:
        fh.truncate(50_000_000)  # sparse: 50 MB of NULs, nothing written
    reads: list[int] = []
    real_open = builtins.open

    def spy_open(*args, **kwargs):
        fh = real_open(*args, **kwargs)
        real_read = fh.read

        class Spy:
            def __enter__(self):
                return self

            def __exit__(self, *exc):
                fh.close()

            def fileno(self):
                return fh.fileno()

            def read(self, n=-1):
                reads.append(n)
                return real_read(n)

        return Spy()

    monkeypatch.setattr(decode, "open", spy_open, raising=False)
    settings = IngestSettings(max_file_mb=1)
    text, notes = load_text(f, settings, "txt")
    assert text is None
    assert "over the limit of 1 MB" in notes[0].reason and "max_file_mb" in notes[0].reason
    assert reads == []


def test_file_at_the_limit_is_read(tmp_path):
    f = tmp_path / "edge.txt"
    f.write_bytes(b"a" * 1000)
    text, notes = load_text(f, IngestSettings(max_file_mb=0.001), "txt")
    assert text == "a" * 1000 and notes == []
    f.write_bytes(b"a" * 1001)
    text, notes = load_text(f, IngestSettings(max_file_mb=0.001), "txt")
    assert text is None and "limit" in notes[0].reason


def test_uint16_array_is_not_taken_for_utf16():
    data = bytes(b for k in range(200) for b in (k % 7 + 1, 0))
    with pytest.raises(BinaryInputError):
        decode_bytes(data, "f.txt", "cp1252")


def test_file_growing_after_stat_is_read_whole(tmp_path, monkeypatch):
    f = tmp_path / "grow.txt"
    f.write_bytes(b"Agent: " + b"x" * 500)
    real_fstat = decode.os.fstat

    class Shrunk:
        def __init__(self, st):
            self.st_size = 3  # as if the file was 3 bytes when stat ran

    monkeypatch.setattr(decode.os, "fstat", lambda fd: Shrunk(real_fstat(fd)))
    text, notes = load_text(f, IngestSettings(), "txt")
    assert text == "Agent: " + "x" * 500 and notes == []
