"""A frozen prep (new text prepared like a version's corpus) applies phrases as the chain does."""

from __future__ import annotations

from talkthemes.config import PrepareSettings
from talkthemes.prepare.frozen import PrepApplier, PrepSpec

VOCABULARY = ["late_fee", "late", "fee", "smart_meter", "smart", "meter", "charge"]


def _spec(chain_version: str | None) -> PrepSpec:
    info = {
        "hash": "h",
        "settings": PrepareSettings(boilerplate_min_share=0.0).model_dump(),
        "phrases": [["late_fee", 0.8], ["smart_meter", 0.9]],
        "boilerplate": [],
    }
    if chain_version is not None:
        info["chain_version"] = chain_version
    return PrepSpec.from_prep_info(info, VOCABULARY)


def _terms(applier: PrepApplier, text: str) -> list[str]:
    out = applier.apply([("a", [("customer", text)])])
    return [VOCABULARY[t] for t in out.tokens.tolist() if t >= 0]


TEXT = "The late, um, fee. Late and the fee. Smart 12345678 meter, smart meter charges."


def test_phrases_join_only_adjacent_words():
    applier = PrepApplier(_spec("2"))
    assert applier.spec.adjacent_phrases
    # a filler does not part "late" and "fee"; a stop word and a scrubbed number do
    assert _terms(applier, TEXT) == [
        "late_fee", "late", "fee", "smart", "meter", "smart_meter", "charge",
    ]  # fmt: skip


def test_a_version_made_by_chain_version_1_joins_as_it_did():
    legacy = PrepApplier(_spec(None))
    assert legacy.spec.chain_version == "1" and not legacy.spec.adjacent_phrases
    # version 1 joined any two kept words next to each other in a sentence
    assert _terms(legacy, TEXT) == ["late_fee", "late_fee", "smart_meter", "smart_meter", "charge"]
