"""Tests of the planted-corpus generator (talkthemes.demo.planted)."""

from __future__ import annotations

import csv
import re
import statistics
from collections import Counter
from pathlib import Path
from random import Random

import pytest

from talkthemes.calls.model import normalised_hash
from talkthemes.demo import planted
from talkthemes.demo.planted import (
    MAX_REASONS,
    PlantedCall,
    PlantedSpec,
    compose,
    iter_planted_calls,
    load_bank,
    planted_reasons,
    read_truth,
    render_planted_txt,
    write_planted,
)
from talkthemes.errors import InputError
from talkthemes.ingest.run import ingest
from talkthemes.workspace import Workspace

GREETING = "ambry vale railways"
CLOSING = re.compile(r"is there anything else i can (help you with today|do for you)")
HOLD = re.compile(r"(put|pop) you on hold")
FILLER_START = re.compile(r"^(Um|Uh|So|Yeah|Right|Okay so|Well|I mean),")
WORD = re.compile(r"[a-z']+")


def _tree(root: Path) -> dict[str, bytes]:
    return {p.relative_to(root).as_posix(): p.read_bytes() for p in root.rglob("*") if p.is_file()}


@pytest.fixture(scope="module")
def calls() -> list[PlantedCall]:
    return list(iter_planted_calls(PlantedSpec(reasons=10, calls=1500, seed=3)))


# -- the phrase bank -----------------------------------------------------------------


def test_bank_has_enough_distinct_reasons_each_with_several_phrasings() -> None:
    reasons = load_bank()["reasons"]
    assert len(reasons) == MAX_REASONS >= 16
    assert len(set(r["label"] for r in reasons.values())) == len(reasons)
    for key, r in reasons.items():
        assert len(r["openings"]) >= 4 and len(r["second"]) >= 2, key
        assert len(r["details"]) >= 6 and len(r["explain"]) >= 6 and len(r["qa"]) >= 3, key
        assert r["related"] and set(r["related"]) <= set(reasons) - {key}, key
    assert list(planted_reasons(6)) == list(reasons)[:6]


def _words(reason: dict) -> set[str]:
    texts = [*reason["openings"], *reason["details"], *reason["explain"]]
    return {w for t in texts for w in WORD.findall(t.lower()) if len(w) >= 5}


def test_related_reasons_share_vocabulary_and_each_reason_has_its_own() -> None:
    reasons = load_bank()["reasons"]
    words = {key: _words(r) for key, r in reasons.items()}
    for key, r in reasons.items():
        shared = max(len(words[key] & words[other]) for other in r["related"])
        assert shared >= 2, (key, r["related"])
        others = set().union(*(words[k] for k in reasons if k != key))
        assert len(words[key] - others) >= 5, key  # words only this reason uses


def test_every_template_fills_and_has_no_colon() -> None:
    bank = load_bank()
    c = compose._Call(Random(0), PlantedSpec(), {"agent": "Maren", "customer": "Una"})

    def strings(value: object) -> list[str]:
        if isinstance(value, str):
            return [value]
        if isinstance(value, dict):
            return [s for v in value.values() for s in strings(v)]
        if isinstance(value, list):
            return [s for v in value for s in strings(v)]
        return []

    for reason in bank["reasons"].values():
        c.local = reason["slots"]
        for key in ("openings", "second", "details", "explain", "qa", "actions"):
            for template in strings(reason[key]):
                filled = c.fill(template)
                assert not re.search(r"[{}\[\]|]", filled), template
    c.local = bank["short_slots"]
    for template in strings([bank["short"], bank["scripts"], bank["chat"]]):
        if template == "{greeting}":  # the call's greeting script, not a slot
            continue
        assert not re.search(r"[{}\[\]|]", c.fill(template)), template
    for template in strings({k: v for k, v in bank.items() if k != "about"}):
        assert ":" not in template, template


# -- the calls -----------------------------------------------------------------------


def test_truth_is_consistent(calls: list[PlantedCall]) -> None:
    keys = set(planted_reasons(10))
    assert len(calls) == 1500 and len({c.call_id for c in calls}) == 1500
    assert [c.date for c in calls] == sorted(c.date for c in calls)
    for c in calls:
        if c.kind == "regular":
            assert c.reason in keys and c.detail == ""
            assert c.secondary == "" or (c.secondary in keys and c.secondary != c.reason)
        else:
            assert c.kind == "short" and c.reason == c.secondary == ""
            assert c.detail in planted.SHORT_KINDS
    assert {c.reason for c in calls if c.reason} == keys


def test_shares_follow_the_spec(calls: list[PlantedCall]) -> None:
    regular = [c for c in calls if c.kind == "regular"]
    assert 0.02 < (len(calls) - len(regular)) / len(calls) < 0.07  # short = 0.04
    assert 0.2 < sum(bool(c.secondary) for c in regular) / len(regular) < 0.3  # 0.25
    counts = Counter(c.reason for c in regular)
    order = list(planted_reasons(10))
    weights = [(i + 1) ** -0.3 for i in range(10)]
    for key, w in zip(order, weights, strict=True):
        expected = w / sum(weights) * len(regular)
        assert 0.7 * expected < counts[key] < 1.3 * expected, key
    related = sum(c.secondary in load_bank()["reasons"][c.reason]["related"] for c in regular
                  if c.secondary)  # fmt: skip
    assert related > 0.4 * sum(bool(c.secondary) for c in regular)


def test_short_calls_are_short_and_regular_calls_are_not(calls: list[PlantedCall]) -> None:
    short = [c for c in calls if c.kind == "short"]
    assert short and all(c.word_count < 60 and len(c.turns) <= 4 for c in short)
    assert {c.detail for c in short} == set(planted.SHORT_KINDS)
    words = [c.word_count for c in calls if c.kind == "regular"]
    assert 240 < statistics.median(words) < 380
    assert min(words) > 100


def test_boilerplate_and_fillers_are_present_and_can_be_switched_off(
    calls: list[PlantedCall],
) -> None:
    regular = [c for c in calls if c.kind == "regular"]
    assert all(GREETING in c.turns[0][1].lower() for c in regular)
    assert sum(bool(CLOSING.search(c.text.lower())) for c in regular) == len(regular)
    assert sum(bool(HOLD.search(c.text)) for c in regular) > 0.1 * len(regular)
    starts = [t for c in regular for role, t in c.turns if role == "customer"]
    assert sum(bool(FILLER_START.match(t)) for t in starts) > 0.2 * len(starts)

    plain = list(iter_planted_calls(PlantedSpec(calls=200, seed=1, boilerplate=False,
                                                fillers=0.0, short=0.0)))  # fmt: skip
    assert not any(GREETING in c.text.lower() or CLOSING.search(c.text.lower()) for c in plain)
    assert not any(HOLD.search(c.text) for c in plain)
    assert not any(
        FILLER_START.match(t) for c in plain for role, t in c.turns if role == "customer"
    )


def test_noise_adds_asr_like_errors() -> None:
    spec = PlantedSpec(calls=300, seed=2, short=0.0)
    clean = {w for c in iter_planted_calls(spec) for w in WORD.findall(c.text.lower())}
    noisy_calls = list(iter_planted_calls(PlantedSpec(calls=300, seed=2, short=0.0, noise=0.05)))
    noisy = Counter(w for c in noisy_calls for w in WORD.findall(c.text.lower()))
    new = {w for w in noisy if w not in clean}
    assert len(new) > 100  # transposed letters make words the clean bank never says
    doubled = sum(len(re.findall(r"\b(\w+) \1\b", c.text)) for c in noisy_calls)
    assert doubled > 50


def test_calls_are_unique_by_ingests_duplicate_test(calls: list[PlantedCall]) -> None:
    assert len({normalised_hash(c.text) for c in calls}) == len(calls)


def test_same_seed_same_calls_other_seed_differs() -> None:
    a = list(iter_planted_calls(PlantedSpec(calls=50, seed=4)))
    b = list(iter_planted_calls(PlantedSpec(calls=50, seed=4)))
    c = list(iter_planted_calls(PlantedSpec(calls=50, seed=5)))
    assert a == b and a != c


def test_bad_specs_are_refused() -> None:
    for kwargs in ({"reasons": 1}, {"reasons": MAX_REASONS + 1}, {"calls": 0},
                   {"secondary": 1.5}, {"short": -0.1}, {"noise": 2.0}, {"words": 10}):  # fmt: skip
        with pytest.raises(InputError):
            PlantedSpec(**kwargs)


# -- files ---------------------------------------------------------------------------


def test_files_ingest_whole_with_dates(tmp_path: Path) -> None:
    spec = PlantedSpec(reasons=6, calls=120, seed=8)
    files = write_planted(tmp_path / "out", spec)
    truth = read_truth(files.truth)
    with files.manifest.open(encoding="utf-8", newline="") as fh:
        manifest = list(csv.DictReader(fh))
    txt = sorted(p.stem for p in (files.exports / "calls").glob("*.txt"))
    assert [r["call_id"] for r in truth] == [r["call_id"] for r in manifest] == txt
    assert [r["date"] for r in truth] == [r["date"] for r in manifest]
    assert sum(files.counts.values()) == 120 and files.counts["short"] == sum(
        not r["reason"] for r in truth
    )
    assert files.exports not in files.truth.parents
    first = (files.exports / "calls" / f"{txt[0]}.txt").read_text(encoding="utf-8")
    assert all(re.match(r"(Agent|Customer): \S", line) for line in first.splitlines())

    ws = Workspace(tmp_path / "ws")
    ws.init()
    with ws.lock("test"):
        report = ingest(ws, [files.exports], manifests=[files.manifest])
    assert report.total("added") == 120 and not report.rejects
    assert report.manifest_rows == 120


def test_writing_is_deterministic_and_keeps_foreign_folders(tmp_path: Path) -> None:
    spec = PlantedSpec(calls=40, seed=6)
    a = _tree(write_planted(tmp_path / "a", spec).root)
    b = _tree(write_planted(tmp_path / "b", spec).root)
    assert a == b
    again = _tree(write_planted(tmp_path / "a", spec).root)  # earlier output is replaced
    assert again == a
    foreign = tmp_path / "mine"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("keep me", encoding="utf-8")
    with pytest.raises(InputError, match="mine"):
        write_planted(foreign, spec)
    assert (foreign / "notes.txt").read_text(encoding="utf-8") == "keep me"


def test_render_round_trips_the_turns() -> None:
    call = next(iter_planted_calls(PlantedSpec(calls=1, seed=0, short=0.0)))
    lines = render_planted_txt(call).splitlines()
    assert [(line.split(": ", 1)[0].lower(), line.split(": ", 1)[1]) for line in lines] == list(
        call.turns
    )
