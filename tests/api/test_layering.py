"""The command line reaches the work only through the public API (an AST check of every
import in ``cli/``, at any depth): no store, no stage's run function, no version loading.

What the CLI may still import from below the API is listed here with the reason: a helper
that shows a result (the ingest outcomes' column order),
the other faces it starts (report, viewer server, demo corpus writer), charts drawn from a
result's frame, and the shared text, error, progress and path helpers.
"""

from __future__ import annotations

import ast
from pathlib import Path

import talkthemes

CLI = Path(talkthemes.__file__).resolve().parent / "cli"

ALLOWED = {
    "talkthemes": "the public API",
    "talkthemes.api.progress": "the rich bar adapter",
    "talkthemes.cli": "the command line itself",
    "talkthemes.errors": "the exception tree (exit codes)",
    "talkthemes.progress": "the progress protocol",
    "talkthemes.text": "safe terminal text, percentages",
    "talkthemes.workspace.resolve_workspace": "--workspace, $TALKTHEMES_WORKSPACE, default",
    "talkthemes.ingest.run.OUTCOMES": "column order of the ingest table",
    "talkthemes.charts": "the sweep chart, drawn from SweepResult.cells",
    "talkthemes.report": "the report face",
    "talkthemes.serve": "the viewer face",
    "talkthemes.service.run": "the HTTP service face",
    "talkthemes.demo.writer": "the invented demo corpus",
}


def _imports(path: Path) -> set[str]:
    """``module`` or ``module.name`` for every talkthemes import in a file, at any depth."""
    found: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found |= {a.name for a in node.names if a.name.startswith("talkthemes")}
        elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("talkthemes"):
            found |= {f"{node.module}.{a.name}" for a in node.names}
    return found


def _allowed(name: str) -> bool:
    package, _, attr = name.rpartition(".")
    if package == "talkthemes":
        return attr in talkthemes.__all__
    return any(name == a or name.startswith(a + ".") for a in ALLOWED if a != "talkthemes")


def test_the_checker_sees_a_domain_import_inside_a_function(tmp_path: Path) -> None:
    probe = tmp_path / "probe.py"
    probe.write_text(
        "from talkthemes import Workspace, store\n"
        "def f():\n    from talkthemes.sweep.run import run_sweep\n"
    )
    found = _imports(probe)
    assert found == {"talkthemes.Workspace", "talkthemes.store", "talkthemes.sweep.run.run_sweep"}
    assert sorted(n for n in found if not _allowed(n)) == [
        "talkthemes.store",
        "talkthemes.sweep.run.run_sweep",
    ]


def test_the_cli_works_only_through_the_api() -> None:
    offending = {
        path.name: sorted(n for n in _imports(path) if not _allowed(n))
        for path in sorted(CLI.glob("*.py"))
    }
    assert {k: v for k, v in offending.items() if v} == {}
