"""The command line reaches the work only through the public API (an AST check of every
import in ``cli/``, at any depth): no store, no stage's run function, no version loading.
The viewer (``app/``) may read the store, but writes only through the API: no call of a
store method that writes (labels, notes, not-a-theme flags, merges…).

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


# -- the viewer writes through the API too ---------------------------------------------------
PACKAGE = CLI.parent


def store_writers() -> set[str]:
    """The store's methods that write: those that open a transaction, and those that call
    one that does (read from the source of ``store/``, so a new writing method is covered)."""
    called: dict[str, set[str]] = {}
    for path in (PACKAGE / "store").rglob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for cls in (n for n in ast.walk(tree) if isinstance(n, ast.ClassDef)):
            for fn in (f for f in cls.body if isinstance(f, ast.FunctionDef)):
                called.setdefault(fn.name, set()).update(
                    n.attr
                    for n in ast.walk(fn)
                    if isinstance(n, ast.Attribute)
                    and isinstance(n.value, ast.Name)
                    and n.value.id == "self"
                )
    writers = {"transaction"}
    while more := {name for name, uses in called.items() if uses & writers} - writers:
        writers |= more
    return writers


def store_writes(path: Path, writers: set[str]) -> list[str]:
    """``line: name`` of every call of a store-writing method in a file, and every import
    from the store other than its records."""
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute):
            if node.func.attr in writers:
                found.append(f"{node.lineno}: {node.func.attr}")
        elif isinstance(node, ast.ImportFrom):
            module = node.module or ""
            if module.startswith("talkthemes.store") and not module.startswith(
                "talkthemes.store.records"
            ):
                found.append(f"{node.lineno}: from {module} import")
    return found


def test_the_store_writers_are_found() -> None:
    writers = store_writers()
    curation = {"set_label", "merge_theme", "unmerge_theme", "apply_labels"}
    assert curation <= writers
    assert {"add_transcripts", "set_metadata", "publish_version", "add_token"} <= writers
    assert not {"curation_log", "themes", "theme_merges", "labels_for"} & writers


def test_the_checker_sees_a_write_through_the_store(tmp_path: Path) -> None:
    probe = tmp_path / "probe.py"
    probe.write_text(
        "from talkthemes.store.curation import write_label\n"
        "from talkthemes.store.records import ThemeRecord\n"
        "def save(ws):\n"
        "    with ws.store() as store:\n"
        "        store.curation_log(3)\n"
        "        store.set_label(3, label='x')\n"
    )
    assert store_writes(probe, store_writers()) == [
        "1: from talkthemes.store.curation import",
        "6: set_label",
    ]


def test_the_viewer_writes_only_through_the_api() -> None:
    # Labels, notes, not-a-theme flags, merges: talkthemes.Workspace's methods, with the
    # CLI's checks and curation log; the viewer may read the store.
    writers = store_writers()
    offending = {
        path.relative_to(PACKAGE).as_posix(): store_writes(path, writers)
        for path in sorted((PACKAGE / "app").rglob("*.py"))
    }
    assert {k: v for k, v in offending.items() if v} == {}
