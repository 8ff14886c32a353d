"""Refresh end to end on the invented demo: October arrives, the price-change reason
becomes a new theme, the other themes keep their ids and labels, drift is reported, a
second run does nothing."""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest
from tests.refresh.conftest import FAMILY, PRICE_WORDS, K
from typer.testing import CliRunner

from talkthemes import cli
from talkthemes.config import render_settings, settings_from_dict
from talkthemes.demo.records import DemoFiles
from talkthemes.errors import NotReadyError
from talkthemes.refresh.coherence import coherence_check
from talkthemes.refresh.run import refresh
from talkthemes.versions.load import load_version
from talkthemes.workspace import Workspace, atomic_write_text

runner = CliRunner()


def _snapshot(ws: Workspace) -> dict:
    """Everything a refresh could change, except the logs of runs."""
    with ws.store() as store:
        versions = store.versions()
        themes = {v.n: store.themes(v.n) for v in versions}
        prep = store.current_prep()
        count = store.count_transcripts()
    files = sorted(
        (str(p.relative_to(ws.root)), p.stat().st_size)
        for p in (ws.root / "versions").rglob("*")
        if p.is_file()
    )
    return {"versions": versions, "themes": themes, "prep": prep, "n": count, "files": files}


def _set(ws: Workspace, section: str, **values: object) -> None:
    data = ws.settings().model_dump()
    data[section].update(values)
    atomic_write_text(ws.settings_path, render_settings(settings_from_dict(data)))


def test_refresh_finds_the_new_theme_keeps_labels_and_reports_drift(
    published: Workspace, demo_files: DemoFiles
) -> None:
    ws = published
    before = load_version(ws)
    assert (before.info["family"], before.k) == (FAMILY, K)
    with ws.store() as store:
        for tid in before.theme_ids:
            store.set_label(tid, label=f"label {tid}", note=f"note {tid}")

    res = runner.invoke(
        cli.app,
        ["refresh", "--workspace", str(ws.root), "--ingest", str(demo_files.inbox),
         "--alert-on-new", "--json"],
    )  # fmt: skip
    assert res.exit_code == 4, res.stderr  # a new theme appeared and the alert was asked for
    doc = json.loads(res.stdout)
    assert doc["status"] == "published" and doc["exit_code"] == 4
    assert doc["previous_version"] == 1 and doc["version"] == 2
    assert doc["ingest"]["totals"]["added"] == sum(demo_files.inbox_counts.values())
    assert doc["ingest"]["rejects"] == []  # the inbox manifest was read as a manifest
    assert doc["new_transcripts"] == sum(demo_files.inbox_counts.values())
    assert doc["resweep"] is False and doc["coherence_check"]["checked"] is True
    assert doc["counts"]["new"] >= 1
    assert any(PRICE_WORDS & set(t["top_terms"][:5]) for t in doc["new_themes"])
    assert doc["counts"]["carried"] + doc["counts"]["new"] == K
    cut = doc["threshold"]
    assert cut["same_theme_upper"] < cut["threshold"] < cut["different_theme_lower"]

    after = load_version(ws)
    assert after.n == 2
    with ws.store() as store:
        themes = store.themes(2)
        retired = store.retired_themes(2)
        log = store.refreshes()
        october = [t for t in after.doc_ids if t.startswith("C2026-10")]
        meta = store.metadata_for(october[:3])
    assert october and all(m["date"].startswith("2026-10") for m in meta.values())
    assert len(meta) == 3  # the inbox's manifest was applied
    old_ids = set(before.theme_ids)
    for t in themes:
        if t.status == "carried":
            assert t.theme_id in old_ids
            assert (t.label, t.note) == (f"label {t.theme_id}", f"note {t.theme_id}")
            assert t.distance is not None and 0 <= t.distance <= cut["threshold"]
        else:
            assert t.status == "new" and t.theme_id > max(old_ids) and t.label == ""
    carried = {t.theme_id for t in themes if t.status == "carried"}
    assert {r.theme_id for r in retired} == old_ids - carried
    assert all(r.label == f"label {r.theme_id}" for r in retired)  # kept with the id
    assert log[0].status == "published" and log[0].version == 2
    assert log[0].counts == doc["counts"]

    folder = ws.versions_dir / "2"
    drift = json.loads((folder / "drift.json").read_text())
    assert drift["counts"] == doc["counts"]
    assert drift["transcripts"]["new"] > 0
    new_entry = next(t for t in drift["themes"] if t["status"] == "new")
    assert (
        new_entry["coverage_new_transcripts"]["share"]
        > new_entry["coverage_earlier_transcripts"]["share"]
    )
    lo, hi = (new_entry["coverage_new_transcripts"][k] for k in ("lo", "hi"))
    assert lo <= new_entry["coverage_new_transcripts"]["share"] <= hi
    examples = new_entry["examples"]
    assert examples and all(e["transcript_id"].startswith("C2026-10") for e in examples)
    assert [e["share"] for e in examples] == sorted((e["share"] for e in examples), reverse=True)
    assert all("excerpt" in e for e in examples)
    md = (folder / "drift.md").read_text()
    assert "## New themes" in md and f"Theme {new_entry['theme_id']}" in md
    assert (folder / "drift.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert json.loads((folder / "version.json").read_text())["refresh"]["previous_version"] == 1

    # a second run finds nothing new and changes nothing
    snap = _snapshot(ws)
    res = runner.invoke(
        cli.app,
        ["refresh", "-w", str(ws.root), "-i", str(demo_files.inbox), "--alert-on-new", "--json"],
    )
    assert res.exit_code == 0, res.stderr
    doc = json.loads(res.stdout)
    assert doc["status"] == "nothing_new" and doc["version"] is None
    assert doc["ingest"]["totals"]["unchanged"] == sum(demo_files.inbox_counts.values())
    assert _snapshot(ws) == snap
    res = runner.invoke(cli.app, ["refresh", "-w", str(ws.root)])  # no inbox set, no paths
    assert res.exit_code == 0 and "Nothing new to do" in res.stdout


def test_frozen_vocabulary_keeps_the_versions_terms_and_rejects_give_exit_3(
    published: Workspace, demo_files: DemoFiles, tmp_path: Path
) -> None:
    ws = published
    _set(ws, "refresh", vocabulary="frozen")
    before = load_version(ws)
    broken = tmp_path / "broken.vtt"
    broken.write_text("not a webvtt file\n", encoding="utf-8")
    with ws.lock("refresh"):
        result = refresh(ws, ingest_paths=[demo_files.inbox, broken])
    # the bad file is rejected, the rest is processed and published
    assert result.status == "published" and result.exit_code == 3
    assert [r["source"] for r in result.ingest["rejects"]] == [str(broken)]
    after = load_version(ws)
    assert after.vocabulary == before.vocabulary
    with ws.store() as store:
        prep = store.current_prep()
    assert prep is not None
    assert prep.frozen_from == {"version": 1, "prep_hash": before.info["prep_hash"]}
    assert after.info["prep_hash"] == prep.hash != before.info["prep_hash"]
    # every earlier training transcript is still there, with the same counts as before
    n_old = len(before.doc_ids)
    assert after.doc_ids[:n_old] == before.doc_ids
    assert result.new_transcripts == sum(demo_files.inbox_counts.values())


def test_resweep_runs_the_grid_and_publishes_its_recommendation(
    published: Workspace, demo_files: DemoFiles
) -> None:
    ws = published
    _set(ws, "sweep", k="8,12", families=["nmf"], seeds=2, workers=1)
    res = runner.invoke(
        cli.app,
        ["refresh", "-w", str(ws.root), "-i", str(demo_files.inbox), "--resweep", "--json"],
    )
    assert res.exit_code == 0, res.stderr
    doc = json.loads(res.stdout)
    assert doc["resweep"] is True and doc["resweep_reason"] == "asked for (--resweep)"
    with ws.store() as store:
        sweep = store.get_sweep()
    assert sweep is not None and sweep.recommendations is not None
    recommended = sweep.recommendations["nmf"]["k"]
    assert sweep.status == "done" and doc["k"] == recommended
    v = load_version(ws)
    assert v.k == recommended and v.info["cell"].startswith(f"nmf-k{recommended:03d}-")
    assert doc["coherence_check"] is None  # not needed: K was re-chosen anyway


def test_coherence_drop_triggers_a_resweep(
    published: Workspace, demo_files: DemoFiles, monkeypatch: pytest.MonkeyPatch
) -> None:
    import talkthemes.refresh.run as refresh_mod

    calls: list[tuple[str, str]] = []

    def fake_check(ws, version, spec, new_ids, *, drop, seed=0):
        return {"checked": True, "new": 0.01, "earlier": 0.3, "difference": 0.29,
                "n": len(new_ids), "drop": drop, "triggered": True}  # fmt: skip

    def fake_resweep(ws, family, prep_hash):
        calls.append((family, prep_hash))
        return 10, 3, "nmf-k010-s3"

    monkeypatch.setattr(refresh_mod, "coherence_check", fake_check)
    monkeypatch.setattr(refresh_mod, "_resweep_fit", fake_resweep)
    with published.lock("refresh"):
        result = refresh(published, ingest_paths=[demo_files.inbox])
    assert calls and calls[0][0] == "nmf"
    assert result.resweep and "0.290 below" in result.resweep_reason
    v = load_version(published)
    assert (v.k, v.info["seed"], v.info["cell"]) == (10, 3, "nmf-k010-s3")
    assert result.counts["carried"] + result.counts["new"] == 10


def test_coherence_check_compares_like_with_like(
    published: Workspace, demo_files: DemoFiles
) -> None:
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.frozen import load_prep_spec

    ws = published
    v = load_version(ws)
    spec = load_prep_spec(ws, v)
    # the version's own transcripts as "new": the same text, so no drop
    same = coherence_check(ws, v, spec, v.doc_ids[:200], drop=0.1)
    assert same["checked"] and same["n"] == 200
    assert abs(same["difference"]) < 0.1 and not same["triggered"]
    too_few = coherence_check(ws, v, spec, v.doc_ids[:5], drop=0.1)
    assert too_few == {"checked": False, "n": 5, "drop": 0.1, "triggered": False}
    with ws.lock("ingest"):
        ingest(ws, [demo_files.inbox])
    with ws.store() as store:
        new_ids = [t for t in store.transcript_ids() if t.startswith("C2026-10")]
    october = coherence_check(ws, v, spec, new_ids, drop=0.1)
    assert october["checked"] and october["themes_compared"] >= K - 2
    assert october["triggered"] == (october["difference"] > 0.1)


def test_refresh_needs_a_published_version(ws: Workspace) -> None:
    with pytest.raises(NotReadyError, match="talkthemes publish"):
        refresh(ws)
    res = runner.invoke(cli.app, ["refresh", "-w", str(ws.root)])
    assert res.exit_code == 2 and "talkthemes publish" in res.stderr


def test_inbox_setting_is_read_and_a_missing_one_is_a_settings_error(
    published: Workspace, demo_files: DemoFiles
) -> None:
    from talkthemes.refresh.run import _ingest_paths

    (published.root / "inbox").mkdir()
    _set(published, "refresh", inbox="inbox")  # relative to the workspace folder
    assert _ingest_paths(published, None) == [published.root / "inbox"]
    assert _ingest_paths(published, [demo_files.inbox]) == [demo_files.inbox]
    _set(published, "refresh", inbox="no-such-folder")
    res = runner.invoke(cli.app, ["refresh", "-w", str(published.root)])
    assert res.exit_code == 2
    assert "[refresh] inbox = 'no-such-folder'" in res.stderr
    with published.store() as store:
        assert store.refreshes() == []  # refused before anything was logged
    assert not os.path.exists(published.versions_dir / "2")


def test_labels_survive_two_refreshes_and_rollback(
    published: Workspace, demo_files: DemoFiles, tmp_path: Path
) -> None:
    """Refresh twice (October, then a second batch), then roll back with publish --version."""
    from talkthemes.demo.calls import iter_demo_calls
    from talkthemes.demo.render import render_txt

    ws = published
    with ws.lock("refresh"):
        first = refresh(ws, ingest_paths=[demo_files.inbox])
    v2 = load_version(ws)
    price = next(t["theme_id"] for t in first.new_themes if PRICE_WORDS & set(t["top_terms"][:5]))
    with ws.store() as store:
        store.set_label(price, label="Price change")
    more = tmp_path / "more"  # another batch of calls, under ids of its own
    more.mkdir()
    for call in iter_demo_calls(300, seed=21):
        (more / f"B{call.call_id}.txt").write_text(render_txt(call), encoding="utf-8")
    with ws.lock("refresh"):
        second = refresh(ws, ingest_paths=[more])
    assert second.status == "published" and second.version == 3
    v3 = load_version(ws)
    with ws.store() as store:
        v3_themes = {t.theme_id: t for t in store.themes(3)}
    assert price in v3_themes and v3_themes[price].label == "Price change"
    assert v3_themes[price].status == "carried"
    res = runner.invoke(cli.app, ["publish", "--version", "2", "-w", str(ws.root)])
    assert res.exit_code == 0, res.stderr
    assert load_version(ws).n == 2 and load_version(ws).theme_ids == v2.theme_ids
    assert np.array_equal(load_version(ws, 3).topic_terms, v3.topic_terms)
