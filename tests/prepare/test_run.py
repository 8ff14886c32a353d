"""run_prepare on a workspace: caching by hash, store records, the explain report."""

from __future__ import annotations

import io
import json
import random

import numpy as np
import pytest
from rich.console import Console

from talkthemes.calls.model import Transcript, Turn
from talkthemes.cli._explain import explain_rows, render_explain
from talkthemes.config import PrepareSettings, Settings, render_settings
from talkthemes.errors import InputError, NotReadyError
from talkthemes.prepare import (
    PreparedCorpus,
    compute_prep_hash,
    load_current,
    run_prepare,
)
from talkthemes.workspace import Workspace, atomic_write_text

WORDS = {
    "billing": "invoice refund payment balance statement overdraft credit discount tariff "
    "receipt surcharge instalment rebate ledger voucher penalty arrears cheque debit fee",
    "outage": "outage power cable transformer storm engineer voltage fuse substation blackout "
    "generator wire circuit lightning repair pole crew flicker socket torch",
    "moving": "address tenancy landlord removal flat postcode tenant lease furniture van "
    "apartment garage neighbour relocation property cottage mortgage garden estate bungalow",
}


def transcripts(n: int, seed: int = 1, start: int = 0) -> list[Transcript]:
    rng = random.Random(seed)
    topics = sorted(WORDS)
    out = []
    for i in range(start, start + n):
        words = WORDS[topics[i % len(topics)]].split()
        turns = [Turn("Agent", "agent", "Thanks for calling, how can I help you today?")]
        for _ in range(6):
            turns.append(Turn("Caller", "customer", " ".join(rng.sample(words, 7)) + "."))
        out.append(Transcript(f"t{i:03d}", turns, source=f"t{i:03d}.txt", format="txt"))
    return out


def add(ws: Workspace, items: list[Transcript]) -> None:
    with ws.store() as store:
        store.add_transcripts(items, None)


def set_prepare(ws: Workspace, **values) -> None:
    atomic_write_text(
        ws.settings_path, render_settings(Settings(prepare=PrepareSettings(**values)))
    )


@pytest.fixture
def filled(ws: Workspace) -> Workspace:
    add(ws, transcripts(45))
    set_prepare(ws, n_process=1)
    return ws


def test_first_run_writes_the_prep_and_records_it(filled: Workspace):
    result = run_prepare(filled)
    assert not result.cached
    assert result.path == filled.prepared_dir / result.prep_hash
    for name in (
        "vocabulary.json",
        "counts.npz",
        "tokens.npy",
        "offsets.npy",
        "doc_ids.json",
        "prep.json",
        "explain.json",
    ):
        assert (result.path / name).is_file()
    with filled.store() as store:
        current = store.current_prep()
    assert current is not None and current.hash == result.prep_hash
    assert current.path == f"prepared/{result.prep_hash}"
    assert current.counts["transcripts"] == 45
    corpus = load_current(filled)
    corpus.validate()
    assert corpus.n_docs == 45 and corpus.n_terms >= 50
    assert corpus.info["hash"] == result.prep_hash
    assert set(corpus.info["versions"]) == {"spacy", "spacy-lookups-data", "gensim", "faker"}
    assert result.summary == corpus.summary()
    # no leftovers of the temporary folder
    assert [p.name for p in filled.prepared_dir.iterdir()] == [result.prep_hash]


def test_second_run_is_cached(filled: Workspace):
    first = run_prepare(filled)
    stages: list[str] = []
    second = run_prepare(filled, progress=lambda done, total, what: stages.append(what))
    assert second.cached
    assert second.prep_hash == first.prep_hash
    assert stages == []  # nothing was read
    assert second.explain == first.explain
    forced = run_prepare(filled, force=True)
    assert not forced.cached and forced.prep_hash == first.prep_hash


def test_hash_follows_settings_and_transcripts(filled: Workspace):
    first = run_prepare(filled)
    set_prepare(filled, n_process=1, batch_size=7)  # speed only: same prep
    assert run_prepare(filled).cached
    set_prepare(filled, n_process=1, min_token_length=4)
    changed = run_prepare(filled)
    assert not changed.cached and changed.prep_hash != first.prep_hash
    add(filled, transcripts(1, seed=9, start=100))
    grown = run_prepare(filled)
    assert grown.prep_hash not in (first.prep_hash, changed.prep_hash)
    assert grown.summary["transcripts"] == 46
    # going back to earlier settings and data finds that prep again and makes it current
    set_prepare(filled, n_process=1, min_token_length=4)
    assert run_prepare(filled).prep_hash == grown.prep_hash


def test_prep_hash_covers_versions_and_ignores_speed_settings():
    s = PrepareSettings()
    v = {"spacy": "3.8.0", "spacy-lookups-data": "1.0.5", "gensim": "4.4.0"}
    base = compute_prep_hash(s, "abc", v)
    assert base == compute_prep_hash(s.model_copy(update={"n_process": 3}), "abc", v)
    assert base != compute_prep_hash(s, "abd", v)
    assert base != compute_prep_hash(s, "abc", {**v, "gensim": "4.4.1"})
    assert base != compute_prep_hash(s.model_copy(update={"lang": "de"}), "abc", v)
    assert len(base) == 16


def test_empty_store_is_not_ready(ws: Workspace):
    with pytest.raises(NotReadyError, match="ingest"):
        run_prepare(ws)
    with pytest.raises(NotReadyError, match="prepare"):
        load_current(ws)


def test_failed_run_leaves_the_previous_prep_current(filled: Workspace):
    first = run_prepare(filled)
    set_prepare(filled, n_process=1, vocab_min_docs=40)
    with pytest.raises(InputError, match="vocab_min_docs"):
        run_prepare(filled)
    with filled.store() as store:
        current = store.current_prep()
        assert current is not None and current.hash == first.prep_hash
    assert [p.name for p in filled.prepared_dir.iterdir()] == [first.prep_hash]


def test_explain_outputs(filled: Workspace):
    result = run_prepare(filled)
    rows = explain_rows(result.explain)
    assert [r["step"] for r in rows] == [
        "roles",
        "scrub",
        "names",
        "boilerplate",
        "lemmas",
        "filter",
        "phrases",
        "vocabulary",
        "min_tokens",
    ]
    assert all(set(r) == {"step", "removed", "emptied", "details"} for r in rows)
    doc = result.to_json()
    assert json.loads(json.dumps(doc)) == doc
    assert doc["prep"] == result.prep_hash and doc["cached"] is False
    out = io.StringIO()
    render_explain(Console(file=out, width=160), result)
    text = out.getvalue()
    assert "boilerplate sentences dropped" in text
    assert "thanks for calling how can i help you today" in text
    assert "45 used" in text


def test_saved_corpus_round_trips(filled: Workspace):
    result = run_prepare(filled)
    a = PreparedCorpus.load(result.path, mmap=True)
    b = PreparedCorpus.load(result.path, mmap=False)
    assert isinstance(a.tokens, np.memmap)
    assert np.array_equal(a.tokens, b.tokens)
    assert a.vocabulary == b.vocabulary and a.doc_ids == b.doc_ids
