"""The names step: people's names never reach the vocabulary; ordinary words stay.

Planted calls (invented): agents named in their speaker labels and greetings, callers
naming themselves when asked and being thanked by name, and the ordinary words that are also
first names (bill, will, grace, mark, june) used as words in many calls.
"""

from __future__ import annotations

import io
import json
import random
from pathlib import Path

import numpy as np
import pytest
from rich.console import Console
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.cli._explain import explain_rows, render_explain
from talkthemes.config import PrepareSettings
from talkthemes.demo.calls import iter_demo_calls
from talkthemes.demo.scenario import load_scenario
from talkthemes.prepare.chain import build_processor, prepare_corpus
from talkthemes.prepare.corpus import OOV
from talkthemes.prepare.frozen import PrepApplier, PrepSpec
from talkthemes.prepare.names import NameLexicon, label_names
from talkthemes.prepare.names_corpus import name_hash
from talkthemes.prepare.run import PrepareResult
from talkthemes.privacy import Masker, plain
from talkthemes.versions.fit import prep_record

# Quillon, Vessaly, Orlith, Tamzen: invented, in no first-name list; Priya, Dana: in the
# list; Grace, Bill, Mark: in the list and ordinary words.
AGENTS = ["Quillon", "Priya", "Grace", "Vessaly"]
CALLERS = ["Dana", "Bill", "Mark", "Orlith", "Tamzen"]
PLANTED = {n.lower() for n in AGENTS + CALLERS} - {"grace", "bill", "mark"}
TOPICS = [
    "invoice refund payment balance statement overdraft credit discount tariff receipt",
    "outage cable transformer storm engineer voltage fuse substation blackout generator",
    "tenancy landlord removal postcode tenant lease furniture apartment garage neighbour",
    "leak pipe pressure sewer drain valve plumber boiler radiator flood",
]
ORDINARY = [
    "the bill came in June and it was high",
    "there is a grace period on the bill",
    "I will mark the meter reading in June",
    "can you mark the grace period on my bill",
]


def make_call(rng: random.Random, i: int) -> tuple[str, list[tuple[str, str, str]]]:
    """One planted call: ``(id, [(role, text, speaker label), ...])``."""
    agent, caller = AGENTS[i % len(AGENTS)], CALLERS[i % len(CALLERS)]
    label = [f"Agent ({agent})", agent, f"Agent {agent}"][i % 3]
    words = TOPICS[i % len(TOPICS)].split()
    turns = [
        ("agent", f"Good morning, Brindle Utilities, this is {agent} speaking. How can I help?"),
        ("customer", f"Hi {agent}. The {words[0]} and the {words[1]} {words[2]}."),
        ("agent", "Can I take your name, please?"),
        ("customer", [f"Um, it's {caller}.", f"{caller}.", f"My name's {caller}."][i % 3]),
        ("agent", f"Thanks, {caller}. So the {words[3]} and {words[4]}, right, {caller}?"),
        ("customer", f"Yes, the {words[5]} {words[6]} and the {rng.choice(words)} {words[7]}."),
        ("customer", ORDINARY[i % len(ORDINARY)] + "."),
        ("agent", f"Thank you, {caller}. The {words[8]} {words[9]} then."),
        ("customer", f"Thanks {agent}, bye."),
    ]
    return f"call-{i:03d}", [
        (role, text, label if role == "agent" else "Customer") for role, text in turns
    ]


def make_corpus(n: int = 80, *, lower: bool = False) -> list:
    rng = random.Random(5)
    calls = [make_call(rng, i) for i in range(n)]
    if lower:  # as many speech recognisers write: no capitals (speaker labels as they are)
        calls = [(tid, [(r, t.lower(), s) for r, t, s in turns]) for tid, turns in calls]
    return calls


def source_of(data, batch_size: int = 16):
    def source():
        for i in range(0, len(data), batch_size):
            yield data[i : i + batch_size]

    return source


SETTINGS = PrepareSettings(
    vocab_min_docs=3,
    vocab_max_doc_share=0.9,
    phrase_min_count=5,
    min_tokens=5,
    n_process=1,
    boilerplate_min_share=0,
)


def _prepare(data, **settings):
    return prepare_corpus(
        source_of(data), SETTINGS.model_copy(update=settings), total=len(data), min_terms=20
    )


def _parts(term: str) -> set[str]:
    return set(term.split("_"))


@pytest.fixture(scope="module")
def cased():
    data = make_corpus()
    return data, *_prepare(data)


@pytest.fixture(scope="module")
def lowered():
    data = make_corpus(lower=True)
    return data, *_prepare(data)


def test_without_the_step_the_names_reach_the_vocabulary():
    corpus, _ = _prepare(make_corpus(), drop_names=False)
    found = {p for t in corpus.vocabulary for p in _parts(t)} & PLANTED
    assert found == PLANTED  # the planted calls do carry the problem


@pytest.mark.parametrize("which", ["cased", "lowered"])
def test_no_planted_name_reaches_the_vocabulary(which, request):
    _, corpus, explain = request.getfixturevalue(which)[:3]
    parts = {p for t in corpus.vocabulary for p in _parts(t)}
    assert not parts & PLANTED
    # the ordinary words stay, in lower-case text too
    assert {"bill", "grace", "mark", "june", "period"} <= parts
    assert explain["names"]["tokens_removed"] > 0


def test_names_leave_their_ordinary_uses_alone(cased):
    data, corpus, explain = cased
    # in Grace's and Bill's calls, only the lower-case uses of grace and bill are left
    vocab = corpus.vocabulary
    for d, tid in enumerate(corpus.doc_ids):
        turns = dict(data)[tid]
        text = " ".join(t for _, t, _ in turns)
        tokens = [vocab[t] for t in corpus.doc_tokens(d).tolist() if t != OOV]
        for word in ("grace", "bill", "mark"):
            said = sum(w.strip(".,?") == word for w in text.split())
            assert tokens.count(word) + sum(word in t.split("_") for t in tokens if "_" in t) == (
                said
            ), (tid, word)
    assert {"grace", "bill", "mark"} <= {o["word"] for o in explain["names"]["ordinary"]}
    assert "will" not in {t["name"] for t in explain["names"]["top"]}


def test_every_way_of_finding_a_name_is_counted(cased):
    _, _, explain = cased
    names = explain["names"]
    removed = names["removed"]
    assert removed["cue"] > 0 and removed["known"] > 0
    assert names["tokens_removed"] == sum(removed.values())
    assert {t["name"] for t in names["top"]} >= PLANTED | {"grace", "bill", "mark"}
    assert names["named"] >= len(PLANTED)


def test_lower_case_text_keeps_ordinary_words_named_only_at_cues(lowered):
    data, corpus, explain = lowered
    # call-002: agent Grace. "this is grace speaking" is a cue: removed; "hi grace" and
    # "thanks grace" cannot be told from the word in lower case, and the corpus uses
    # "grace" as a word ("grace period"), so they stay. Dana's name goes everywhere.
    tokens = {
        tid: [corpus.vocabulary[t] for t in corpus.doc_tokens(d).tolist() if t != OOV]
        for d, tid in enumerate(corpus.doc_ids)
    }
    text = " ".join(t for _, t, _ in dict(data)["call-002"])
    assert text.count("grace") == 3 and tokens["call-002"].count("grace") == 2
    assert "dana" in " ".join(t for _, t, _ in dict(data)["call-000"])
    assert not any("dana" in _parts(t) for ts in tokens.values() for t in ts)
    kept = {k["word"]: k["transcripts"] for k in explain["names"]["kept_as_words"]}
    assert set(kept) == {"bill", "grace", "mark"} and min(kept.values()) >= 3


def test_a_removed_name_parts_its_neighbours():
    data = [
        (f"c{i}", [("customer", "The late fee. The late Priya fee again. A late fee.", "")])
        for i in range(30)
    ]
    data += [(f"d{i}", [("customer", TOPICS[i % 4], "")]) for i in range(30)]
    corpus, explain = _prepare(data, phrase_min_count=2, vocab_min_docs=2)
    assert "priya" not in corpus.vocabulary
    joined = {p["phrase"]: p["count"] for p in explain["phrases"]["top"]}
    assert joined.get("late_fee") == 60  # twice per call, never across the name


def test_label_names():
    lex = NameLexicon.build("en")
    assert label_names("Agent (Priya)", lex) == {"priya"}
    assert label_names("Quillon", lex) == {"quillon"}
    assert label_names("Agent Grace", lex) == {"grace"}  # an ordinary word, but a first name
    assert label_names("Customer Service", lex) == frozenset()
    assert label_names("Agent 2", lex) == label_names("CALLER", lex) == frozenset()


def test_not_names_keeps_a_word():
    corpus, _ = _prepare(make_corpus(), not_names=["Dana"])
    assert "dana" in corpus.vocabulary


def test_the_spacy_pipeline_path_removes_names_too(tagged_pipeline: Path):
    settings = SETTINGS.model_copy(update={"pipeline": str(tagged_pipeline), "pos_keep": []})
    enc = build_processor(settings).encoder
    text = "Hi, this is Priya speaking. My name's Orlith. The bill, Orlith. Thanks Priya, bye."
    assert enc.kept(text) == ["speak", "bill"]
    assert build_processor(settings.model_copy(update={"drop_names": False})).encoder.kept(
        text
    ) == ["priya", "speak", "orlith", "bill", "orlith", "priya"]


@pytest.fixture(scope="module")
def tagged_pipeline(tmp_path_factory) -> Path:
    """A blank English pipeline with lookup lemmas, saved as a pipeline folder."""
    import spacy

    nlp = spacy.blank("en")
    nlp.add_pipe("lemmatizer", config={"mode": "lookup"}).initialize()
    folder = tmp_path_factory.mktemp("pipeline") / "blank_en"
    nlp.to_disk(folder)
    return folder


def test_a_frozen_prep_removes_names_as_the_prep_did(cased):
    data, corpus, _ = cased
    # what a published version keeps of its prep (versions/<n>/prep.json), on its own
    info = {**prep_record(corpus), "settings": SETTINGS.model_dump(), "chain_version": "3"}
    applier = PrepApplier(PrepSpec.from_prep_info(info, corpus.vocabulary))
    applied = applier.apply_all(source_of(data, 32)())
    rows = [applied.doc_ids.index(t) for t in corpus.doc_ids]
    assert (applied.counts[rows] != corpus.counts).nnz == 0
    # what the prep saved: the names as hashes, never as words
    saved = json.dumps(corpus.info["names"])
    assert name_hash("dana") in corpus.info["names"]["named"] and "dana" not in saved
    # a new call: a name of the version's corpus, capitalised, is removed; new names too
    new = applier.apply([("n", [("customer", "The bill, Dana. Orlith and Zephrine.", "")])])
    assert [corpus.vocabulary[t] for t in new.tokens.tolist() if t >= 0] == ["bill"]


def test_a_version_made_before_the_step_keeps_its_names():
    vocabulary = ["priya", "bill"]
    info = {"hash": "h", "settings": PrepareSettings().model_dump(), "chain_version": "2"}
    applier = PrepApplier(PrepSpec.from_prep_info(info, vocabulary))
    assert not applier.spec.drops_names
    out = applier.apply([("a", [("customer", "Priya sent the bill.", "Agent (Priya)")])])
    assert [vocabulary[t] for t in out.tokens.tolist() if t >= 0] == ["priya", "bill"]


def test_explain_masks_names_unless_allowed(cased):
    explain = cased[2]
    row = next(r for r in explain_rows(explain) if r["step"] == "names")
    assert row["removed"] == f"{explain['names']['tokens_removed']:,} tokens"
    assert "names" in row["details"] and "at cues" in row["details"]
    result = PrepareResult("h", Path("p"), {}, False, explain)
    masked = io.StringIO()
    render_explain(Console(file=masked, width=200), result)
    shown = io.StringIO()
    render_explain(Console(file=shown, width=200), result, original_text=True)
    # masked as the screens mask a name (talkthemes.privacy): one rule for both
    assert plain(Masker(["Quillon"]).mask("Quillon")) == "[name]"
    top = explain["names"]["top"]
    assert masked.getvalue().count("[name]") == len(top) > 0
    for name in PLANTED:
        assert name not in masked.getvalue().lower().split()
        assert name in shown.getvalue()
    assert "grace" in masked.getvalue()  # kept as an ordinary word: not personal
    dumped = json.dumps(result.to_json())
    assert not any(f'"{n}"' in dumped for n in PLANTED)
    assert [t["name"] for t in result.to_json()["explain"]["names"]["top"]] == ["[name]"] * len(top)
    assert '"dana"' in json.dumps(result.to_json(original_text=True))


def test_no_names_step_when_off():
    corpus, explain = _prepare(make_corpus(), drop_names=False)
    assert explain["names"]["enabled"] is False
    row = next(r for r in explain_rows(explain) if r["step"] == "names")
    assert row["details"] == "off"
    assert np.all(corpus.counts.data > 0)


# -- the invented demo corpus --------------------------------------------------------------
def _demo(n: int, **settings) -> tuple[set[str], list[str]]:
    """The scenario's agent and caller first names, and the vocabulary of ``n`` demo calls."""
    scenario = load_scenario()
    people = {p.lower() for site in scenario["sites"].values() for p in site}
    people |= {p.lower() for p in scenario["customers"]}
    calls = [
        (c.call_id, [(t.role, t.text, t.speaker) for t in c.turns])
        for c in iter_demo_calls(n, seed=7)
    ]
    corpus, _ = prepare_corpus(
        source_of(calls, 500), PrepareSettings(n_process=1, **settings), total=len(calls)
    )
    return people, corpus.vocabulary


def _named_terms(people: set[str], vocabulary: list[str]) -> list[str]:
    return [t for t in vocabulary if _parts(t) & people]


def test_no_agent_or_caller_name_in_a_small_demo_vocabulary():
    people, before = _demo(300, drop_names=False)
    assert len(_named_terms(people, before)) >= 20  # agents' names, "rafael_speak", ...
    people, after = _demo(300)
    assert _named_terms(people, after) == []
    assert len(set(before) - set(after)) >= 20


@pytest.mark.slow
def test_no_agent_or_caller_name_in_the_demo_vocabulary_at_1500_calls():
    people, vocabulary = _demo(1500)
    assert len(people) == 116
    assert _named_terms(people, vocabulary) == []
    # the ordinary words that are also first names stay
    assert {"line", "link", "mark", "june", "price", "summer"} <= set(vocabulary)


def test_the_cli_masks_removed_names_unless_the_workspace_allows(tmp_path: Path):
    calls = tmp_path / "calls"
    calls.mkdir()
    # more topic words, so the prep has the terms it needs
    extra = " ".join([*TOPICS, "meter reading estimate photo digits register submit actual"])
    extra = extra.split()
    for i, (tid, turns) in enumerate(make_corpus(60)):
        lines = [f"{label}: {text}" for _role, text, label in turns]
        words = [extra[(5 * i + j) % len(extra)] for j in range(15)]
        lines.append("Customer: and the " + " and the ".join(words) + ".")
        (calls / f"{tid}.txt").write_text("\n".join(lines) + "\n", encoding="utf-8")
    ws = tmp_path / "ws"
    cli = CliRunner()
    res = cli.invoke(app, ["ingest", str(calls), "--create", "-w", str(ws), "--json"])
    assert res.exit_code == 0, res.stderr
    toml = ws / "talkthemes.toml"
    prepare = "[prepare]\nvocab_min_docs = 3\nvocab_max_doc_share = 0.9\nn_process = 1\n"
    toml.write_text(prepare, encoding="utf-8")

    res = cli.invoke(app, ["prepare", "-w", str(ws), "--json"])
    assert res.exit_code == 0, res.stderr
    top = json.loads(res.stdout)["explain"]["names"]["top"]
    assert top and {t["name"] for t in top} == {"[name]"}
    assert not any(n in res.stdout.lower() for n in ("quillon", "vessaly", "orlith"))
    # the agents' greetings are boilerplate: their names are masked in those sentences too
    said = [b["sentence"] for b in json.loads(res.stdout)["explain"]["boilerplate"]["sentences"]]
    assert "good morning brindle utilities this is [name] speaking" in said
    res = cli.invoke(app, ["prepare", "--explain", "-w", str(ws)])
    assert res.exit_code == 0 and "[name]" in res.stdout and "quillon" not in res.stdout.lower()

    toml.write_text(prepare + "[view]\noriginal_text = true\n", encoding="utf-8")
    res = cli.invoke(app, ["prepare", "-w", str(ws), "--json"])
    doc = json.loads(res.stdout)["explain"]
    assert {"quillon", "orlith"} <= {t["name"] for t in doc["names"]["top"]}
    said = [b["sentence"] for b in doc["boilerplate"]["sentences"]]
    assert "good morning brindle utilities this is quillon speaking" in said
    assert "quillon" in doc["names"]["in_boilerplate"]
