"""The sweep: grid parsing, split, cells on Dask, resume, scoring, publish and export."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.preps import install_prep
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.errors import ConfigError, NotReadyError
from talkthemes.sweep.grid import build_cells, parse_k
from talkthemes.sweep.run import run_sweep
from talkthemes.sweep.split import split_rows
from talkthemes.versions.export import export_shares
from talkthemes.versions.load import load_version
from talkthemes.versions.publish import publish
from talkthemes.workspace import Workspace


@pytest.mark.parametrize(
    ("spec", "ks"),
    [("4:10:2", [4, 6, 8, 10]), ("5,10, 15", [5, 10, 15]), ("3:5", [3, 4, 5]), ("7", [7])],
)
def test_parse_k(spec: str, ks: list[int]) -> None:
    assert parse_k(spec) == ks


@pytest.mark.parametrize("spec", ["", "a:b", "10:4:0", "1,2", "4:30:-2"])
def test_parse_k_rejects_with_example(spec: str) -> None:
    with pytest.raises(ConfigError, match="--k"):
        parse_k(spec)


def test_build_cells_names_and_order() -> None:
    cells = build_cells([5, 10], ["lda", "nmf"], 2)
    assert [c.cell for c in cells][:3] == ["lda-k005-s0", "lda-k005-s1", "lda-k010-s0"]
    assert len(cells) == 8
    with pytest.raises(ConfigError, match="--family"):
        build_cells([5], ["plsa"], 1)


def test_split_is_stable_per_id_and_near_the_share() -> None:
    ids = [f"call-{i}" for i in range(5000)]
    train, held = split_rows(ids, 0.1)
    assert len(train) + len(held) == 5000
    assert 400 < len(held) < 600
    # the same id lands on the same side in another corpus order and size
    sub = ids[::-1][:1000]
    _, held2 = split_rows(sub, 0.1)
    assert {sub[i] for i in held2} == {ids[i] for i in held} & set(sub)
    t0, h0 = split_rows(ids, 0.0)
    assert len(h0) == 0 and len(t0) == 5000


@pytest.fixture(scope="module")
def bars_ws(tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    ws = Workspace(tmp_path_factory.mktemp("bars") / "ws")
    ws.init()
    _, _, texts = make_bars_corpus(400, seed=3)
    install_prep(ws, pixel_names(), texts)
    return ws


def test_sweep_without_prep_names_the_command(ws: Workspace) -> None:
    with pytest.raises(NotReadyError, match="talkthemes prepare"):
        run_sweep(ws, k="4,5", families=["nmf"], seeds=1)


def test_sweep_runs_scores_recommends_and_is_reused(bars_ws: Workspace) -> None:
    seen: list[tuple[int, int]] = []
    res = run_sweep(
        bars_ws,
        k="8,10",
        families=["lda", "nmf"],
        seeds=2,
        workers=2,
        progress=lambda done, total, cell: seen.append((done, total)),
    )
    assert len(res.cells) == 8
    assert seen[-1] == (8, 8)
    for col in ("c_v", "c_npmi", "c_uci", "u_mass", "diversity", "stability", "fit_seconds"):
        assert res.cells[col].notna().all(), col
    assert res.cells.loc[res.cells.family == "lda", "perplexity"].notna().all()
    assert res.cells.loc[res.cells.family == "nmf", "reconstruction_error"].notna().all()
    assert set(res.recommendations) == {"lda", "nmf"}
    assert res.recommendations["lda"].reasons
    assert (res.folder / "cells.parquet").exists()
    assert len(list((res.folder / "topics").glob("*.npy"))) == 8
    topics = np.load(res.folder / "topics" / "lda-k010-s0.npy", allow_pickle=False)
    assert topics.shape == (10, 25)
    np.testing.assert_allclose(topics.sum(axis=1), 1.0, rtol=1e-5)
    doc = res.to_json()
    json.dumps(doc)  # JSON-ready
    again = run_sweep(bars_ws, k="8,10", families=["lda", "nmf"], seeds=2, workers=2)
    assert again.cached and again.sweep_id == res.sweep_id
    assert again.recommendations["lda"].k == res.recommendations["lda"].k


def test_interrupted_sweep_resumes_finished_cells(bars_ws: Workspace) -> None:
    first = run_sweep(bars_ws, k="6", families=["nmf"], seeds=2, workers=1)
    with bars_ws.store() as store:  # simulate an interruption after one cell
        con = store._conn
        con.execute("DELETE FROM cells WHERE sweep_id=? AND cell='nmf-k006-s1'", (first.sweep_id,))
        con.execute("UPDATE sweeps SET status='running' WHERE id=?", (first.sweep_id,))
    seen: list[str] = []
    res = run_sweep(
        bars_ws,
        k="6",
        families=["nmf"],
        seeds=2,
        workers=1,
        progress=lambda d, t, c: seen.append(c),
    )
    assert res.sweep_id == first.sweep_id
    assert res.reused_cells == 1
    assert seen[0] == "resuming" and "nmf-k006-s1" in seen
    with bars_ws.store() as store:
        record = store.get_sweep(res.sweep_id)
        assert record is not None and record.status == "done"


def test_publish_themes_label_export(bars_ws: Workspace, tmp_path: Path) -> None:
    run_sweep(bars_ws, k="8,10", families=["lda", "nmf"], seeds=2, workers=2)
    with bars_ws.lock("publish"):
        result = publish(bars_ws, k=10, family="nmf")
    assert result.version == 1 and result.k == 10
    v = load_version(bars_ws)
    assert v.n == 1 and v.k == 10 and len(v.doc_ids) == 400
    assert np.allclose(np.asarray(v.doc_topics).sum(axis=1), 1.0, atol=1e-4)
    assert abs(v.coverage().sum() - 1) < 1e-9
    for f in (
        "topic_terms.npy",
        "doc_topics.npy",
        "doc_ids.json",
        "vocabulary.json",
        "version.json",
        "model/params.json",
    ):
        assert (v.folder / f).exists(), f
    assert not any(p.suffix in (".pkl", ".pickle") for p in v.folder.rglob("*"))
    table = v.term_table(0, n=5, lam=0.6)
    assert list(table.columns) == ["term", "relevance", "weight", "corpus_weight", "lift", "rank"]
    assert table["relevance"].is_monotonic_decreasing

    runner = CliRunner()
    tid = v.theme_ids[2]
    r = runner.invoke(
        app, ["label", str(tid), "Vertical bar", "--note", "n", "-w", str(bars_ws.root)]
    )
    assert r.exit_code == 0, r.stderr
    r = runner.invoke(app, ["themes", "--json", "-w", str(bars_ws.root)])
    doc = json.loads(r.stdout)
    assert doc["themes"][2]["label"] == "Vertical bar"
    assert doc["themes"][2]["name"] == "Vertical bar"
    assert set(doc["themes"][0]["coherence"]) == {"c_npmi", "c_v"}
    r = runner.invoke(app, ["label", "999", "x", "-w", str(bars_ws.root)])
    assert r.exit_code == 2 and "no theme 999" in r.stderr

    out = tmp_path / "shares.parquet"
    r = runner.invoke(app, ["export", "--out", str(out), "-w", str(bars_ws.root)])
    assert r.exit_code == 0, r.stderr
    frame = pd.read_parquet(out)
    assert len(frame) == 400
    assert frame.columns[:4].tolist() == [
        "transcript_id",
        "lead_theme_id",
        "lead_theme_label",
        "lead_share",
    ]
    share_cols = [c for c in frame.columns if c.startswith("share_")]
    assert len(share_cols) == 10
    assert np.allclose(frame[share_cols].sum(axis=1), 1.0, atol=1e-4)
    assert (frame["lead_share"] == frame[share_cols].max(axis=1)).all()
    labelled = frame[frame.lead_theme_id == tid]
    assert (labelled["lead_theme_label"] == "Vertical bar").all()
    assert export_shares(v).shape == frame.shape
    r = runner.invoke(app, ["export", "--out", str(tmp_path / "x.xlsx"), "-w", str(bars_ws.root)])
    assert r.exit_code == 2 and ".csv or .parquet" in r.stderr
