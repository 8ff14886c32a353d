"""init, ingest and status through the command line: exit codes, JSON, rejects, safety."""

from __future__ import annotations

import csv
import io
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

from talkthemes.cli._common import app

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
    # the short copy has another id: a different call with the same text, stored and reported
    assert "same text as 'c001'" in err and "copy of c001.txt" in err
    code, out, _ = _run("status", "--workspace", str(ws), "--json")
    assert json.loads(out)["transcripts"] == 4


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

    # the test hook pauses the run after each committed batch (talkthemes/testhook.py), so
    # the kill lands mid-run however fast the ingest is
    env = {**os.environ, "TALKTHEMES_TEST_PAUSE_AT": "ingest-batch",
           "TALKTHEMES_TEST_PAUSE_SECONDS": "300"}  # fmt: skip
    proc = subprocess.Popen(
        [sys.executable, "-m", "talkthemes.cli", "ingest", str(src), "--workspace", str(ws)],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        env=env,
    )
    db = ws / "talkthemes.db"
    deadline = time.time() + 60
    while time.time() < deadline:  # wait until a batch is committed
        time.sleep(0.2)
        try:
            con = sqlite3.connect(db, timeout=5)
            n = con.execute("SELECT COUNT(*) FROM transcripts").fetchone()[0]
            con.close()
        except sqlite3.OperationalError:
            continue
        if n > 1:
            break
    assert proc.poll() is None  # still running: paused after its first batch
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
    # the killed run is shown as unfinished
    code, out, _ = _run("status", "--workspace", str(ws), "--json")
    assert json.loads(out)["interrupted_ingest_runs"] == 1
    assert "1 ingest run(s) did not finish" in _run("status", "--workspace", str(ws))[1]
    # the lock died with the process; a re-run finishes the job and clears the notice
    code, out, _ = _run("ingest", str(src), "--workspace", str(ws), "--json")
    assert code == 0
    totals = json.loads(out)["totals"]
    assert totals["added"] + totals["unchanged"] == 4000
    code, out, _ = _run("status", "--workspace", str(ws), "--json")
    assert json.loads(out)["interrupted_ingest_runs"] == 0
    assert "did not finish" not in _run("status", "--workspace", str(ws))[1]


# -- identity first (issue: distinct calls dropped as duplicates) -------------------------

LONG_CALL = (
    "Agent: Good afternoon, you're through to the water helpline, how can I help?\n"
    "Customer: Hi, my meter reading looks far too high this quarter and I think the "
    "engineer who visited last week read the wrong dial on the outside box.\n"
)


def _json(*args: str) -> tuple[int, dict]:
    code, out, _ = _run(*args, "--json")
    return code, json.loads(out)


def test_seven_short_hang_ups_with_the_same_text_are_seven_calls(tmp_path: Path) -> None:
    src = tmp_path / "batch"
    for i in range(7):
        _call(src, f"hang{i}.txt", "Customer: hello?\nCustomer: hello?\n")
    ws = str(tmp_path / "w")
    code, doc = _json("ingest", "--create", str(src), "--workspace", ws)
    assert code == 0
    assert doc["totals"] == {"added": 7, "unchanged": 0, "duplicate": 0, "rejected": 0}
    pairs = [(m["id"], m["same_text_as"], m["kind"]) for m in doc["same_text"]]
    assert pairs == [(f"hang{i}", "hang0", "same_text") for i in range(1, 7)]
    assert any("same text as 'hang0'" in w["message"] for w in doc["warnings"])
    _, st = _json("status", "--workspace", ws)
    assert st["transcripts"] == 7 and st["likely_reexports"]["count"] == 0


def test_long_same_text_under_another_id_is_a_likely_reexport(tmp_path: Path) -> None:
    _call(tmp_path / "a", "c100.txt", LONG_CALL)
    _call(tmp_path / "b", "export-2 c100.txt", LONG_CALL.upper())  # exported again, renamed
    ws = str(tmp_path / "w")
    assert _json("ingest", "--create", str(tmp_path / "a"), "--workspace", ws)[0] == 0
    code, doc = _json("ingest", "--create", str(tmp_path / "b"), "--workspace", ws)
    assert code == 0
    assert doc["totals"]["added"] == 0 and doc["totals"]["duplicate"] == 1
    assert doc["duplicates"] == [
        {"id": "export-2 c100", "source": str(tmp_path / "b" / "export-2 c100.txt"),
         "duplicate_of": "c100"}
    ]  # fmt: skip
    _, st = _json("status", "--workspace", ws)
    assert st["transcripts"] == 1
    assert st["likely_reexports"] == {
        "count": 1,
        "skipped": 1,
        "kept": 0,
        "first": [{"id": "export-2 c100", "same_text_as": "c100", "kept": False}],
    }
    code, out, _ = _run("status", "--workspace", ws)
    assert code == 0
    assert "1 likely re-export(s) of stored calls (1 skipped, 0 kept)" in out
    assert "export-2 c100 = c100" in out


def test_reexport_action_keep_stores_both_and_status_lists_them(tmp_path: Path) -> None:
    ws = tmp_path / "w"
    _run("init", str(ws))
    (ws / "talkthemes.toml").write_text("[ingest]\nreexport_action = 'keep'\n")
    _call(tmp_path / "in", "c100.txt", LONG_CALL)
    _call(tmp_path / "in", "c100-copy.txt", LONG_CALL)
    code, doc = _json("ingest", "--create", str(tmp_path / "in"), "--workspace", str(ws))
    assert code == 0 and doc["totals"]["added"] == 2 and doc["totals"]["duplicate"] == 0
    assert [m["kind"] for m in doc["same_text"]] == ["reexport_kept"]
    _, st = _json("status", "--workspace", str(ws))
    assert st["likely_reexports"]["kept"] == 1 and st["transcripts"] == 2


def test_same_long_text_with_conflicting_dates_is_two_calls(tmp_path: Path) -> None:
    src = tmp_path / "in"
    _call(src, "c100.txt", LONG_CALL)
    _call(src, "c200.txt", LONG_CALL)
    with (src / "manifest.csv").open("w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(
            [["call_id", "date"], ["c100", "2026-02-02"], ["c200", "2026-03-09"]]
        )
    ws = str(tmp_path / "w")
    code, doc = _json("ingest", "--create", str(src), "--workspace", ws)
    assert code == 0 and doc["totals"]["added"] == 2
    (m,) = doc["same_text"]
    assert (m["id"], m["same_text_as"], m["kind"]) == ("c200", "c100", "same_text")
    assert "date '2026-03-09' vs '2026-02-02'" in m["reason"]
    _, st = _json("status", "--workspace", ws)
    assert st["same_text_pairs"] == 1 and st["likely_reexports"]["count"] == 0


def test_two_calls_under_one_id_in_a_per_call_table_reject_the_later_row(tmp_path: Path) -> None:
    table = tmp_path / "calls.csv"
    rows = [["call_id", "transcript", "queue"]]
    rows += [[f"k{i}", f"Agent: hello {i}\nCustomer: question number {i}", "q"] for i in range(6)]
    rows.append(["k2", "Agent: hello\nCustomer: a different call under a used id", "q"])
    with table.open("w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(rows)
    code, doc = _json("ingest", "--create", str(table), "--workspace", str(tmp_path / "w"))
    assert code == 3
    assert doc["totals"]["added"] == 6 and doc["totals"]["rejected"] == 1
    (rej,) = doc["rejects"]
    assert rej["source"] == str(table) and rej["row"] == 7
    assert "row 7" in rej["reason"] and "'k2'" in rej["reason"] and "row 3" in rej["reason"]


def test_changed_text_under_a_stored_id_is_rejected_in_a_later_run(tmp_path: Path) -> None:
    f = _call(tmp_path / "in", "c100.txt", LONG_CALL)
    ws = str(tmp_path / "w")
    assert _json("ingest", "--create", str(f), "--workspace", ws)[0] == 0
    assert _json("ingest", "--create", str(f), "--workspace", ws)[1]["totals"]["unchanged"] == 1
    f.write_text(LONG_CALL + "Agent: one more line\n", encoding="utf-8")
    code, doc = _json("ingest", "--create", str(f), "--workspace", ws)
    assert code == 3
    (rej,) = doc["rejects"]
    assert rej["source"] == str(f) and "'c100' is already stored" in rej["reason"]


# -- manifests ---------------------------------------------------------------------------


def _manifest(path: Path, rows: list[list[str]]) -> Path:
    with path.open("w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(rows)
    return path


def test_folder_manifest_is_applied_not_read_as_transcripts(tmp_path: Path, exports: Path) -> None:
    ws = str(tmp_path / "w")
    code, doc = _json("ingest", "--create", str(exports), "--workspace", ws)
    assert code == 0, doc["rejects"]
    assert doc["totals"]["added"] == 4 and doc["manifest_rows"] == 3
    assert doc["manifests"] == [
        {"source": str(exports / "manifest.csv"), "rows": 3, "unknown_ids": 0,
         "first_unknown_ids": []}
    ]  # fmt: skip
    _, st = _json("status", "--workspace", ws)
    assert st["date_range"] == ["2026-05-04", "2026-06-20"]


def test_manifest_ids_not_stored_are_reported(tmp_path: Path, exports: Path) -> None:
    m = _manifest(
        tmp_path / "extra.csv",
        [["call_id", "queue"], ["c001", "billing"]] + [[f"zz{i}", "moves"] for i in range(7)],
    )
    ws = str(tmp_path / "w")
    code, doc = _json(
        "ingest", "--create", str(exports / "calls"), "--manifest", str(m), "--workspace", ws
    )
    assert code == 0
    (info,) = doc["manifests"]
    assert info["unknown_ids"] == 7 and info["first_unknown_ids"] == [f"zz{i}" for i in range(7)]
    (w,) = [w for w in doc["warnings"] if w["source"] == str(m)]
    assert w["message"].startswith("7 manifest row(s) name ids with no stored transcript: 'zz0'")
    assert "'zz0' (row 2 (counting data rows after the header))" in w["message"]
    assert w["row"] == 2
    code, _, err = _run(
        "ingest", "--create", str(exports / "calls"), "--manifest", str(m), "--workspace", ws
    )
    assert code == 0 and "7 manifest row(s) name ids with no stored transcript" in err


def test_manifest_changes_need_update_metadata(tmp_path: Path, exports: Path) -> None:
    ws = str(tmp_path / "w")
    assert _json("ingest", "--create", str(exports), "--workspace", ws)[0] == 0
    m = _manifest(
        tmp_path / "fix.csv",
        [["call_id", "queue", "site", "agent"], ["c001", "cards", "North", "Noor"]],
    )
    (tmp_path / "empty").mkdir()
    code, doc = _json(
        "ingest", "--create", "--manifest", str(m), str(tmp_path / "empty"), "--workspace", ws
    )
    assert code == 3 and len(doc["rejects"]) == 1
    changes = [
        (c["id"], c["field"], c["old"], c["new"], c["applied"]) for c in doc["metadata_changes"]
    ]
    assert changes == [("c001", "queue", "billing", "cards", False)]
    (rej,) = doc["rejects"]
    assert rej["source"] == str(m) and rej["row"] == 1 and rej["format"] == "manifest"
    assert "row 1" in rej["reason"] and "'c001'" in rej["reason"]
    assert "'queue': 'billing' → 'cards'" in rej["reason"] and "--update-metadata" in rej["reason"]
    _, st = _json("status", "--workspace", ws)
    assert st["metadata_fields"]["queue"]["top"]["billing"] == 1  # not overwritten
    assert st["metadata_fields"]["agent"]["top"] == {"Noor": 1}  # a new field is just added
    code, doc = _json(
        "ingest", str(exports / "calls"), "--manifest", str(m), "--update-metadata", "-w", ws
    )
    assert code == 0
    assert [(c["field"], c["applied"]) for c in doc["metadata_changes"]] == [("queue", True)]
    assert any("'queue': 'billing' → 'cards'" in w["message"] for w in doc["warnings"])
    _, st = _json("status", "--workspace", ws)
    assert st["metadata_fields"]["queue"]["top"].get("billing") is None


def test_rejects_csv_defuses_formulas_from_file_names(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # OWASP "CSV Injection": a cell starting with = + - @ is prefixed with a quote.
    monkeypatch.chdir(tmp_path)
    _call(tmp_path, "=HYPERLINK(1).txt", "")  # empty: rejected, its name goes to the CSV
    code, _, _ = _run(
        "ingest", "--create", "=HYPERLINK(1).txt", "--rejects", "rejects.csv", "-w", "w"
    )
    assert code == 3
    text = (tmp_path / "rejects.csv").read_text(encoding="utf-8")
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[0] == ["source", "row", "format", "reason"]
    assert rows[1][0] == "'=HYPERLINK(1).txt"
