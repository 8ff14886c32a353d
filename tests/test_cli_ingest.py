"""init, ingest and status through the command line: exit codes, JSON, rejects, safety."""

from __future__ import annotations

import csv
import json
import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

from talkthemes.cli import app

runner = CliRunner()


def _run(*args: str) -> tuple[int, str, str]:
    res = runner.invoke(app, list(args))
    return res.exit_code, res.stdout, res.stderr


def _call(folder: Path, name: str, body: str) -> Path:
    p = folder / name
    p.parent.mkdir(parents=True, exist_ok=True)
    p.write_text(body, encoding="utf-8")
    return p


@pytest.fixture
def exports(tmp_path: Path) -> Path:
    root = tmp_path / "exports"
    _call(
        root,
        "calls/c001.txt",
        "Agent: Thanks for calling.\nCustomer: My bill doubled this month.\n",
    )
    _call(
        root, "calls/c002.txt", "[00:00:01] Agent: Hello.\n[00:00:04] Caller: The power is out.\n"
    )
    _call(
        root,
        "calls/sub dir/ç003.vtt",
        "WEBVTT\n\n00:00.000 --> 00:02.000\n<v Agent>Hello there.\n\n"
        "00:02.500 --> 00:05.000\n<v Customer>I want a payment plan.\n",
    )
    with (root / "turns.csv").open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["call_id", "speaker", "start", "text"])
        w.writerow(["c004", "Agent", "0.0", "Good morning, you're through to the helpline."])
        w.writerow(
            [
                "c004",
                "Customer",
                "2.5",
                "Hi, I'm moving house, next week, and need to move my account.",
            ]
        )
    with (root / "manifest.csv").open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["call_id", "date", "queue", "site"])
        w.writerow(["c001", "2026-05-04", "billing", "North"])
        w.writerow(["c002.txt", "2026-06-11", "faults", "South"])
        w.writerow(["c004", "2026-06-20", "moves", "North"])
    return root


def test_init_then_status_json(tmp_path: Path) -> None:
    ws = tmp_path / "w"
    code, _, err = _run("init", str(ws))
    assert code == 0 and "Workspace ready" in err
    code, out, _ = _run("status", "--workspace", str(ws), "--json")
    assert code == 0
    doc = json.loads(out)
    assert doc["transcripts"] == 0
    assert doc["stages"] == {"prepared": None, "swept": None, "published": None}


def test_status_without_workspace_is_usage_error(tmp_path: Path) -> None:
    code, out, err = _run("status", "--workspace", str(tmp_path / "none"))
    assert code == 2
    assert "talkthemes init" in err
    assert "Traceback" not in out + err


def test_manifest_inside_an_ingested_folder_is_not_read_as_transcripts(
    tmp_path: Path, exports: Path
) -> None:
    code, out, _ = _run(
        "ingest",
        str(exports),
        "--manifest",
        str(exports / "manifest.csv"),
        "--workspace",
        str(tmp_path / "w"),
        "--create",
        "--json",
    )
    assert code == 0, out
    assert json.loads(out)["totals"]["added"] == 4


def test_ingest_everything_and_report(tmp_path: Path, exports: Path) -> None:
    ws = tmp_path / "w"
    code, out, _ = _run(
        "ingest",
        str(exports / "calls"),
        str(exports / "turns.csv"),
        "--manifest",
        str(exports / "manifest.csv"),
        "--workspace",
        str(ws),
        "--create",
        "--json",
    )
    assert code == 0, out
    doc = json.loads(out)
    assert doc["totals"] == {"added": 4, "unchanged": 0, "duplicate": 0, "rejected": 0}
    assert doc["by_format"]["txt"]["added"] == 2
    assert doc["by_format"]["vtt"]["added"] == 1
    assert doc["by_format"]["csv"]["added"] == 1
    code, out, _ = _run("status", "--workspace", str(ws), "--json")
    st = json.loads(out)
    assert st["transcripts"] == 4
    assert st["by_month"] == {"2026-05": 1, "2026-06": 2}
    assert st["date_range"] == ["2026-05-04", "2026-06-20"]
    assert st["metadata_fields"]["queue"]["distinct"] == 3
    assert st["turns_by_role"] == {"agent": 4, "customer": 4}
    # human output has the tables
    code, out, _ = _run("status", "--workspace", str(ws))
    assert code == 0 and "By format" in out and "not yet" in out
    # a second run changes nothing and says so
    code, out, _ = _run("ingest", str(exports / "calls"), "--workspace", str(ws), "--json")
    assert json.loads(out)["totals"]["unchanged"] == 3


def test_rejects_give_exit_3_keep_good_inputs_and_write_csv(tmp_path: Path, exports: Path) -> None:
    _call(exports, "calls/empty.txt", "   \n")
    (exports / "calls" / "binary.txt").write_bytes(b"\x00\x01\x02PK\x03\x04" * 50)
    _call(
        exports,
        "calls/copy of c001.txt",
        "agent: thanks for calling\ncustomer: my bill doubled this month",
    )
    ws = tmp_path / "w"
    rejects = tmp_path / "rejects.csv"
    code, out, err = _run(
        "ingest",
        str(exports / "calls"),
        "--workspace",
        str(ws),
        "--create",
        "--rejects",
        str(rejects),
    )
    assert code == 3
    assert "rejected" in err and "empty.txt" in err and "binary.txt" in err
    rows = list(csv.DictReader(rejects.open(encoding="utf-8")))
    assert {Path(r["source"]).name for r in rows} == {"empty.txt", "binary.txt"}
    assert all(r["reason"] for r in rows)
    code, out, _ = _run("status", "--workspace", str(ws), "--json")
    assert json.loads(out)["transcripts"] == 3  # good ones kept; the copy is a duplicate


def test_missing_path_is_rejected_not_a_crash(tmp_path: Path) -> None:
    code, out, _ = _run(
        "ingest", str(tmp_path / "nope"), "--workspace", str(tmp_path / "w"), "--create", "--json"
    )
    assert code == 3
    assert json.loads(out)["rejects"][0]["source"].endswith("nope")


def test_busy_workspace_message(tmp_path: Path, exports: Path) -> None:
    from talkthemes.workspace import Workspace

    w = Workspace(tmp_path / "w")
    w.init()
    with w.lock("refresh"):
        code, _, err = _run("ingest", str(exports), "--workspace", str(w.root))
    assert code == 2
    assert "workspace busy: refresh since" in err


def test_bad_settings_are_a_usage_error(tmp_path: Path, exports: Path) -> None:
    ws = tmp_path / "w"
    _run("init", str(ws))
    (ws / "talkthemes.toml").write_text("[ingest]\nmax_file_mb = 'big'\n")
    code, _, err = _run("ingest", str(exports), "--workspace", str(ws))
    assert code == 2
    assert "max_file_mb" in err


def test_killed_ingest_leaves_a_consistent_store(tmp_path: Path) -> None:
    src = tmp_path / "many"
    src.mkdir()
    body = "Agent: Hello, how can I help with your account today?\n" + (
        "Customer: " + "my water bill went up again and I want to know why " * 20 + "\n"
    )
    for i in range(4000):
        (src / f"call{i:05d}.txt").write_text(body.replace("again", f"again {i}"), encoding="utf-8")
    ws = tmp_path / "w"
    _run("init", str(ws))
    # earlier state that must survive
    _call(tmp_path, "first/keep.txt", "Agent: hi\nCustomer: keep me please")
    assert _run("ingest", str(tmp_path / "first"), "--workspace", str(ws))[0] == 0

    proc = subprocess.Popen(
        [sys.executable, "-m", "talkthemes.cli", "ingest", str(src), "--workspace", str(ws)],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    db = ws / "talkthemes.db"
    deadline = time.time() + 60
    while time.time() < deadline:  # wait until some batches are committed
        time.sleep(0.2)
        try:
            con = sqlite3.connect(db, timeout=5)
            n = con.execute("SELECT COUNT(*) FROM transcripts").fetchone()[0]
            con.close()
        except sqlite3.OperationalError:
            continue
        if n > 1:
            break
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()

    con = sqlite3.connect(db)
    assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    bad = con.execute(
        "SELECT COUNT(*) FROM transcripts t WHERE n_turns != "
        "(SELECT COALESCE(SUM(json_array_length(u.turns)), 0) FROM turn_sets u "
        "WHERE u.transcript = t.id)"
    ).fetchone()[0]
    assert bad == 0  # every stored transcript is whole
    assert con.execute("SELECT COUNT(*) FROM transcripts WHERE tid='keep'").fetchone()[0] == 1
    con.close()
    # the lock died with the process; a re-run finishes the job
    code, out, _ = _run("ingest", str(src), "--workspace", str(ws), "--json")
    assert code == 0
    totals = json.loads(out)["totals"]
    assert totals["added"] + totals["unchanged"] == 4000
