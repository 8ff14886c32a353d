"""Docstrings cite documents inside the repository, and the sections they name exist.

Every ``docs/NAME.md`` a source file mentions must be a file of ``docs/``, and when the
mention names a section (``docs/methods.md, "Suggested names"``) that section must be a
heading of that file (or a paragraph's bold run-in head), so a renamed heading cannot leave
a dangling citation. No source file cites a design note kept outside the repository.
"""

from __future__ import annotations

import re
from pathlib import Path

import talkthemes

SRC = Path(talkthemes.__file__).resolve().parent
ROOT = SRC.parent.parent
DOCS = ROOT / "docs"
CITATION = re.compile(r"docs/([a-z_]+\.md)`*\)?,?\s*(?:\"([^\"]+)\")?")


def _sources() -> dict[Path, str]:
    """Each source file's text with line breaks and comment/docstring indents folded."""
    out = {}
    for path in sorted(SRC.rglob("*.py")):
        text = path.read_text(encoding="utf-8")
        out[path] = re.sub(r"\s*\n\s*(?:#\s*)?", " ", text)
    return out


def _headings(doc: Path) -> list[str]:
    """Markdown headings and bold run-in paragraph heads (``**State.** ...``)."""
    lines = doc.read_text(encoding="utf-8").splitlines()
    heads = [line.lstrip("#").strip() for line in lines if line.startswith("#")]
    heads += [m.group(1).rstrip(".") for line in lines if (m := re.match(r"\*\*([^*]+)\*\*", line))]
    return heads


def _citations() -> list[tuple[str, str, str]]:
    found = []
    for path, text in _sources().items():
        for match in CITATION.finditer(text):
            found.append((path.relative_to(SRC).as_posix(), match.group(1), match.group(2) or ""))
    return found


def test_the_sources_cite_documents_at_all() -> None:
    cited = {doc for _, doc, _ in _citations()}
    assert {"methods.md", "methods_models.md", "methods_alerts.md"} <= cited


def test_every_cited_document_is_in_the_repository() -> None:
    missing = [(src, doc) for src, doc, _ in _citations() if not (DOCS / doc).is_file()]
    assert not missing


def test_every_cited_section_is_a_heading_of_its_document() -> None:
    dangling = []
    for src, doc, section in _citations():
        if not section or not (DOCS / doc).is_file():
            continue
        wanted = section.strip().rstrip(".,;:")
        if not any(h == wanted or h.startswith(wanted) for h in _headings(DOCS / doc)):
            dangling.append((src, doc, wanted))
    assert not dangling


def test_no_source_cites_a_note_outside_the_repository() -> None:
    outside = re.compile(r"\b(DESIGN|METHODS|STYLE)\.md\b|\.\./shared/")
    hits = [p.relative_to(SRC).as_posix() for p, t in _sources().items() if outside.search(t)]
    assert not hits
