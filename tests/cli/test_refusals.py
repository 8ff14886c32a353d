"""Usage errors a scheduler can trust (exit 2, one line naming what is wrong), found before
any work is done and leaving the workspace as it was (issue 11, item 12, command side)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
import typer
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.workspace import Workspace

runner = CliRunner()
GROUP = typer.main.get_command(app)
FRAME = str.maketrans("", "", "│╭╮╰╯─")


def run(*args: str) -> tuple[int, str, str]:
    res = runner.invoke(app, list(args), env={"COLUMNS": "200"})
    return res.exit_code, res.stdout, " ".join(res.stderr.translate(FRAME).split())


def versions(ws: Workspace) -> list[int]:
    with ws.store() as store:
        return [v.n for v in store.versions()]


# -- outputs that cannot be written ----------------------------------------------------------
@pytest.mark.parametrize(
    ("command", "option"),
    [
        (["report"], "--out"),
        (["report"], "--png"),
        (["export"], "--out"),
    ],
)
def test_unwritable_output_exits_2_naming_path_and_reason(
    published: Workspace, command: list[str], option: str
) -> None:
    target = "/proc/talkthemes-out" + ("" if option == "--png" else ".html")
    code, out, err = run(*command, option, target, "-w", str(published.root))
    assert code == 2, err
    assert f"{option} {target}: cannot write there: No such file or directory" in err
    assert "unexpected" not in err and out == ""


def test_output_under_a_file_or_onto_a_folder_is_refused(
    published: Workspace, tmp_path: Path
) -> None:
    a_file = tmp_path / "notes.txt"
    a_file.write_text("x", encoding="utf-8")
    code, _, err = run("export", "--out", str(a_file / "shares.csv"), "-w", str(published.root))
    assert code == 2 and f"{a_file} is not a folder" in err
    code, _, err = run("report", "--out", str(tmp_path), "-w", str(published.root))
    assert code == 2 and f"--out {tmp_path}: is a folder" in err
    code, _, err = run("report", "--out", "x.html", "--png", str(a_file), "-w", str(published.root))
    assert code == 2 and f"--png {a_file}: exists and is not a folder" in err


def test_output_in_a_folder_still_to_be_made_is_written(
    published: Workspace, tmp_path: Path
) -> None:
    target = tmp_path / "new" / "deeper" / "shares.csv"
    code, _, err = run("export", "--out", str(target), "-w", str(published.root))
    assert code == 0, err
    assert target.exists()
    assert not [p for p in target.parent.iterdir() if p.name.startswith(".talkthemes-probe")]


def test_unwritable_rejects_file_refuses_before_ingesting(tmp_path: Path) -> None:
    ws = Workspace(tmp_path / "ws")
    ws.init()
    (tmp_path / "c1.txt").write_text("Agent: Hello.\nCustomer: My bill is wrong.\n", "utf-8")
    code, _, err = run(
        "ingest", str(tmp_path / "c1.txt"), "--rejects", "/proc/rejects.csv", "-w", str(ws.root)
    )
    assert code == 2 and "--rejects /proc/rejects.csv: cannot write there" in err
    with ws.store() as store:
        assert store.count_transcripts() == 0


def test_unwritable_chart_refuses_before_sweeping(published: Workspace) -> None:
    with published.store() as store:
        before = store.sweep_ids()
    code, _, err = run("sweep", "--k", "2,3", "--chart", "/proc/sweep", "-w", str(published.root))
    assert code == 2 and "--chart /proc/sweep: cannot write there" in err
    with published.store() as store:
        assert store.sweep_ids() == before


def test_assign_to_an_unwritable_file_or_from_nowhere(published: Workspace, tmp_path: Path) -> None:
    w = str(published.root)
    code, _, err = run("assign", "/nonexistent", "--out", str(tmp_path / "a.csv"), "-w", w)
    assert code == 2
    assert "no transcripts found in /nonexistent: no such file or folder" in err
    code, _, err = run("assign", "/no/a", "/no/b", "--out", str(tmp_path / "a.csv"), "-w", w)
    assert code == 2 and "none of them exists" in err
    (tmp_path / "calls").mkdir()
    code, _, err = run("assign", str(tmp_path / "calls"), "--out", "/proc/a.csv", "-w", w)
    assert code == 2 and "--out /proc/a.csv: cannot write there" in err
    assert not (tmp_path / "a.csv").exists()


# -- label ----------------------------------------------------------------------------------
def test_label_of_an_unknown_theme_names_the_ids(published: Workspace) -> None:
    code, _, err = run("label", "99999", "x", "-w", str(published.root))
    assert code == 2
    assert "there is no theme 99999 in version 1 (its theme ids: 1–3;" in err
    code, _, err = run("label", "-w", str(published.root), "--", "-5", "x")
    assert code == 2 and "no theme -5" in err


def test_label_before_anything_is_published(tmp_path: Path) -> None:
    ws = Workspace(tmp_path / "ws")
    ws.init()
    code, _, err = run("label", "1", "x", "-w", str(ws.root))
    assert code == 2 and "run 'talkthemes publish' first" in err


# -- publish --------------------------------------------------------------------------------
@pytest.fixture
def swept(published: Workspace) -> Workspace:
    """The published workspace with one recorded sweep of two NMF cells (K = 3 and 4)."""
    with published.store() as store:
        prepared = store.stages().prepared
        assert prepared is not None
        sid = store.start_sweep(prepared.hash, {})
        for k in (3, 4):
            store.add_cell(sid, f"nmf-k{k:03d}-s0", "nmf", k, 0, {"c_npmi": 0.1})
        store.finish_sweep(sid, {})
    return published


@pytest.mark.parametrize(
    ("options", "message"),
    [
        (["--cell", "nmf-k003-s0", "--k", "4"], "--cell nmf-k003-s0 has K=3, not --k 4"),
        (["--cell", "nmf-k003-s0", "--family", "lda"], "--cell nmf-k003-s0 is nmf, not --family"),
        (["--version", "1", "--k", "3"], "--version makes a published version current again"),
        (["--recommended", "--k", "3"], "--recommended chooses K itself"),
    ],
)
def test_publish_refuses_options_that_disagree(
    swept: Workspace, options: list[str], message: str
) -> None:
    code, _, err = run("publish", *options, "-w", str(swept.root))
    assert code == 2
    assert message in err
    assert versions(swept) == [1]


# -- a mistyped workspace is never created --------------------------------------------------
def _args(name: str, tmp_path: Path) -> list[str]:
    """Arguments that get ``name`` past parsing (its required arguments and options)."""
    call = tmp_path / "c1.txt"
    call.write_text("Agent: Hello.\nCustomer: The meter is broken.\n", encoding="utf-8")
    required = {
        "ingest": [str(call)],
        "label": ["1", "x"],
        "export": ["--out", str(tmp_path / "s.csv")],
        "assign": [str(call), "--out", str(tmp_path / "s.csv"), "--store"],
        "token": ["list"],
    }
    return [name, *required.get(name, [])]


@pytest.mark.parametrize("name", sorted(set(GROUP.commands) - {"init", "demo"}))
def test_a_mistyped_workspace_is_not_created(name: str, tmp_path: Path) -> None:
    typo = tmp_path / "wrok"
    code, _, err = run(*_args(name, tmp_path), "-w", str(typo))
    assert code == 2, err
    assert f"no workspace at {typo}: run 'talkthemes init {typo}' first" in err
    assert not typo.exists()


def test_a_folder_that_is_not_a_workspace_is_left_alone(tmp_path: Path) -> None:
    exports = tmp_path / "exports"
    exports.mkdir()
    code, _, err = run(*_args("ingest", tmp_path), "-w", str(exports))
    assert code == 2 and "or give --create" in err
    assert list(exports.iterdir()) == []


def test_ingest_creates_the_workspace_only_when_asked(tmp_path: Path) -> None:
    ws = tmp_path / "new"
    code, out, err = run(*_args("ingest", tmp_path), "-w", str(ws), "--create", "--json")
    assert code == 0, err
    assert json.loads(out)["totals"]["added"] == 1
    assert Workspace(ws).exists()
