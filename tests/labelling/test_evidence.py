"""Evidence sentences: from the calls a theme leads, holding its top terms, never
boilerplate, scrubbed, customers first, diverse (maximal marginal relevance)."""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
import scipy.sparse as sp
from tests.labelling.conftest import BOILERPLATE, EMAIL, GREETING, PHONE, Planted

from talkthemes.errors import InputError
from talkthemes.metrics.relevance import top_relevant_terms
from talkthemes.prepare.chain import normalised_sentence
from talkthemes.prepare.frozen import PrepApplier, load_prep_spec
from talkthemes.versions.evidence import EVIDENCE_FILE, MAX_SENTENCES, TOP_TERMS
from talkthemes.versions.evidence_build import mmr_select, spoken_sentences
from talkthemes.versions.load import load_version
from talkthemes.workspace import Workspace


# -- pure parts ------------------------------------------------------------------------------
def test_spoken_sentences_keep_their_marks_and_cut_where_the_chain_cuts() -> None:
    text = "I paid $19.44 twice. Why?! The meter…\nIt reads 7"
    assert spoken_sentences(text) == ["I paid $19.44 twice.", "Why?!", "The meter…", "It reads 7"]
    long = " ".join(f"w{i}" for i in range(90)) + "."
    parts = spoken_sentences(long, max_words=40)
    assert len(parts) == 3
    assert parts[0].endswith(" …") and parts[1].startswith("… ") and parts[2].endswith("w89.")
    assert [len(re.findall(r"\w+", p)) for p in parts] == [40, 40, 10]


def test_mmr_prefers_something_new_over_a_near_repeat() -> None:
    # items 0 and 1 say the same thing; item 2 says something else, a little less relevant
    vectors = sp.csr_matrix(np.array([[1, 1, 0, 0], [1, 1, 0, 0], [0, 0, 1, 1]], dtype=float))
    scores = np.array([1.0, 0.99, 0.7])
    groups, tiers = np.arange(3), np.zeros(3, dtype=int)
    assert mmr_select(scores, vectors, groups, tiers, 2, lam=0.5) == [0, 2]
    assert mmr_select(scores, vectors, groups, tiers, 2, lam=1.0) == [0, 1]  # score alone


def test_mmr_takes_one_item_per_group_and_lower_tiers_first() -> None:
    vectors = sp.identity(4, format="csr")
    scores = np.array([0.2, 1.0, 0.9, 0.8])
    # items 1 and 2 are from the same call; item 1 is an agent's (tier 2)
    picked = mmr_select(scores, vectors, np.array([0, 1, 1, 2]), np.array([0, 2, 0, 0]), 4)
    assert picked == [2, 3, 0]  # customers first; item 1 shares item 2's call
    with pytest.raises(InputError, match="3 groups"):
        mmr_select(scores, vectors, np.arange(3), np.zeros(4), 2)


# -- a planted corpus ------------------------------------------------------------------------
@pytest.fixture(scope="module")
def planted(planted_root: Planted) -> tuple[Workspace, Planted]:
    return Workspace(planted_root.root), planted_root


def test_evidence_sentences_come_from_the_themes_own_calls_and_hold_its_top_terms(
    planted: tuple[Workspace, Planted],
) -> None:
    ws, truth = planted
    v = load_version(ws)
    assert (v.folder / EVIDENCE_FILE).is_file() and v.evidence_stored()
    lead = v.lead()
    top = top_relevant_terms(v.topic_terms, v.term_marginal(), 0.6, TOP_TERMS)
    applier = PrepApplier(load_prep_spec(ws, v))
    reasons = set()
    for k in range(v.k):
        sentences = v.evidence(k)
        assert 5 <= len(sentences) <= MAX_SENTENCES
        calls = [s.call_id for s in sentences]
        assert len(set(calls)) == len(calls)  # no two from the same call
        assert all(lead[v.doc_ids.index(c)] == k for c in calls)  # calls it leads
        reason = {c.split("-")[1] for c in calls}
        assert len(reason) == 1  # the planted reason of the theme's calls
        assert set(calls) <= set(truth.calls[next(iter(reason))])
        reasons |= reason
        top_words = {v.vocabulary[j] for j in top[k]}
        for s in sentences:
            assert s.terms and set(s.terms) <= top_words  # it holds the theme's top terms
            # ... and they are the sentence's own prepared terms
            counts = applier.apply([("s", [(s.role, s.text)])]).counts
            held = {v.vocabulary[j] for j in counts.indices}
            assert set(s.terms) <= held
            assert s.role == "customer"  # enough customer sentences: no agent's needed
        assert [s.share for s in sentences] == [
            pytest.approx(float(v.doc_topics[v.doc_ids.index(c), k]), abs=1e-5) for c in calls
        ]
    assert reasons == {"meter", "refund"}


def test_evidence_sentences_are_never_boilerplate_and_never_show_personal_data(
    planted: tuple[Workspace, Planted],
) -> None:
    ws, _ = planted
    v = load_version(ws)
    boilerplate = set(load_prep_spec(ws, v).boilerplate)
    # the planted script sentences were found to be boilerplate by the prep ...
    assert normalised_sentence(BOILERPLATE, "en") in boilerplate
    assert normalised_sentence(GREETING, "en") in boilerplate
    doc = json.loads((v.folder / EVIDENCE_FILE).read_text(encoding="utf-8"))
    texts = [s["text"] for t in doc["themes"] for s in t["sentences"]]
    assert texts
    for text in texts:  # ... and none is evidence, though it holds both themes' words
        assert normalised_sentence(text, "en") not in boilerplate
    shown = "\n".join(texts)
    assert EMAIL not in shown and "7946" not in shown and PHONE not in shown
    scrubbed = [t for t in texts if "photo to" in t]
    assert all("[…]" in t for t in scrubbed)  # where the address was, a mark


def test_a_version_without_stored_evidence_says_so(planted_root: Planted, tmp_path) -> None:
    from tests.labelling.conftest import copy_planted

    ws = copy_planted(planted_root, tmp_path / "ws")
    v = load_version(ws)
    (v.folder / EVIDENCE_FILE).unlink()
    v = load_version(ws)
    assert not v.evidence_stored() and v.evidence(0) == []


def test_themes_prints_the_stored_evidence(planted: tuple[Workspace, Planted]) -> None:
    from typer.testing import CliRunner

    from talkthemes import cli

    ws, _ = planted
    v = load_version(ws)
    res = CliRunner().invoke(cli.app, ["themes", "--json", "-w", str(ws.root)])
    assert res.exit_code == 0, res.stderr
    doc = json.loads(res.stdout)
    for i, t in enumerate(doc["themes"]):
        assert [e["text"] for e in t["evidence"]] == [s.text for s in v.evidence(i)]
        assert t["suggested_name"] == v.suggested_names()[i]
    res = CliRunner().invoke(cli.app, ["themes", "--evidence", "2", "-w", str(ws.root)])
    assert res.exit_code == 0
    first = v.evidence(0)[0]
    flat = " ".join(res.stdout.split())
    assert f"“{first.text}”" in flat and f"call {first.call_id}, customer" in flat


def test_sentences_are_scrubbed_even_when_the_prep_does_not_scrub(
    planted: tuple[Workspace, Planted],
) -> None:
    import dataclasses

    from talkthemes.versions.evidence_build import build_evidence

    ws, _ = planted
    v = load_version(ws)
    spec = load_prep_spec(ws, v)
    spec = dataclasses.replace(spec, settings=spec.settings.model_copy(update={"scrub": False}))

    def turns_of(ids):
        with ws.store() as store:
            calls = store.turns_for(ids)
        mail = "write to jo.doe@example.org"
        return [(t, [(r, f"{x[:-1]} {mail}{x[-1]}") for r, x in turns]) for t, turns in calls]

    chosen = build_evidence(
        turns_of, spec, v.topic_terms, v.doc_topics, v.doc_ids, v.term_marginal()
    )
    texts = [s.text for ss in chosen for s in ss]
    assert texts and all("jo.doe" not in t and "[…]" in t for t in texts)


def test_the_calls_list_quotes_a_calls_stored_sentence(planted: tuple[Workspace, Planted]) -> None:
    """A call with a stored evidence sentence for the theme shows that sentence in the Calls
    list (masked, the chain's "[…]" kept); the other calls get one picked on the fly."""
    from talkthemes.view.evidence import best_sentences

    ws, _ = planted
    v = load_version(ws)
    stored = v.evidence(0)
    lead = v.lead()
    others = [d for d in v.doc_ids if d not in {s.call_id for s in stored}]
    other = next(d for d in others if lead[v.doc_ids.index(d)] == 0)
    ids = [s.call_id for s in stored] + [other]
    picked = best_sentences(ws, v, ids, [0] * len(ids))
    assert picked[:-1] == [s.text for s in stored]
    assert any("[…]" in s.text for s in stored)  # the planted e-mail, removed when stored
    assert picked[-1] and picked[-1] not in {s.text for s in stored}
