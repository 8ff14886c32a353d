"""The viewer's data on the published demo workspace: readiness, sweep, transcripts."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.errors import InputError
from talkthemes.versions.load import load_version
from talkthemes.view.calls import calls_table
from talkthemes.view.choose_k import cell_themes, load_prep_vocabulary, load_sweep
from talkthemes.view.metadata import load_metadata
from talkthemes.view.readiness import readiness
from talkthemes.view.transcript import TermHighlighter, load_transcript


def test_readiness_of_the_demo_workspace(demo_ws) -> None:
    r = readiness(demo_ws.ws)
    assert r.has_workspace and r.transcripts == 402 and r.prepared
    assert r.sweep_scored and r.version == 1
    assert r.blocker("version") is None and r.blocker("sweep") is None and r.next_step is None


def test_load_sweep_and_cell_themes(demo_ws) -> None:
    sweep = load_sweep(demo_ws.ws)
    assert sweep.scored and sweep.families == ["nmf"] and sweep.ks("nmf") == [5, 8]
    assert len(sweep.cells) == 4 and {"c_npmi", "stability", "top_terms"} <= set(sweep.cells)
    with demo_ws.ws.store() as store:
        record = store.get_sweep()
    assert record is not None and record.recommendations is not None
    assert sweep.recommended == {"nmf": record.recommendations["nmf"]["k"]}
    cell = cell_themes(demo_ws.ws, sweep, "nmf", 8, n_terms=4)
    assert cell.k == 8 and cell.cell.startswith("nmf-k008-s") and len(cell.frame) == 8
    assert list(cell.frame["theme"]) == list(range(1, 9))
    vocab = set(load_prep_vocabulary(demo_ws.ws, sweep.prep_hash))
    for terms in cell.frame["terms"]:
        words = terms.split(", ")
        assert len(words) == 4 and all(w.replace(" ", "_") in vocab for w in words)
    topics = np.load(sweep.folder / "topics" / f"{cell.cell}.npy")
    top = np.argsort(-topics[0])[:4]
    assert cell.frame["terms"][0] == ", ".join(
        load_prep_vocabulary(demo_ws.ws, sweep.prep_hash)[i].replace("_", " ") for i in top
    )
    with pytest.raises(InputError, match="K=7"):
        cell_themes(demo_ws.ws, sweep, "nmf", 7)


def test_load_transcript(demo_ws) -> None:
    turns = load_transcript(demo_ws.ws, demo_ws.xss_id, TermHighlighter(["power"]))
    assert len(turns) == 7 and turns[0].speaker == "Customer" and turns[0].hits >= 2
    with pytest.raises(InputError, match="no transcript 'missing'"):
        load_transcript(demo_ws.ws, "missing", TermHighlighter([]))


def test_demo_version_round_trip(demo_ws) -> None:
    version = load_version(demo_ws.ws)
    meta = load_metadata(demo_ws.ws, version.doc_ids)
    assert len(meta.frame) == len(version.doc_ids) and meta.date_field == "date"
    assert set(meta.fields) == {"channel", "date", "duration_s", "queue", "site"}
    i = version.doc_ids.index(demo_ws.xss_id)
    assert meta.frame["site"][i].startswith("Site <img")
    total = sum(len(calls_table(version, meta, p)) for p in range(version.k))
    assert total == len(version.doc_ids)  # every transcript has exactly one lead theme


def test_counts_account_for_every_stored_transcript(demo_ws) -> None:
    from talkthemes.view.counts import call_counts, excluded_reasons

    version = load_version(demo_ws.ws)
    counts = call_counts(demo_ws.ws, version)
    with demo_ws.ws.store() as store:
        stored = store.count_transcripts()
    excluded = excluded_reasons(version.folder)
    assert counts.stored == stored and counts.shown == len(version.doc_ids)
    assert counts.shown + counts.n_unthemed + counts.n_left_out == stored
    assert counts.n_unthemed == len(excluded) > 0  # the demo has short calls
    assert counts.n_left_out == 0  # nothing ingested after the version
    assert f"{counts.n_unthemed:,} unthemed" in counts.sentence()


def test_best_sentences_hold_the_lead_themes_words_and_no_personal_data(demo_ws) -> None:
    from tests.viewer.conftest import PII, PII_ID

    from talkthemes.privacy import plain
    from talkthemes.view.evidence import EVIDENCE_TERMS, best_sentences
    from talkthemes.view.themes import shown_terms
    from talkthemes.view.transcript import TermHighlighter, version_lemmas

    version = load_version(demo_ws.ws)
    lead = version.lead()
    rows = [i for i in range(0, len(version.doc_ids), 9)] + [version.doc_ids.index(PII_ID)]
    ids = [version.doc_ids[i] for i in rows]
    picked = best_sentences(demo_ws.ws, version, ids, [int(lead[i]) for i in rows])
    assert sum(bool(s) for s in picked) >= 0.9 * len(picked)
    for i, sentence in zip(rows, picked, strict=True):
        if not sentence:
            continue
        terms = shown_terms(version, int(lead[i]), EVIDENCE_TERMS, 0.6)
        assert TermHighlighter(terms, lemmas=version_lemmas(version)).count(sentence) > 0
        assert plain(sentence) == sentence  # no placeholder left unrendered
    assert not [p for p in PII if p in picked[-1]]
