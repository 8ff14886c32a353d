"""Room for a new theme (refresh/room.py): when the published K equals the number of call
reasons, a new reason has no theme to spare at K; the refresh tries K + 1 and publishes it
only when a theme there passes every alert check.

A planted history of the invented rail operator's line with six reasons, published at
K = 6 (the truth, as a good recommendation gives), then a month with a new reason, and one
with nothing new. Without the room check the new reason is absorbed by an old theme
(bench/alerts.py --k 6: no new theme alerted in 3/3 runs, two false risers; with it 3/3
alerted, precision 1.00, recall 0.985 — docs/methods_alerts.md, "Room for a new theme").
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from talkthemes.demo.alert_harness import (
    AlertScenario,
    build_history,
    run_case,
    score_run,
    write_batch,
)
from talkthemes.refresh.run import refresh
from talkthemes.versions.load import load_version
from talkthemes.workspace import Workspace

TIGHT = AlertScenario(
    history_calls=1600, batch_calls=600, k=6, settings={"prepare": {"n_process": 1}}
)


@pytest.fixture(scope="module")
def history(tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    ws = build_history(tmp_path_factory.mktemp("room") / "history", TIGHT, seed=0)
    assert load_version(ws).k == TIGHT.reasons == 6
    return ws


@pytest.mark.slow
def test_a_new_reason_gets_a_theme_of_its_own_at_k_plus_one(
    history: Workspace, tmp_path: Path
) -> None:
    doc, ws, truth = run_case(history, tmp_path, TIGHT, "new", seed=0)
    room = doc["room"]
    assert room["raised"] and doc["k"] == room["k"] == 7 and room["published_k"] == 6
    assert [(t["k"], t["alerted"]) for t in room["tried"]] == [(6, 0), (7, 1)]
    score = score_run(doc, ws, truth, TIGHT, "new")
    assert score["precision"] >= 0.85 and score["recall"] >= 0.8, score
    assert not score["false_risers"] and not score["split_as_new"], score
    assert load_version(ws).k == 7
    md = (ws.versions_dir / "2" / "drift.md").read_text(encoding="utf-8")
    assert "- Room for a new theme: K raised from 6 to 7" in md
    assert ws.settings().refresh.new_theme_room == 1  # the default


@pytest.mark.slow
def test_nothing_new_keeps_k(history: Workspace, tmp_path: Path) -> None:
    doc, _, _ = run_case(history, tmp_path, TIGHT, "nothing", seed=0)
    assert doc["k"] == 6 and not doc["room"]["raised"]
    assert [(t["k"], t["alerted"]) for t in doc["room"]["tried"]] == [(6, 0), (7, 0)]
    assert doc["alerts"] == {"new": [], "rise": [], "fall": []}
    assert "K kept at 6: no theme was new at K = 7 either" in doc["room"]["text"]


@pytest.mark.slow
def test_the_room_check_can_be_turned_off(history: Workspace, tmp_path: Path) -> None:
    ws = Workspace(tmp_path / "ws")
    shutil.copytree(history.root, ws.root)
    toml = ws.root / "talkthemes.toml"
    text = toml.read_text(encoding="utf-8")
    assert "[refresh]" not in text  # the harness writes only the settings it changes
    toml.write_text(text + "\n[refresh]\nnew_theme_room = 0\n", encoding="utf-8")
    assert ws.settings().refresh.new_theme_room == 0
    files, _ = write_batch(tmp_path / "batch", TIGHT, "new", seed=0)
    with ws.lock("test"):
        result = refresh(ws, ingest_paths=[files.exports], alert_on_new=True)
    assert result.room is None and result.k == 6 and load_version(ws).k == 6
