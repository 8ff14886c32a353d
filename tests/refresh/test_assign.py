"""assign and the frozen prep: new transcripts prepared exactly like the version's corpus,
shares inferred from the saved model state, written in the export layout."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from tests.refresh.conftest import K
from typer.testing import CliRunner

import talkthemes as tt
from talkthemes import cli
from talkthemes.assign import ShareModel, assign, assign_frame
from talkthemes.config import PrepareSettings
from talkthemes.demo.records import DemoFiles
from talkthemes.errors import InputError
from talkthemes.prepare.corpus import OOV, PreparedCorpus
from talkthemes.prepare.frozen import (
    NO_KNOWN_TERMS,
    AppliedBatch,
    PrepApplier,
    PrepSpec,
    build_frozen_prep,
    load_prep_spec,
)
from talkthemes.sweep.run import load_current_prep
from talkthemes.versions.export import export_shares
from talkthemes.versions.fit import fit_version
from talkthemes.versions.load import load_version
from talkthemes.versions.write import write_version
from talkthemes.workspace import Workspace

runner = CliRunner()


def test_applier_reproduces_the_versions_prep_exactly(published_root: Path) -> None:
    """Every stored transcript, prepared the version's way, gives the prep's counts and
    token streams (boilerplate dropped, phrases joined, out-of-vocabulary kept as -1)."""
    ws = Workspace(published_root)
    v = load_version(ws)
    spec = load_prep_spec(ws, v)
    assert spec.boilerplate and spec.phrases  # both steps are exercised
    assert spec.vocabulary == v.vocabulary
    corpus = PreparedCorpus.load(load_current_prep(ws)[1])
    applier = PrepApplier(spec)
    with ws.store() as store:
        applied = applier.apply_all(store.iter_turn_batches(300))
    row = {t: i for i, t in enumerate(applied.doc_ids)}
    rows = [row[t] for t in corpus.doc_ids]
    assert (applied.counts[rows] != corpus.counts).nnz == 0
    for j in range(0, corpus.n_docs, 7):
        i = rows[j]
        got = applied.tokens[applied.offsets[i] : applied.offsets[i + 1]]
        assert np.array_equal(got, corpus.doc_tokens(j)), corpus.doc_ids[j]
    assert (applied.tokens == OOV).any()
    # the excluded transcripts are the short ones
    for tid, reason in corpus.excluded:
        if reason.startswith(f"{applied.known[row[tid]]} tokens in the vocabulary"):
            continue
        assert applied.known[row[tid]] == 0


def _spec(vocabulary: list[str]) -> PrepSpec:
    return PrepSpec.from_prep_info(
        {
            "hash": "h",
            "settings": PrepareSettings(boilerplate_min_words=3).model_dump(),
            "phrases": [["late_fee", 0.8], ["direct_debit", 0.9]],
            "boilerplate": [{"sentence": "thank you for calling the helpline", "share": 0.6}],
            "excluded": [["x1", "no words"]],
        },
        vocabulary,
    )


def test_boilerplate_phrases_and_unknown_words_on_known_text() -> None:
    vocabulary = ["helpline", "late_fee", "charge", "late", "fee", "direct_debit", "cancel"]
    applier = PrepApplier(_spec(vocabulary))
    batch = [
        ("a", [("agent", "Thank you for calling the Helpline!"),
               ("customer", "I was charged a late fee. It was late. Fee, zorblax")]),
        ("b", [("agent", "Thank you for calling the helpline.")]),
        ("c", [("customer", "Zorblax quuxed the wibble.")]),
        ("d", [("customer", "")]),
        ("e", [("customer", "Please cancel the direct debit, the helpline said so.")]),
    ]  # fmt: skip
    out = applier.apply(batch)
    counts = pd.DataFrame(out.counts.toarray(), index=out.doc_ids, columns=vocabulary)
    # a: the boilerplate sentence is gone (its "helpline" is not counted); "late fee" in one
    # sentence is joined, across a sentence break it is not; "zorblax" is unknown
    assert counts.loc["a"].to_dict() == {
        "helpline": 0, "late_fee": 1, "charge": 1, "late": 1, "fee": 1, "direct_debit": 0,
        "cancel": 0,
    }  # fmt: skip
    a = out.tokens[out.offsets[0] : out.offsets[1]]
    assert [vocabulary[t] if t >= 0 else None for t in a] == [
        "charge", "late_fee", "late", "fee", None,
    ]  # fmt: skip
    # e: "helpline" counts outside the boilerplate sentence; the phrase is joined
    assert counts.loc["e", ["helpline", "direct_debit", "cancel"]].tolist() == [1, 1, 1]
    assert out.known.tolist() == [4, 0, 0, 0, 3]
    assert out.reasons == [
        None, "only boilerplate sentences", NO_KNOWN_TERMS, "no words", None,
    ]  # fmt: skip
    assert out.offsets.tolist()[-1] == out.tokens.size
    assert _spec(vocabulary).excluded == [("x1", "no words")]


def test_assign_frame_layout_and_unknown_rows() -> None:
    applied = AppliedBatch(
        doc_ids=["a", "b"],
        counts=None,  # type: ignore[arg-type]
        tokens=np.zeros(0, np.int32),
        offsets=np.zeros(3, np.int64),
        known=np.array([5, 0]),
        reasons=[None, NO_KNOWN_TERMS],
    )
    shares = np.array([[0.2, 0.8], [0.5, 0.5]])
    frame = assign_frame(applied, shares, [7, 9], ["Seven", ""])
    assert list(frame.columns) == [
        "transcript_id", "lead_theme_id", "lead_theme_label", "lead_share", "share_7",
        "share_9", "known_terms", "reason",
    ]  # fmt: skip
    assert frame.loc[0, "lead_theme_id"] == 9 and frame.loc[0, "lead_share"] == 0.8
    assert pd.isna(frame.loc[1, "lead_theme_id"])
    assert frame.loc[1, "lead_theme_label"] == "unthemed"  # the group, not an empty cell
    assert frame.loc[1, ["share_7", "share_9", "lead_share"]].isna().all()
    assert frame["reason"].tolist() == ["", NO_KNOWN_TERMS]
    # with the version's min_tokens, 5 known terms are too few: unthemed, saying why
    short = assign_frame(applied, shares, [7, 9], ["Seven", ""], ["s7", "s9"], min_tokens=6)
    assert short["lead_theme_id"].isna().all() and short["lead_share"].isna().all()
    assert short["lead_theme_label"].tolist() == ["unthemed", "unthemed"]
    assert short["lead_theme_suggested_name"].tolist() == ["unthemed", "unthemed"]
    assert short["reason"].tolist() == [
        "5 tokens in the vocabulary, fewer than min_tokens = 6",
        NO_KNOWN_TERMS,
    ]
    with pytest.raises(InputError, match="shares"):
        assign_frame(applied, shares[:1], [7, 9], ["", ""])


def test_assign_cli_csv_and_parquet(
    published: Workspace, demo_files: DemoFiles, tmp_path: Path
) -> None:
    ws = published
    v = load_version(ws)
    with ws.store() as store:
        stored = store.count_transcripts()
    csv_path, pq_path = tmp_path / "shares.csv", tmp_path / "shares.parquet"
    res = runner.invoke(
        cli.app, ["assign", str(demo_files.inbox), "--out", str(csv_path), "-w", str(ws.root),
                  "--json"],
    )  # fmt: skip
    assert res.exit_code == 0, res.stderr
    doc = json.loads(res.stdout)
    n = sum(demo_files.inbox_counts.values())
    assert doc["rows"] == n and doc["rejects"] == [] and doc["version"] == 1
    frame = pd.read_csv(csv_path)
    assert len(frame) == n and frame["transcript_id"].str.startswith("C2026-10").all()
    export_cols = list(export_shares(v).columns)
    assert export_cols[-1] == "reason"  # the export's layout, known_terms before the reason
    assert list(frame.columns) == [*export_cols[:-1], "known_terms", "reason"]
    shares = frame[[f"share_{t}" for t in v.theme_ids]].to_numpy()
    themed = frame["lead_theme_id"].notna().to_numpy()
    min_tokens = ws.settings().prepare.min_tokens
    assert (frame.loc[themed, "known_terms"] >= min_tokens).all()
    np.testing.assert_allclose(shares[themed].sum(axis=1), 1, atol=1e-4)
    assert (frame.loc[themed, "lead_share"] == shares[themed].max(axis=1)).all()
    # the inbox's hang-ups: rows of the unthemed group, counted in the JSON
    unthemed = frame[~themed]
    assert len(unthemed) == doc["unthemed"] > 0 and doc["assigned"] == themed.sum()
    assert (unthemed["known_terms"] < min_tokens).all()
    assert (unthemed["lead_theme_label"] == "unthemed").all()
    assert unthemed["reason"].str.len().gt(0).all() and np.isnan(shares[~themed]).all()
    assert doc["without_known_words"] == (frame["known_terms"] == 0).sum()
    with ws.store() as store:
        assert store.count_transcripts() == stored  # nothing stored without --store
    res = runner.invoke(cli.app, ["assign", str(demo_files.inbox), "--out", str(pq_path),
                                  "-w", str(ws.root)])  # fmt: skip
    assert res.exit_code == 0, res.stderr
    again = pd.read_parquet(pq_path)
    text = ["lead_theme_label", "reason"]
    pd.testing.assert_frame_equal(
        again.drop(columns=text), frame.drop(columns=text), check_dtype=False
    )
    for col in text:
        assert (
            again[col].astype(object).fillna("").tolist()
            == frame[col].astype(object).fillna("").tolist()
        )


def test_assign_never_reads_a_manifest_as_transcripts(
    published: Workspace, demo_files: DemoFiles, tmp_path: Path
) -> None:
    """Ingest's rule (``ingest.detect.is_manifest``): a ``manifest.*`` anywhere in a folder,
    or named on the command line, holds metadata, never transcripts."""
    ws = published
    extra = tmp_path / "extra"
    (extra / "may").mkdir(parents=True)
    manifest = demo_files.inbox / "manifest.csv"
    (extra / "may" / "Manifest.CSV").write_bytes(manifest.read_bytes())
    (extra / "may" / "c1.txt").write_text(
        "Customer: my bill is wrong, the charge on the bill is too high\n", encoding="utf-8"
    )
    out = tmp_path / "out.csv"
    res = runner.invoke(
        cli.app,
        ["assign", str(extra), str(manifest), "--out", str(out), "-w", str(ws.root), "--json"],
    )
    assert res.exit_code == 0, res.stdout + res.stderr
    doc = json.loads(res.stdout)
    assert doc["rows"] == 1 and doc["rejects"] == []
    assert pd.read_csv(out)["transcript_id"].tolist() == ["c1"]
    frame = tt.Workspace.open(ws.root).assign([extra, manifest])  # the API: the same rule
    assert frame["transcript_id"].tolist() == ["c1"]


def test_assign_store_unknown_words_rejects_and_usage(
    published: Workspace, demo_files: DemoFiles, tmp_path: Path
) -> None:
    ws = published
    extra = tmp_path / "extra"
    extra.mkdir()
    (extra / "gibberish.txt").write_text("Customer: zorblax quux wibble\n", encoding="utf-8")
    (extra / "broken.vtt").write_text("not webvtt\n", encoding="utf-8")
    out = tmp_path / "out.csv"
    res = runner.invoke(cli.app, ["assign", str(extra), "--out", str(out), "-w", str(ws.root)])
    assert res.exit_code == 3  # one input rejected, the other assigned
    frame = pd.read_csv(out, keep_default_na=False)
    assert frame["transcript_id"].tolist() == ["gibberish"]
    assert frame.loc[0, "lead_theme_id"] == "" and frame.loc[0, "reason"] == NO_KNOWN_TERMS
    assert frame.loc[0, "lead_theme_label"] == "unthemed"  # said, not left empty
    assert "Unthemed: 1 transcript (100.0%)" in " ".join(res.stdout.split())
    assert "broken.vtt" in res.stderr

    with ws.store() as store:
        before = store.count_transcripts()
    with ws.lock("assign"):
        result = assign(ws, [demo_files.inbox], out=tmp_path / "s.parquet", store=True)
    assert result.exit_code == 0 and result.stored["totals"]["added"] == result.rows
    with ws.store() as store:
        assert store.count_transcripts() == before + result.rows
        meta = store.metadata_for(["C2026-10-000001"])
    assert meta["C2026-10-000001"]["date"] == "2026-10-01"  # the folder's manifest applied

    res = runner.invoke(
        cli.app, ["assign", str(extra), "--out", str(tmp_path / "x.txt"), "-w", str(ws.root)]
    )
    assert res.exit_code == 2 and ".csv or .parquet" in res.stderr
    res = runner.invoke(
        cli.app,
        ["assign", str(extra), "--out", str(out), "-m", str(demo_files.manifest),
         "-w", str(ws.root)],
    )  # fmt: skip
    assert res.exit_code == 2 and "--store" in res.stderr
    empty = tmp_path / "empty"
    empty.mkdir()
    res = runner.invoke(cli.app, ["assign", str(empty), "--out", str(out), "-w", str(ws.root)])
    assert res.exit_code == 2 and "no transcripts found" in res.stderr


def test_assign_needs_a_version(ws: Workspace, tmp_path: Path) -> None:
    res = runner.invoke(cli.app, ["assign", str(tmp_path), "--out", str(tmp_path / "a.csv"),
                                  "-w", str(ws.root)])  # fmt: skip
    assert res.exit_code == 2 and "talkthemes publish" in res.stderr


def test_lda_shares_from_saved_state_match_the_fitted_model(
    published: Workspace, demo_files: DemoFiles, tmp_path: Path
) -> None:
    """LDA: the shares assign infers from the version's .npy state are exactly those the
    fitted gensim model infers for the same rows and seed; two runs agree."""
    from talkthemes.models.factory import make_model
    from talkthemes.models.lda_infer import infer_doc_topics

    ws = published
    prep, folder = load_current_prep(ws)
    corpus = PreparedCorpus.load(folder)
    model = make_model("lda", 6, 4, ws.settings().sweep).fit(corpus.counts.tocsr())
    with ws.lock("publish"):
        fitted = fit_version(
            ws, corpus, family="lda", k=6, seed=4, prep_hash=prep.hash, model=model
        )
        n = write_version(ws, fitted)
    v = load_version(ws, n)
    applier = PrepApplier(load_prep_spec(ws, v))
    with ws.store() as store:
        applied = applier.apply(store.turns_for([f"C2026-0{m}-0000{d}" for m in (5, 6)
                                                 for d in range(10, 40)]))  # fmt: skip
    got = ShareModel.from_version(v).shares(applied.counts)
    want = infer_doc_topics(
        model.model_, applied.counts.astype(np.float64), seed=4, chunksize=ShareModel.CHUNKSIZE
    )
    np.testing.assert_array_equal(got, want)
    a, b = tmp_path / "a.parquet", tmp_path / "b.parquet"
    for path in (a, b):
        assign(ws, [demo_files.inbox], out=path)
    first, second = pd.read_parquet(a), pd.read_parquet(b)
    pd.testing.assert_frame_equal(first, second)
    assert first.shape[1] == 5 + 6 + 2 and first.shape[0] == sum(demo_files.inbox_counts.values())
    assert K != 6  # the LDA version is its own (the NMF one has K themes)


def test_frozen_prep_of_the_same_store_is_the_prep_itself(published: Workspace) -> None:
    """Prepared the version's way, the transcripts the version was built from give back its
    prep: same vocabulary, training transcripts, counts, token streams and exclusions."""
    ws = published
    v = load_version(ws)
    original = PreparedCorpus.load(load_current_prep(ws)[1])
    with ws.lock("test"):
        prep_hash, folder = build_frozen_prep(ws, v, load_prep_spec(ws, v))
    frozen = PreparedCorpus.load(folder)
    assert prep_hash != original.info["hash"]
    assert frozen.vocabulary == original.vocabulary and frozen.doc_ids == original.doc_ids
    assert (frozen.counts != original.counts).nnz == 0
    assert np.array_equal(frozen.tokens, original.tokens)
    assert np.array_equal(frozen.offsets, original.offsets)
    assert [t for t, _ in frozen.excluded] == [t for t, _ in original.excluded]
    frozen.validate()
    assert frozen.info["phrases"] == original.info["phrases"]
    with ws.store() as store:
        current = store.current_prep()
    assert current is not None and current.frozen_from is not None
    assert current.hash == prep_hash and current.frozen_from["version"] == v.n
    stamp = (folder / "counts.npz").stat().st_mtime_ns
    with ws.lock("test"):
        assert build_frozen_prep(ws, v, load_prep_spec(ws, v)) == (prep_hash, folder)
    assert (folder / "counts.npz").stat().st_mtime_ns == stamp  # cached, not rebuilt
