"""The command line's package: every command registered once, command groups that import
only the shared preamble, and a start-up that does not load the heavy libraries."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import typer
from typer.testing import CliRunner

import talkthemes.cli
from talkthemes.cli._common import app

CLI = Path(talkthemes.cli.__file__).parent
SHARED = {"talkthemes.cli._common", "talkthemes.cli._shared", "talkthemes.cli._explain"}
COMMANDS = {
    "init", "ingest", "status", "prepare", "sweep", "publish", "themes", "label", "export",
    "view", "report", "demo", "refresh", "assign", "serve", "token",
}  # fmt: skip


def _cli_imports(path: Path) -> set[str]:
    """The ``talkthemes.cli…`` modules a file imports, wherever the import statement is."""
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module:
            if node.module.startswith("talkthemes.cli"):
                found.add(node.module)
            if node.module == "talkthemes":
                found |= {f"talkthemes.{a.name}" for a in node.names if a.name.startswith("cli")}
        elif isinstance(node, ast.Import):
            found |= {a.name for a in node.names if a.name.startswith("talkthemes.cli")}
    return found


def test_every_command_is_registered_once() -> None:
    group = typer.main.get_command(app)
    assert set(group.commands) == COMMANDS
    assert len(app.registered_commands) + len(app.registered_groups) == len(COMMANDS)


def test_command_groups_import_only_the_shared_modules() -> None:
    groups = [p for p in CLI.glob("*.py") if not p.name.startswith("_")]
    stems = {"data", "faces", "model", "refresh", "serve", "themes", "workspace"}
    assert {p.stem for p in groups} == stems
    for path in groups:
        assert _cli_imports(path) <= SHARED, path.name
    assert _cli_imports(CLI / "_common.py") == set()
    assert _cli_imports(CLI / "_shared.py") == {"talkthemes.cli._common"}
    assert _cli_imports(CLI / "_explain.py") == set()


def test_start_up_does_not_load_the_heavy_libraries() -> None:
    """``talkthemes --help`` imports every command module; none may pull in these."""
    heavy = ["pandas", "numpy", "scipy", "sklearn", "gensim", "dask", "altair", "streamlit"]
    code = f"import sys, talkthemes.cli; print([m for m in {heavy!r} if m in sys.modules])"
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert res.stdout.strip() == "[]"


def test_module_entry_point_runs() -> None:
    res = subprocess.run(
        [sys.executable, "-m", "talkthemes.cli", "--help"], capture_output=True, text=True
    )
    assert res.returncode == 0
    assert all(name in res.stdout for name in COMMANDS)


def test_help_lists_commands_in_workflow_order() -> None:
    res = CliRunner().invoke(app, ["--help"])
    positions = [res.stdout.index(f" {name} ") for name in ("init", "ingest", "sweep", "assign")]
    assert positions == sorted(positions)
