"""A sweep on a sample end to end: the CLI's ``--sample`` (text and JSON), the sweep
record, the second-sample check, reuse, bad input, and ``publish`` giving every call its
shares with LDA and NMF."""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.preps import install_prep
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.sweep.run import run_sweep
from talkthemes.sweep.sample import SAMPLE_FILE
from talkthemes.sweep.split import split_rows
from talkthemes.versions.load import load_version
from talkthemes.versions.publish import publish
from talkthemes.view.choose_k import load_sweep
from talkthemes.workspace import Workspace

N_CALLS = 600
GRID = ["--k", "6,8,10", "--family", "lda,nmf", "--seeds", "2", "--workers", "2"]


@pytest.fixture(scope="module")
def sampled(tmp_path_factory: pytest.TempPathFactory) -> tuple[Workspace, dict]:
    """A prep of 600 bar calls over three months and two queues, swept on a sample of 240
    through the CLI (JSON)."""
    ws = Workspace(tmp_path_factory.mktemp("sampled") / "ws")
    ws.init()
    _, _, texts = make_bars_corpus(N_CALLS, seed=5)
    corpus = install_prep(ws, pixel_names(), texts)
    meta = {
        tid: {"date": f"2026-0{1 + i % 3}-{1 + i % 28:02d}", "queue": "tech" if i % 4 else "bills"}
        for i, tid in enumerate(corpus.doc_ids)
    }
    with ws.store() as store:
        store.set_metadata(meta)
    r = CliRunner().invoke(app, ["sweep", *GRID, "--sample", "240", "--json", "-w", str(ws.root)])
    assert r.exit_code == 0, r.stderr
    return ws, json.loads(r.stdout)


def test_sweep_json_reports_the_sample_and_both_recommendations(sampled) -> None:
    ws, doc = sampled
    sample = doc["sample"]
    assert sample["n"] == 240 and sample["calls"] == N_CALLS
    assert sample["by"] == ["month", "queue"] and sample["strata"] == 6
    check = sample["check"]
    assert check["sample_b"] == 240
    assert set(check["families"]) == {"lda", "nmf"}
    for family, f in check["families"].items():
        assert f["k_a"] == doc["recommendations"][family]["k"]
        assert f["k_b"] in f["ks_refit"]
        assert f["agree"] == (f["k_a"] == f["k_b"])
        grid = [6, 8, 10]
        i = grid.index(f["k_a"])
        assert f["ks_refit"] == grid[max(0, i - 1) : i + 2]  # K and one step either side
    refit = sum(len(f["ks_refit"]) for f in check["families"].values())
    assert check["cells"] == refit * 2  # every seed of those K
    # cells fitted on the sample's training calls only
    rows = np.load(ws.sweeps_dir / str(doc["sweep_id"]) / SAMPLE_FILE, allow_pickle=False)
    assert len(rows) == 240
    with ws.store() as store:
        record = store.get_sweep(doc["sweep_id"])
    assert record is not None and record.status == "done"
    assert record.info["sample"]["check"] == check
    assert record.info["sample"]["rows"] == sample["rows"]


def test_sweep_text_shows_the_sample_and_the_agreement(sampled) -> None:
    ws, doc = sampled
    r = CliRunner().invoke(app, ["sweep", *GRID, "--sample", "240", "-w", str(ws.root)])
    assert r.exit_code == 0, r.stderr
    text = " ".join(r.stdout.split())
    assert "(already done; reused)" in text
    assert (
        "Swept on a sample of 240 of 600 calls, stratified by month, queue (6 strata, seed 0)."
        in text
    )
    cells = doc["sample"]["check"]["cells"]
    assert f"second, disjoint sample of 240 calls ({cells} cells" in text
    for family, f in doc["sample"]["check"]["families"].items():
        verdict = "they agree" if f["agree"] else "they differ"
        ks = ", ".join(map(str, f["ks_refit"]))
        assert (
            f"{family.upper()}: K = {f['k_a']} on sample A, K = {f['k_b']} on sample B "
            f"(K refitted: {ks}): {verdict}."
        ) in text


def test_choose_k_data_has_the_sample_check(sampled) -> None:
    ws, doc = sampled
    view = load_sweep(ws, doc["sweep_id"])
    frame = view.sample_agreement
    assert sorted(frame["family"]) == ["lda", "nmf"]
    for family, f in doc["sample"]["check"]["families"].items():
        row = frame[frame["family"] == family].iloc[0]
        assert (row["k_a"], row["k_b"], bool(row["agree"])) == (f["k_a"], f["k_b"], f["agree"])
    assert view.sample_lines[0].startswith("Swept on a sample of 240 of 600 calls")


def test_a_sweep_of_every_call_is_another_grid(sampled) -> None:
    ws, doc = sampled
    full = run_sweep(ws, k="6,8,10", families=["nmf"], seeds=2, workers=1)
    assert full.sweep_id != doc["sweep_id"] and full.sample is None
    assert "sample" not in full.to_json()
    other = run_sweep(ws, k="6,8,10", families=["lda", "nmf"], seeds=2, workers=2, sample=300)
    assert other.sweep_id not in (doc["sweep_id"], full.sweep_id)


@pytest.mark.parametrize("family", ["lda", "nmf"])
def test_publish_from_a_sample_covers_every_call(sampled, family: str) -> None:
    ws, doc = sampled
    with ws.lock("publish"):
        result = publish(ws, k=8, family=family, sweep_id=doc["sweep_id"], force=True)
    assert result.sample_calls == 240
    assert "fitted from the sweep's sample of 240 calls" in result.message
    v = load_version(ws, result.version)
    shares = np.asarray(v.doc_topics)
    assert shares.shape == (N_CALLS, 8) and len(v.doc_ids) == N_CALLS
    np.testing.assert_allclose(shares.sum(axis=1), 1.0, atol=1e-4)
    how = v.info["params"]["sample"]
    assert how["calls"] == 240
    if family == "lda":
        assert 1 <= how["passes_on_all"] <= 2
        assert len(how["per_word_bound_on_all"]) == how["passes_on_all"]
    else:
        assert how["method"] == "fit on the sample, every call transformed"
    assert v.info["sample"]["rows"] == doc["sample"]["rows"]
    # the calls outside the sample have shares too, and they tell the bars apart
    rows = np.load(ws.sweeps_dir / str(doc["sweep_id"]) / SAMPLE_FILE, allow_pickle=False)
    outside = np.setdiff1d(np.arange(N_CALLS), rows)
    assert len(outside) == N_CALLS - 240
    assert shares[outside].max(axis=1).mean() > 0.3
    again = publish(ws, k=8, family=family, sweep_id=doc["sweep_id"])
    assert again.status == "already_current"


def test_sample_train_rows_are_the_sample_minus_held_out(sampled) -> None:
    ws, doc = sampled
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.sweep.sample import restrict

    with ws.store() as store:
        prep = store.current_prep()
    corpus = PreparedCorpus.load(ws.prepared_dir / prep.hash)
    rows = np.load(ws.sweeps_dir / str(doc["sweep_id"]) / SAMPLE_FILE, allow_pickle=False)
    train, held = split_rows(corpus.doc_ids, 0.1)
    t, h = restrict(train, rows), restrict(held, rows)
    assert len(t) + len(h) == 240 and set(t) | set(h) == set(rows.tolist())


@pytest.mark.parametrize(
    ("value", "says"),
    [
        ("0", "at least 1"),
        ("-3", "at least 1"),
        ("600", "the prep has 600 calls; a sample must be smaller"),
        ("5000", "the prep has 600 calls; a sample must be smaller"),
    ],
)
def test_bad_sample_is_a_usage_error(sampled, value: str, says: str) -> None:
    ws, _ = sampled
    r = CliRunner().invoke(app, ["sweep", *GRID, "--sample", value, "-w", str(ws.root)])
    assert r.exit_code == 2, r.stdout
    message = " ".join(r.stderr.split())
    assert f"--sample {int(value):,}" in message or f"--sample {value}" in message
    assert says in message
    assert re.search(r"Traceback", r.stderr) is None


def test_choose_k_section_shows_the_sample_and_the_agreement(sampled, monkeypatch) -> None:
    from tests.viewer.test_app import open_app, run, texts

    from talkthemes.text import md_inline

    ws, _ = sampled
    at = run(open_app(ws.root, monkeypatch), "choose_k.py")
    shown = texts(at)
    assert "Swept on a sample" in shown
    view = load_sweep(ws)  # the section shows the latest sweep
    assert view.sample is not None
    for text in view.sample_lines:
        assert md_inline(text.strip()) in shown
    differ = not view.sample_agreement["agree"].all()
    warnings = " ".join(str(w.value) for w in at.warning)
    assert ("A second sample of the calls recommends another K" in warnings) == bool(differ)


def test_an_interrupted_check_runs_on_the_next_sweep(sampled) -> None:
    ws, doc = sampled
    with ws.store() as store:
        record = store.get_sweep(doc["sweep_id"])
        assert record is not None
        info = dict(record.info)
        info["sample"] = {k: v for k, v in info["sample"].items() if k != "check"}
        store.set_sweep_status(doc["sweep_id"], "done", info)
    again = run_sweep(ws, k="6,8,10", families=["lda", "nmf"], seeds=2, workers=2, sample=240)
    assert again.cached and again.sweep_id == doc["sweep_id"]
    check = again.sample["check"]
    assert {f: (v["k_a"], v["k_b"]) for f, v in check["families"].items()} == {
        f: (v["k_a"], v["k_b"]) for f, v in doc["sample"]["check"]["families"].items()
    }  # the same cells on the same sample B give the same answer
    with ws.store() as store:
        assert (
            store.get_sweep(doc["sweep_id"]).info["sample"]["check"]["families"]
            == (check["families"])
        )


def test_a_large_prep_is_sampled_without_being_asked(sampled) -> None:
    ws, _ = sampled
    before = ws.settings_path.read_text(encoding="utf-8")
    assert "\n[sweep]\n" in before
    ws.settings_path.write_text(
        before.replace("\n[sweep]\n", "\n[sweep]\nauto_sample_above = 500\nauto_sample = 200\n", 1),
        encoding="utf-8",
    )
    try:
        auto = run_sweep(ws, k="6,8", families=["nmf"], seeds=2, workers=1)
        assert auto.sample is not None and auto.sample["automatic"] is True
        assert auto.sample["n"] == 200 and auto.sample["check"]["families"]["nmf"]["k_a"] in (6, 8)
        assert auto.sample_lines[0].startswith("Swept on an automatic sample of 200 of 600 calls")
    finally:
        ws.settings_path.write_text(before, encoding="utf-8")
