"""What the API reads back: status, versions, themes, shares, export, labels — the numbers
a notebook user sees, checked against the version's own arrays and the command line."""

from __future__ import annotations

import json
import threading
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from tests.api.conftest import FAMILY, K
from typer.testing import CliRunner

import talkthemes as tt
from talkthemes.cli._common import app

runner = CliRunner()


def test_status_is_what_the_command_prints(published: tt.Workspace) -> None:
    status = published.status()
    assert isinstance(status, tt.Status)
    assert status.stages["published"]["version"] == 1
    assert status.transcripts == sum(status.by_format.values()) > 0
    res = runner.invoke(app, ["status", "--json", "-w", str(published.root)])
    assert res.exit_code == 0, res.stderr
    assert json.loads(res.stdout) == json.loads(json.dumps(status.to_json()))
    assert list(status.to_json())[:2] == ["workspace", "transcripts"]


def test_themes_frame_holds_the_versions_numbers(published: tt.Workspace) -> None:
    themes = published.themes()
    v = published.version()
    assert published.current_version() == v.n == 1
    assert len(themes) == K == v.k
    assert list(themes.columns[:9]) == [
        "theme_id", "name", "label", "note", "hidden", "status", "coverage", "mean_share",
        "top_terms",
    ]  # fmt: skip
    assert {"c_npmi", "c_v"} <= set(themes.columns)
    assert themes["theme_id"].tolist() == v.theme_ids
    lead = np.argmax(v.doc_topics, axis=1)
    coverage = np.bincount(lead, minlength=v.k) / len(lead)
    assert np.allclose(themes["coverage"], coverage) and np.isclose(themes["coverage"].sum(), 1)
    assert np.allclose(themes["mean_share"], np.asarray(v.doc_topics).mean(axis=0))
    assert all(len(terms) == 10 for terms in themes["top_terms"])
    five = published.themes(n_terms=5, lam=1.0)
    by_probability = [v.vocabulary[i] for i in np.argsort(-v.topic_terms[0], kind="stable")[:5]]
    assert five["top_terms"][0] == by_probability  # λ = 1 ranks by probability in the theme


def test_shares_give_every_transcript_its_lead_theme(published: tt.Workspace) -> None:
    shares = published.shares()
    v = published.version()
    share_cols = [f"share_{t}" for t in v.theme_ids]
    assert list(shares.columns) == [
        "transcript_id",
        "lead_theme_id",
        "lead_theme_label",
        "lead_share",
        "lead_theme_suggested_name",
        *share_cols,
        "reason",
    ]
    themed = shares.iloc[: len(v.doc_ids)]
    assert themed["transcript_id"].tolist() == v.doc_ids
    assert (themed["reason"] == "").all()
    names = dict(zip(v.theme_ids, v.suggested_names(), strict=True))
    assert (themed["lead_theme_suggested_name"] == themed["lead_theme_id"].map(names)).all()
    values = themed[share_cols].to_numpy()
    assert np.allclose(values.sum(axis=1), 1, atol=1e-5)
    picked = np.asarray(v.theme_ids)[values.argmax(axis=1)]
    assert (themed["lead_theme_id"].to_numpy() == picked).all()


def test_the_unthemed_group_is_counted_and_exported(published: tt.Workspace) -> None:
    group = published.unthemed()
    v = published.version()
    with published.folder.store() as store:
        stored = store.count_transcripts()
    assert group.count > 0 and group.count + len(v.doc_ids) == stored  # the demo's hang-ups
    assert group.share == pytest.approx(group.count / stored)
    assert sum(group.by_reason.values()) == group.count
    shares = published.shares()
    unthemed = shares.iloc[len(v.doc_ids) :]
    assert len(shares) == stored and len(unthemed) == group.count
    assert unthemed["transcript_id"].tolist() == list(group.reasons)
    assert (unthemed["lead_theme_label"] == "unthemed").all()
    assert (unthemed["lead_theme_suggested_name"] == "unthemed").all()
    assert unthemed["lead_theme_id"].isna().all() and unthemed["lead_share"].isna().all()
    assert unthemed.filter(like="share_").isna().all().all()
    assert unthemed["reason"].tolist() == list(group.reasons.values())
    assert group.to_json() == {
        "count": group.count,
        "share": round(group.count / stored, 6),
        "by_reason": group.by_reason,
    }
    status = published.status().stages["published"]
    assert status["unthemed"] == group.to_json()


def test_export_writes_the_shares(published: tt.Workspace, tmp_path: Path) -> None:
    result = published.export(tmp_path / "shares.parquet")
    assert result.rows == len(published.shares()) and result.out == tmp_path / "shares.parquet"
    back = pd.read_parquet(result.out)
    pd.testing.assert_frame_equal(back, published.shares(), check_dtype=False)
    themes = pd.read_parquet(result.themes_file)
    assert result.themes_file == tmp_path / "shares.themes.parquet"
    assert themes["column"].tolist() == [c for c in back.columns if c.startswith("share_")]
    with pytest.raises(tt.ConfigError, match=r"expected a \.csv or \.parquet"):
        published.export(tmp_path / "shares.xlsx")


def test_export_adds_the_manifests_metadata_on_request(
    published: tt.Workspace, demo, tmp_path: Path
) -> None:
    manifest = pd.read_csv(demo.manifest, dtype=str).set_index("call_id")
    result = published.export(tmp_path / "shares.csv", metadata=["site", "queue"])
    assert result.columns[-2:] == ["site", "queue"]
    frame = pd.read_csv(result.out, dtype=str, keep_default_na=False)
    expected = manifest.loc[frame["transcript_id"], ["site", "queue"]].to_numpy()
    assert (frame[["site", "queue"]].to_numpy() == expected).all()  # each call its own values
    every = published.export(tmp_path / "all.csv", metadata=True)
    assert set(every.columns) >= {"date", "queue", "site", "duration_s", "channel"}
    with pytest.raises(tt.InputError, match="'agent'"):
        published.export(tmp_path / "x.csv", metadata=["agent"])


def test_label_is_read_back_at_once_and_named_in_the_themes(published: tt.Workspace) -> None:
    first = published.themes()["theme_id"][0]
    published.themes()  # loads and keeps the version
    got = published.label(int(first), "Meter readings", note="=SUM(A1) stays text")
    assert got == tt.Label(int(first), "Meter readings", "=SUM(A1) stays text", False)
    row = published.themes().set_index("theme_id").loc[first]
    assert (row["label"], row["name"], row["note"]) == (
        "Meter readings", "Meter readings", "=SUM(A1) stays text",
    )  # fmt: skip
    assert published.label(int(first), hidden=True).hidden
    assert published.label(int(first), hidden=True).label == "Meter readings"  # kept
    assert published.shares()["lead_theme_label"].eq("Meter readings").any()


def test_label_refuses_a_theme_the_version_does_not_have(published: tt.Workspace) -> None:
    ids = published.version().theme_ids
    with pytest.raises(tt.InputError) as info:
        published.label(999, "x")
    assert f"there is no theme 999 in version 1 (its theme ids: {ids[0]}–{ids[-1]}" in str(
        info.value
    )
    with pytest.raises(tt.ConfigError):
        published.label(ids[0])


def test_nothing_published_yet_names_the_command(tmp_path: Path) -> None:
    ws = tt.Workspace.create(tmp_path / "w")
    assert ws.current_version() is None
    for read in (ws.themes, ws.shares, ws.version, lambda: ws.assign(["a text"])):
        with pytest.raises(tt.NotReadyError, match="run 'talkthemes publish' first"):
            read()
    with pytest.raises(tt.NotReadyError, match="talkthemes publish"):
        ws.label(1, "x")


def test_versions_by_number_and_making_one_current_again(published: tt.Workspace) -> None:
    v1 = published.themes()
    second = published.publish(k=K, family=FAMILY, force=True)
    assert second.version == 2 and published.current_version() == 2
    v2 = published.themes()
    assert set(v2["theme_id"]).isdisjoint(v1["theme_id"])  # a plain publish: all new themes
    pd.testing.assert_frame_equal(published.themes(version=1), v1)
    assert published.make_current(1).n == 1
    pd.testing.assert_frame_equal(published.themes(), v1)
    with pytest.raises(tt.ConfigError, match=r"--version 7: no such version \(kept: 1, 2\)"):
        published.make_current(7)


def test_publish_again_changes_nothing_unless_forced(published: tt.Workspace) -> None:
    again = published.publish(k=K, family=FAMILY)
    assert again.status == "already_current" and again.version == 1
    assert published.current_version() == 1


def test_reads_from_many_threads_agree(published: tt.Workspace) -> None:
    """What a service does: many readers at once, each seeing the same version whole."""
    texts = ["my meter reading was estimated again", "the power went off on our street"]
    want_themes = published.themes()
    want_assign = published.assign(texts)
    results: list[tuple[pd.DataFrame, pd.DataFrame]] = []
    errors: list[BaseException] = []
    reader = tt.Workspace.open(published.root)  # a fresh object: nothing loaded yet

    def read() -> None:
        try:
            results.append((reader.themes(), reader.assign(texts)))
        except BaseException as exc:
            errors.append(exc)

    threads = [threading.Thread(target=read) for _ in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors and len(results) == 8
    for themes, assigned in results:
        pd.testing.assert_frame_equal(themes, want_themes)
        pd.testing.assert_frame_equal(assigned, want_assign)
