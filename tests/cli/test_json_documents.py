"""The ``--json`` documents stay exactly as they were recorded.

``tests/cli/golden/json_documents.json`` holds the documents printed by ``status``,
``sweep``, ``label``, ``themes``, ``refresh`` and ``publish --version`` on the fixed
workspace of :mod:`tests.support.fixed_workspace`, recorded before the store's rows became
typed records (while they were still dicts). Scripts read these documents, so a change in
a key, its order, a value or its JSON type shows here.

When a document changes on purpose, record it again with
``TALKTHEMES_RECORD_GOLDEN=1 .venv/bin/python -m pytest tests/cli/test_json_documents.py``
and say why in the commit.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest
from tests.support.fixed_workspace import build_documents

GOLDEN = Path(__file__).parent / "golden" / "json_documents.json"


@pytest.fixture(scope="module")
def documents(tmp_path_factory: pytest.TempPathFactory) -> dict[str, object]:
    return build_documents(tmp_path_factory.mktemp("json-documents"))


def test_every_recorded_document_is_built(documents: dict[str, object]) -> None:
    if os.environ.get("TALKTHEMES_RECORD_GOLDEN") == "1":
        GOLDEN.write_text(json.dumps(documents, indent=1, ensure_ascii=False) + "\n", "utf-8")
    recorded = json.loads(GOLDEN.read_text(encoding="utf-8"))
    assert list(documents) == list(recorded)


@pytest.mark.parametrize(
    "name",
    ["status_ingested", "sweep", "label", "label_hidden", "themes", "refresh", "status",
     "publish_version"],
)  # fmt: skip
def test_document_is_unchanged(documents: dict[str, object], name: str) -> None:
    recorded = json.loads(GOLDEN.read_text(encoding="utf-8"))[name]
    got = documents[name]
    assert got == recorded
    # the same keys in the same order, all the way down (scripts may print them in order)
    assert json.dumps(got) == json.dumps(recorded)


def test_the_documents_show_what_the_store_holds(documents: dict[str, object]) -> None:
    """The recorded documents themselves say what the fixed workspace holds (so a recording
    of a broken build would not pass)."""
    status = documents["status"]
    assert isinstance(status, dict)
    assert status["transcripts"] == 24 and status["rejected_inputs"] == 1
    assert status["likely_reexports"]["first"] == [
        {"id": "c900", "same_text_as": "c000", "kept": False}
    ]
    assert status["metadata_fields"]["queue"]["top"] == {"billing": 12, "faults": 12}
    # the killed sweep's record says running; its process is gone, so status says interrupted
    assert status["stages"]["swept"] == {"id": 2, "at": "<time>", "status": "interrupted"}
    assert [u["cells_done"] for u in status["unfinished_sweeps"]] == [1]
    # every stored transcript of the fixed workspace is in the version: none unthemed
    assert status["stages"]["published"] == {
        "version": 1,
        "at": "<time>",
        "unthemed": {"count": 0, "share": 0.0, "by_reason": {}},
    }
    sweep = documents["sweep"]
    assert isinstance(sweep, dict)
    assert sweep["cached"] is True and sweep["recommendations"]["nmf"]["k"] == 3
    themes = documents["themes"]
    assert isinstance(themes, dict)
    by_id = {t["theme_id"]: t for t in themes["themes"]}
    assert by_id[2]["label"] == "Refunds & credit" and by_id[2]["note"] == "=SUM(A1)"
    assert by_id[3]["hidden"] is True and by_id[1]["label"] == ""
    assert documents["refresh"]["status"] == "nothing_new"  # type: ignore[index]
