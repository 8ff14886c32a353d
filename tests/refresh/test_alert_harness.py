"""Fast subset of the alert harness (bench/alerts.py): a planted history of the invented rail
operator's line, then a next month with nothing new, and one with a new call reason and a
rise of an old one, refreshed by the product (the second through the CLI).

Smaller than the bench (1,600 + 600 calls instead of 2,400 + 900, one seed), so the floors
here are the bench's targets where the small batch still meets them with room: no alert on
nothing new; the new reason alerted with precision ≥ 0.85 and recall ≥ 0.8 over its calls;
the rise (×1.5, about 140 calls) caught; no split reported as new; and a theme marked not a
theme never alerts, however much it rose.
"""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from talkthemes import cli
from talkthemes.cli.refresh import print_refresh
from talkthemes.demo.alert_harness import (
    AlertScenario,
    build_history,
    run_case,
    score_run,
    write_batch,
)
from talkthemes.refresh.run import RefreshResult, refresh
from talkthemes.versions.load import load_version
from talkthemes.workspace import Workspace

SCENARIO = AlertScenario(
    history_calls=1600, batch_calls=600, settings={"prepare": {"n_process": 1}}
)
runner = CliRunner()


def _no_nan(name: str) -> None:
    raise AssertionError(f"drift.json holds {name}")


@pytest.fixture(scope="module")
def history(tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    return build_history(tmp_path_factory.mktemp("alerts") / "history", SCENARIO, seed=0)


def test_planted_batches_hold_the_shares_asked_for() -> None:
    shares = SCENARIO.history_shares()
    both = SCENARIO.batch_shares("both")
    assert both.sum() == pytest.approx(1.0) and both[-1] == pytest.approx(0.13)
    assert both[SCENARIO.rise_reason] == pytest.approx(1.5 * shares[SCENARIO.rise_reason])
    others = [i for i in range(SCENARIO.reasons) if i != SCENARIO.rise_reason]
    ratio = both[others] / shares[others]
    assert ratio.max() == pytest.approx(ratio.min())  # the rest keep their proportions
    assert SCENARIO.batch_shares("nothing") == pytest.approx(shares)
    spec = SCENARIO.batch_spec("both", 3)
    assert spec.exact and spec.prefix == "B3" and spec.reasons == SCENARIO.new_reason + 1


@pytest.mark.slow
def test_nothing_new_raises_no_alert(history: Workspace, tmp_path: Path) -> None:
    doc, ws, truth = run_case(history, tmp_path, SCENARIO, "nothing", seed=0)
    score = score_run(doc, ws, truth, SCENARIO, "nothing")
    assert not score["alert"], score
    assert doc["exit_code"] == 0 and doc["alerts"] == {"new": [], "rise": [], "fall": []}
    assert all(not t["alert"] for t in doc["new_themes"])  # new themes, if any, explained
    for t in doc["new_themes"]:
        assert t["verdict"] in {"split", "small", "familiar"}
        assert any(not e["held"] for e in t["evidence"])


@pytest.mark.slow
def test_new_reason_and_rise_alert_and_explain_themselves(
    history: Workspace, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    ws = Workspace(tmp_path / "ws")
    shutil.copytree(history.root, ws.root)
    files, truth = write_batch(tmp_path / "batch", SCENARIO, "both", seed=0)
    res = runner.invoke(
        cli.app,
        ["refresh", "-w", str(ws.root), "-i", str(files.exports), "--alert-on-rise", "--json"],
    )
    assert res.exit_code == 4, res.stderr  # a riser, and --alert-on-rise
    doc = json.loads(res.stdout)
    json.dumps(doc, allow_nan=False)  # strict JSON for schedulers' parsers
    json.loads((ws.versions_dir / "2" / "drift.json").read_text(), parse_constant=_no_nan)
    score = score_run(doc, ws, truth, SCENARIO, "both")
    assert score["precision"] >= 0.85 and score["recall"] >= 0.8, score
    assert score["rise_caught"] and not score["split_as_new"] and not score["false_risers"]
    # refresh --json: the alerted new theme and the riser, each explained
    (new_id,) = doc["alerts"]["new"]
    new = next(t for t in doc["new_themes"] if t["theme_id"] == new_id)
    assert new["verdict"] == "new" and all(e["held"] for e in new["evidence"])
    assert {"cancel", "replacement_bus"} & set(new["top_terms"])
    assert new["growth"]["calls_new"] >= 60 and new["growth"]["share_earlier"] < 0.02
    assert len(new["examples"]) == 3
    assert len({e["transcript_id"] for e in new["examples"]}) == 3
    assert all(e["transcript_id"].startswith("B0-") for e in new["examples"])
    riser = doc["risers"][0]
    assert riser["direction"] == "rise" and riser["q_value"] <= 0.01
    assert riser["growth"]["ratio_lo"] > 1 and "season_ticket" in riser["top_terms"]
    assert len(riser["examples"]) == 3
    assert doc["alerts"]["rise"] == [riser["theme_id"]]
    assert [t["theme_id"] for t in doc["fallers"]] == doc["alerts"]["fall"]
    # drift.md explains the same alerts
    md = (ws.versions_dir / "2" / "drift.md").read_text(encoding="utf-8")
    alerts = md[md.index("## Alerts") : md.index("## New themes")]
    assert f"### New theme {new_id}:" in alerts and f"### Riser {riser['theme_id']}:" in alerts
    assert alerts.count("  - held: ") >= 4
    for e in new["examples"]:
        assert f"({e['transcript_id']})" in alerts  # searchable as it is
    assert not re.search(r"(?<!\\)[<>]", md)
    # the store keeps each theme's verdict for the Refresh history
    with ws.store() as store:
        info = {t.theme_id: t.info for t in store.themes(2)}
        log = store.refreshes()[0]
    assert info[new_id]["verdict"] == "new" and info[riser["theme_id"]]["change"] == "rise"
    assert log.info["alerts"]["new"] == [new_id]
    assert log.info["alerts"]["rise"] == [riser["theme_id"]]
    # the same run read by a person: each alert explained on the terminal
    keys = ("status", "previous_version", "version", "new_transcripts", "family", "k",
            "counts", "new_themes", "risers", "fallers")  # fmt: skip
    print_refresh(RefreshResult(**{k: doc[k] for k in keys}))
    shown = " ".join(capsys.readouterr().out.split())
    assert (
        f"ALERT new theme {new_id}:" in shown and f"ALERT riser theme {riser['theme_id']}:" in shown
    )
    assert shown.count("✓ ") >= 4 and "q = " in shown
    assert all(e["transcript_id"] in shown for e in [*new["examples"], *riser["examples"]])


@pytest.mark.slow
def test_a_theme_marked_not_a_theme_never_alerts(history: Workspace, tmp_path: Path) -> None:
    ws = Workspace(tmp_path / "ws")
    shutil.copytree(history.root, ws.root)
    version = load_version(ws)
    season = next(
        tid for i, tid in enumerate(version.theme_ids) if "season_ticket" in version.top_terms(i, 3)
    )
    with ws.store() as store:
        store.set_label(season, hidden=True)  # marked: not a theme
    files, _ = write_batch(tmp_path / "batch", SCENARIO, "rise", seed=0)
    with ws.lock("test"):
        result = refresh(ws, ingest_paths=[files.exports], alert_on_rise=True)
    assert result.exit_code == 0 and result.risers == []  # the rise is there, not alerted
    drift = json.loads((ws.versions_dir / "2" / "drift.json").read_text())
    change = next(c for c in drift["alerts"]["changes"] if c["theme_id"] == season)
    assert not change["tested"] and change["text"] == "marked not a theme: not tested"
    assert change["growth"]["share_new"] > 1.3 * change["growth"]["share_earlier"]
    assert drift["alerts"]["not_a_theme"] == [season]
