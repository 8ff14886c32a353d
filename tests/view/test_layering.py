"""What the presentation packages may import, read from their source (an AST check).

* ``view/`` is the data behind the sections: no Streamlit, no Altair, no charts, no app.
* ``charts/`` draws frames: no Streamlit, no view, no app, nothing that reads a workspace.
* The app and the report reach the prepare step only through
  :func:`talkthemes.view.transcript.lemma_table`: ``view/transcript.py`` is the one
  presentation module that imports ``talkthemes.prepare``.
"""

from __future__ import annotations

import ast
from graphlib import CycleError, TopologicalSorter
from pathlib import Path

import pytest

import talkthemes

PACKAGE = Path(talkthemes.__file__).resolve().parent


def imported_modules(path: Path) -> set[str]:
    """Every module a file imports, at any depth (top level or inside a function)."""
    found: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            found.add(node.module)
            found.update(f"{node.module}.{alias.name}" for alias in node.names)
    return found


def files(*parts: str) -> list[Path]:
    where = PACKAGE.joinpath(*parts)
    return sorted(where.rglob("*.py")) if where.is_dir() else [where]


def offending(
    paths: list[Path], forbidden: tuple[str, ...], root: Path = PACKAGE
) -> dict[str, list[str]]:
    """File (relative to ``root``) → the forbidden modules it imports."""
    out = {}
    for path in paths:
        bad = sorted(
            m
            for m in imported_modules(path)
            if any(m == f or m.startswith(f + ".") for f in forbidden)
        )
        if bad:
            out[path.relative_to(root).as_posix()] = bad
    return out


def test_the_checker_sees_imports_at_any_depth(tmp_path: Path) -> None:
    probe = tmp_path / "probe.py"
    probe.write_text("import altair as alt\ndef f():\n    from streamlit import x\n")
    assert imported_modules(probe) == {"altair", "streamlit", "streamlit.x"}
    assert offending([probe], ("streamlit",), tmp_path) == {
        "probe.py": ["streamlit", "streamlit.x"]
    }
    assert offending([probe], ("alt",), tmp_path) == {}  # a prefix of a name is not that name


@pytest.mark.parametrize(
    ("package", "forbidden"),
    [
        ("view", ("streamlit", "altair", "vl_convert", "talkthemes.charts", "talkthemes.app",
                  "talkthemes.report", "talkthemes.render")),
        ("charts", ("streamlit", "talkthemes.view", "talkthemes.app", "talkthemes.report",
                    "talkthemes.store", "talkthemes.versions", "talkthemes.prepare")),
    ],
)  # fmt: skip
def test_presentation_layers(package: str, forbidden: tuple[str, ...]) -> None:
    assert offending(files(package), forbidden) == {}


def test_only_the_transcript_view_asks_the_prepare_step() -> None:
    presentation = [*files("app"), *files("report"), *files("view"), *files("charts")]
    assert offending(presentation, ("talkthemes.prepare",)) == {
        "view/transcript.py": [
            "talkthemes.prepare.lexicon",
            "talkthemes.prepare.lexicon.load_lemma_table",
        ]
    }


#: The domain: what the three faces (CLI, viewer, service) and the public API stand on.
DOMAIN = ("calls", "store", "ingest", "prepare", "models", "metrics", "sweep", "versions",
          "refresh", "text", "assign.py", "workspace.py", "config", "errors.py", "progress.py",
          "trends.py", "trends_counts.py", "privacy.py", "testhook.py")  # fmt: skip
#: What sits above it: presentation, the faces and the public API over them.
ABOVE_DOMAIN = ("streamlit", "altair", "vl_convert", "talkthemes.charts", "talkthemes.view",
                "talkthemes.app", "talkthemes.report", "talkthemes.cli", "talkthemes.service",
                "talkthemes.serve", "talkthemes.api", "talkthemes.demo")  # fmt: skip


@pytest.mark.parametrize("package", DOMAIN)
def test_the_domain_never_imports_presentation_or_a_face(package: str) -> None:
    assert offending(files(package), ABOVE_DOMAIN) == {}


@pytest.mark.parametrize("package", DOMAIN)
def test_the_domain_never_draws_on_a_terminal(package: str) -> None:
    # Terminal tables and bars belong to the command line (``cli/``, the rich bar adapter in
    # ``api/progress.py``); the domain hands over data: ``prepare --explain`` draws the
    # report the prepare step returns.
    assert offending(files(package), ("rich",)) == {}


def package_graph() -> dict[str, set[str]]:
    """Top-level package (or module) of ``talkthemes`` → the others it imports, at any depth."""
    graph: dict[str, set[str]] = {}
    for path in PACKAGE.rglob("*.py"):
        unit = path.relative_to(PACKAGE).parts[0].removesuffix(".py")
        targets = graph.setdefault(unit, set())
        for module in imported_modules(path):
            parts = module.split(".")
            if parts[0] == "talkthemes" and len(parts) > 1 and parts[1] != unit:
                targets.add(parts[1])
    return graph


def test_the_packages_import_each_other_without_a_cycle() -> None:
    # Files that import each other are one kind of cycle; packages that do (a store that
    # imports the readers while the readers' run imports the store) are the other. The
    # transcript model both need lives below both, in ``calls/``.
    graph = package_graph()
    assert {"calls", "store", "ingest"} <= graph.keys()
    assert "ingest" not in graph["store"] and "store" not in graph["calls"]
    try:
        order = list(TopologicalSorter(graph).static_order())
    except CycleError as exc:  # pragma: no cover - the failure message
        pytest.fail(f"packages import each other in a cycle: {' → '.join(exc.args[1])}")
    assert order.index("calls") < order.index("store") < order.index("ingest")
