"""The refresh's alert choices reach the work through :meth:`talkthemes.Workspace.refresh`:
``alert_on_rise`` and the per-run ``alerts`` overrides of the ``[refresh] alert_*`` settings,
checked before anything is done; the command passes ``--alert-on-rise`` the same way."""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

import talkthemes as tt
from talkthemes.cli._common import app
from talkthemes.demo.records import DemoFiles
from talkthemes.refresh.alert_step import ALERT_SETTINGS

runner = CliRunner()


def test_the_overridable_names_are_every_alert_setting() -> None:
    fields = {n for n in tt.Settings().refresh.model_dump() if n.startswith("alert_")}
    assert {f"alert_{n}" for n in ALERT_SETTINGS} == fields
    assert "new_min_calls" in ALERT_SETTINGS and "change_fdr" in ALERT_SETTINGS


@pytest.mark.parametrize(
    ("alerts", "message"),
    [
        ({"new_min_call": 5}, "alert settings: unknown new_min_call (known: new_min_calls,"),
        ({"change_fdr": 2}, "alert settings: [refresh] alert_change_fdr = 2: "),
        ({"new_min_calls": 0}, "alert settings: [refresh] alert_new_min_calls = 0: "),
    ],
)
def test_a_bad_alert_override_is_refused_before_anything_is_done(
    published: tt.Workspace, demo: DemoFiles, alerts: dict[str, float], message: str
) -> None:
    before = published.status().transcripts
    with pytest.raises(tt.ConfigError) as info:
        published.refresh(ingest=demo.inbox, alerts=alerts)
    assert str(info.value).startswith(message)
    assert published.status().transcripts == before  # the inbox was not ingested
    with published.folder.store() as store:
        assert store.refreshes() == []  # no refresh was started


def test_alert_choices_reach_the_refresh_and_its_report(
    published: tt.Workspace, demo: DemoFiles
) -> None:
    """A false discovery rate near 1 and no minimum ratio make every carried theme whose
    share moved at all a riser or a faller: so the overrides, not the settings (0.01 and
    ×1.25), judged this run, and alert_on_rise made the exit code 4."""
    result = published.refresh(
        ingest=demo.inbox,
        alert_on_rise=True,
        alerts={"new_min_calls": 100_000, "change_fdr": 0.999999, "change_min_ratio": 1.0},
    )
    assert result.status == "published" and result.alert_on_rise and not result.alert_on_new
    drift = json.loads((published.root / "versions" / "2" / "drift.json").read_text("utf-8"))
    rules = drift["alerts"]["rules"]
    chosen = (rules["new_min_calls"], rules["change_fdr"], rules["change_min_ratio"])
    assert chosen == (100_000, 0.999999, 1.0)
    # the settings file's values for the rest
    assert rules["novel_min_score"] == published.settings().refresh.alert_novel_min_score
    changes = [c for c in drift["alerts"]["changes"] if c["tested"]]
    assert changes
    for c in changes:
        ratio = c["growth"]["ratio"]
        if c["q_value"] <= 0.999999 and ratio != 1:
            assert c["direction"] == ("rise" if ratio > 1 else "fall"), c
    assert result.risers and result.exit_code == 4
    assert [t["theme_id"] for t in result.risers] == drift["alerts"]["rise"]
    assert all(t["alert"] is False for t in result.new_themes)  # none leads 100,000 calls
    doc = result.to_json()
    assert doc["alerts"]["rise"] == drift["alerts"]["rise"] and doc["exit_code"] == 4
    assert doc["risers"] == result.risers and doc["fallers"] == result.fallers


def test_the_command_passes_alert_on_rise_through_the_api(
    published: tt.Workspace, demo: DemoFiles, monkeypatch: pytest.MonkeyPatch
) -> None:
    seen: dict[str, object] = {}

    def refresh(self: tt.Workspace, **kwargs: object) -> object:
        seen.update(kwargs)
        raise tt.NotReadyError("stopped by the test")

    monkeypatch.setattr(tt.Workspace, "refresh", refresh)
    res = runner.invoke(
        app, ["refresh", "-w", str(published.root), "-i", str(demo.inbox), "--alert-on-rise"]
    )
    assert res.exit_code == 2 and "stopped by the test" in res.stderr
    assert seen["alert_on_rise"] is True and seen["alert_on_new"] is False
