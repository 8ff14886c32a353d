"""Tests for talkthemes.ingest.detect: walking folders and dispatching readers."""

from __future__ import annotations

import os
import threading
from pathlib import Path

import pytest

from talkthemes.calls.model import Reject, Transcript, Warning_
from talkthemes.config import IngestSettings
from talkthemes.errors import ConfigError
from talkthemes.ingest import detect
from talkthemes.ingest.detect import FORMATS, is_ignored, iter_files, read_file, read_inputs

SETTINGS = IngestSettings()


def only(items: list, kind: type) -> list:
    return [x for x in items if isinstance(x, kind)]


def make_tree(root: Path) -> None:
    (root / "b").mkdir(parents=True)
    (root / "a").mkdir()
    (root / "a" / "z.txt").write_text("Agent: z", encoding="utf-8")
    (root / "a" / "y.VTT").write_text("WEBVTT\n\n00:01.000 --> 00:02.000\ny\n", encoding="utf-8")
    (root / "b" / "Café call 1.txt").write_text("Customer: café", encoding="utf-8")
    (root / "c.csv").write_text("id,text\nrow1,hello\n", encoding="utf-8")
    (root / ".DS_Store").write_bytes(b"\x00\x01binary")
    (root / ".hidden").mkdir()
    (root / ".hidden" / "secret.txt").write_text("Agent: hidden", encoding="utf-8")
    (root / "~$draft.txt").write_text("lock", encoding="utf-8")
    (root / "Thumbs.db").write_bytes(b"\x00")
    (root / "audio1.wav").write_bytes(b"RIFF")
    (root / "b" / "audio2.WAV").write_bytes(b"RIFF")
    (root / "notes.docx").write_bytes(b"PK")


def test_formats_mapping():
    assert FORMATS == {
        ".txt": "txt",
        ".vtt": "vtt",
        ".csv": "csv",
        ".jsonl": "jsonl",
        ".ndjson": "jsonl",
        ".parquet": "parquet",
    }
    assert set(FORMATS.values()) == set(detect.READERS)


def test_walk_is_sorted_recursive_and_skips_hidden_and_unknown(tmp_path):
    make_tree(tmp_path)
    items = list(iter_files([tmp_path], SETTINGS))
    files = [p.relative_to(tmp_path).as_posix() for p in items if isinstance(p, Path)]
    assert files == ["a/y.VTT", "a/z.txt", "b/Café call 1.txt", "c.csv"]
    assert not only(items, Reject)
    warnings = only(items, Warning_)
    assert len(warnings) == 2  # one per unknown extension, none for hidden/system files
    assert "2 file(s) with extension '.wav'" in warnings[1].message
    assert "'.docx'" in warnings[0].message
    assert all(w.source == str(tmp_path) for w in warnings)


@pytest.mark.parametrize(
    "name", [".DS_Store", ".git", "~$doc.txt", "Thumbs.db", "desktop.ini", "__MACOSX"]
)
def test_is_ignored(name):
    assert is_ignored(name)


def test_is_not_ignored():
    assert not is_ignored("call.txt") and not is_ignored("a.b.txt")


def test_missing_path_and_explicit_unknown_file(tmp_path):
    odd = tmp_path / "x.docx"
    odd.write_bytes(b"PK")
    items = list(iter_files([tmp_path / "missing.txt", odd, tmp_path / "nope"], SETTINGS))
    rejects = only(items, Reject)
    assert len(rejects) == 3
    assert "does not exist" in rejects[0].reason and rejects[0].format == "txt"
    assert "unknown format '.docx'" in rejects[1].reason
    assert "does not exist" in rejects[2].reason


def test_explicit_files_and_duplicates_yielded_once(tmp_path):
    make_tree(tmp_path)
    f = tmp_path / "a" / "z.txt"
    items = list(iter_files([f, tmp_path / "a", f, str(tmp_path / "a")], SETTINGS))
    files = [p for p in items if isinstance(p, Path)]
    assert [p.name for p in files] == ["z.txt", "y.VTT"]


def _run_with_timeout(fn, seconds: float = 20.0):
    box: dict[str, object] = {}

    def target():
        box["result"] = fn()

    th = threading.Thread(target=target, daemon=True)
    th.start()
    th.join(seconds)
    assert not th.is_alive(), "walk did not finish (symlink loop?)"
    return box["result"]


def test_symlink_loop_is_detected(tmp_path):
    root = tmp_path / "root"
    (root / "sub" / "deeper").mkdir(parents=True)
    (root / "sub" / "deeper" / "t.txt").write_text("Agent: hi", encoding="utf-8")
    os.symlink(root, root / "sub" / "deeper" / "up")  # points back to an ancestor
    os.symlink(root / "sub", root / "sub" / "self")
    items = _run_with_timeout(lambda: list(iter_files([root], SETTINGS)))
    files = [p for p in items if isinstance(p, Path)]
    assert [p.name for p in files] == ["t.txt"]
    loops = [w for w in only(items, Warning_) if "loop" in w.message]
    assert {Path(w.source).name for w in loops} == {"up", "self"}


def test_symlink_to_sibling_is_read_once(tmp_path):
    (tmp_path / "real").mkdir()
    (tmp_path / "real" / "t.txt").write_text("Agent: hi", encoding="utf-8")
    os.symlink(tmp_path / "real", tmp_path / "alias")
    os.symlink(tmp_path / "real" / "t.txt", tmp_path / "t-link.txt")
    items = list(iter_files([tmp_path], SETTINGS))
    files = [p for p in items if isinstance(p, Path)]
    assert [p.relative_to(tmp_path).as_posix() for p in files] == ["alias/t.txt"]
    (w,) = only(items, Warning_)
    assert "already read" in w.message and w.source.endswith("real")


def test_symlinks_not_followed_when_switched_off(tmp_path):
    (tmp_path / "real").mkdir()
    (tmp_path / "real" / "t.txt").write_text("Agent: hi", encoding="utf-8")
    os.symlink(tmp_path / "real", tmp_path / "alias")
    items = list(iter_files([tmp_path], IngestSettings(follow_symlinks=False)))
    files = [p.relative_to(tmp_path).as_posix() for p in items if isinstance(p, Path)]
    assert files == ["real/t.txt"]
    (w,) = only(items, Warning_)
    assert "follow_symlinks" in w.message


def test_broken_symlinks(tmp_path):
    os.symlink(tmp_path / "gone.txt", tmp_path / "dangling.txt")
    items = list(iter_files([tmp_path], SETTINGS))
    (w,) = only(items, Warning_)
    assert "broken symbolic link" in w.message
    (r,) = list(iter_files([tmp_path / "dangling.txt"], SETTINGS))
    assert isinstance(r, Reject) and "broken symbolic link" in r.reason


def test_read_inputs_dispatches_every_format(tmp_path):
    make_tree(tmp_path)
    items = list(read_inputs([tmp_path], SETTINGS))
    ts = only(items, Transcript)
    assert [(t.tid, t.format) for t in ts] == [
        ("y", "vtt"),
        ("z", "txt"),
        ("Café call 1", "txt"),
        ("row1", "csv"),
    ]
    assert not only(items, Reject)


def test_reader_failure_becomes_reject_and_walk_goes_on(tmp_path, monkeypatch):
    for name in ("a.txt", "b.txt", "c.txt"):
        (tmp_path / name).write_text(f"Agent: {name}", encoding="utf-8")
    real = detect.READERS["txt"]

    def flaky(path, settings):
        if path.name == "b.txt":
            yield from real(path, settings)  # yields, then fails
            raise RuntimeError("disk hiccup")
        yield from real(path, settings)

    monkeypatch.setitem(detect.READERS, "txt", flaky)
    items = list(read_inputs([tmp_path], SETTINGS))
    assert [t.tid for t in only(items, Transcript)] == ["a", "b", "c"]
    (r,) = only(items, Reject)
    assert r.source == str(tmp_path / "b.txt") and "RuntimeError: disk hiccup" in r.reason


def test_bad_fallback_codec_stops_before_reading(tmp_path):
    from talkthemes.config import settings_from_dict

    (tmp_path / "a.txt").write_text("Agent: hi", encoding="utf-8")
    with pytest.raises(ConfigError, match="encoding_fallback"):
        settings_from_dict({"ingest": {"encoding_fallback": "klingon-8"}})
    # settings built without validation still fail before any file is read
    bad = IngestSettings.model_construct(encoding_fallback="klingon-8")
    with pytest.raises(ConfigError, match="encoding_fallback"):
        list(read_inputs([tmp_path], bad))


def test_read_file_unknown_extension(tmp_path):
    f = tmp_path / "x.md"
    f.write_text("# hi", encoding="utf-8")
    (r,) = list(read_file(f, SETTINGS))
    assert isinstance(r, Reject) and "unknown format" in r.reason


def test_empty_binary_and_whitespace_files_in_folder(tmp_path):
    (tmp_path / "empty.txt").write_bytes(b"")
    (tmp_path / "space.vtt").write_bytes(b"  \n ")
    (tmp_path / "image.txt").write_bytes(b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR")
    (tmp_path / "good.txt").write_text("Agent: fine", encoding="utf-8")
    items = list(read_inputs([tmp_path], SETTINGS))
    reasons = {Path(r.source).name: r.reason for r in only(items, Reject)}
    assert set(reasons) == {"empty.txt", "space.vtt", "image.txt"}
    assert "looks binary" in reasons["image.txt"]
    assert [t.tid for t in only(items, Transcript)] == ["good"]


def test_manifest_files_are_split_from_transcripts_by_name(tmp_path):
    (tmp_path / "may").mkdir()
    (tmp_path / "may" / "Manifest.CSV").write_text("call_id,queue\nc1,x\n", encoding="utf-8")
    (tmp_path / "may" / "c1.txt").write_text("Agent: hi", encoding="utf-8")
    (tmp_path / "manifest.jsonl").write_text('{"call_id": "c1"}\n', encoding="utf-8")
    (tmp_path / "calls.csv").write_text("id,text\nc2,hello\n", encoding="utf-8")
    walked = [p for p in iter_files([tmp_path], SETTINGS) if isinstance(p, Path)]
    files, manifests = detect.split_manifests(walked)
    assert [p.relative_to(tmp_path).as_posix() for p in files] == ["calls.csv", "may/c1.txt"]
    assert [p.relative_to(tmp_path).as_posix() for p in manifests] == [
        "manifest.jsonl",
        "may/Manifest.CSV",
    ]
    assert detect.is_manifest_name("x/manifest.parquet")
    assert not detect.is_manifest_name("manifest-2024.csv")
