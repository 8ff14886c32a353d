"""What the alert step reads: example sentences (prepared the version's way, customer first,
one per call, never boilerplate, scrubbed), lead themes under the previous version, term
counts per period, the not-a-theme mark."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import scipy.sparse as sp

from talkthemes.demo.records import DemoFiles
from talkthemes.prepare.frozen import PrepApplier, load_prep_spec
from talkthemes.refresh.alert_step import (
    best_sentences,
    not_a_theme_ids,
    previous_leads,
    split_sentences,
    term_counts,
)
from talkthemes.versions.load import load_version
from talkthemes.workspace import Workspace


def test_split_sentences_keeps_abbreviation_free_sentences_whole() -> None:
    assert split_sentences("Hello there.  My price went up!\nWhy? ok") == [
        "Hello there.",
        "My price went up!",
        "Why?",
        "ok",
    ]
    assert split_sentences("   ") == []


def test_best_sentences_prefer_the_customer_and_skip_boilerplate(published_root: Path) -> None:
    ws = Workspace(published_root)
    version = load_version(ws)
    spec = load_prep_spec(ws, version)
    applier = PrepApplier(spec)
    leak = {"leak", "water", "tap"}  # terms of the demo's water-leak theme
    assert leak <= set(spec.vocabulary)
    weights = np.array([1.0 if t in leak else 0.0 for t in spec.vocabulary])
    boiler = spec.boilerplate[0].capitalize() + "."
    turns = [
        ("c1", [("agent", "Is the water leak near the tap, the leak you mentioned?"),
                ("customer", "Hi. Water comes from the tap, ring 0161 496 0000 or a.b@example.com"),
                ("agent", boiler)]),
        ("c2", [("agent", boiler), ("agent", "A water leak at the tap is ours to fix.")]),
        ("c3", [("agent", boiler), ("customer", "Thanks, bye.")]),
        ("c4", [("customer", "The leak. The leak and the water and the tap again.")]),
        ("c5", [("customer", "the leak and the water and the tap  again.")]),  # said before
    ]  # fmt: skip
    picked = best_sentences(turns, applier, weights, n=3, scrub_on=True)
    assert [p["transcript_id"] for p in picked] == ["c4", "c1", "c2"]  # customers first
    by_id = {p["transcript_id"]: p["sentence"] for p in picked}
    assert by_id["c4"] == "The leak and the water and the tap again."
    assert by_id["c1"].startswith("Water comes from the tap, ring")
    assert "0161" not in by_id["c1"] and "example.com" not in by_id["c1"]  # scrubbed
    raw = best_sentences(turns, applier, weights, n=3, scrub_on=False)
    assert "0161 496 0000 or a.b@example.com" in raw[1]["sentence"]
    assert by_id["c2"] == "A water leak at the tap is ours to fix."  # no customer sentence
    assert all(p["sentence"] != boiler for p in picked)
    assert best_sentences(turns, applier, weights, n=1, scrub_on=True) == picked[:1]
    assert best_sentences([], applier, weights) == []


def test_term_counts_and_the_not_a_theme_mark(published: Workspace) -> None:
    counts = sp.csr_matrix(np.array([[1, 0, 2], [0, 3, 0], [4, 0, 0]]))
    new, earlier = term_counts(counts, np.array([True, False, True]))
    assert new.tolist() == [5, 0, 2] and earlier.tolist() == [0, 3, 0]
    version = load_version(published)
    hidden = version.theme_ids[2]
    with published.store() as store:
        assert not_a_theme_ids(store, version.n) == set()
        store.set_label(hidden, hidden=True)
        assert not_a_theme_ids(store, version.n) == {hidden}
        # a theme merged into a theme marked "not a theme" is not a theme either
        merged = version.theme_ids[0]
        store.merge_theme(merged, hidden)
        assert not_a_theme_ids(store, version.n) == {hidden, merged}


def test_previous_leads_read_own_shares_and_infer_the_others(
    published: Workspace, demo_files: DemoFiles
) -> None:
    from talkthemes.assign import ShareModel
    from talkthemes.ingest.run import ingest

    ws = published
    version = load_version(ws)
    spec = load_prep_spec(ws, version)
    with ws.lock("ingest"):
        ingest(ws, [demo_files.inbox])
    with ws.store() as store:
        october = [t for t in store.transcript_ids() if t.startswith("C2026-10")][:40]
        applied = PrepApplier(spec).apply(store.turns_for(october))
    ids = [*version.doc_ids[:30], *october]
    lead = previous_leads(ws, version, spec, ids)
    assert lead[:30].tolist() == version.lead()[:30].tolist()  # its own shares
    expected = np.argmax(ShareModel.from_version(version).shares(applied.counts.tocsr()), 1)
    known = applied.known > 0
    assert known.sum() >= 35
    assert lead[30:][known].tolist() == expected[known].tolist()  # as assign infers them
    assert (lead[30:][~known] == -1).all()
    # a version without its model state: the others stay unknown, its own are still read
    (version.folder / "model" / "params.json").unlink()
    fallback = previous_leads(ws, version, spec, ids)
    assert fallback[:30].tolist() == lead[:30].tolist() and (fallback[30:] == -1).all()
