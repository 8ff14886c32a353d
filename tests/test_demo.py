"""Tests of the invented demo scenario generator (talkthemes.demo)."""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import json
import re
import statistics
from collections import Counter
from pathlib import Path
from random import Random

import pytest

from talkthemes.calls.model import normalised_hash
from talkthemes.config import IngestSettings
from talkthemes.demo import builder, scenario, slots, writer
from talkthemes.demo.calls import iter_demo_calls
from talkthemes.demo.records import DemoCall, DemoFiles
from talkthemes.demo.render import render_txt, render_vtt
from talkthemes.demo.scenario import (
    FIRST_DAY,
    LAST_DAY,
    PRICE_CHANGE_MONTH,
    REASONS,
    STORM_WEEK,
    demo_reasons,
)
from talkthemes.demo.writer import write_demo
from talkthemes.errors import InputError

SAMPLE = Path(__file__).resolve().parents[1] / "corpora" / "demo" / "sample"
CARD = re.compile(r"\b(?:\d{4} \d{4} \d{4} \d{4}|\d{16})\b")
EMAIL_DOMAIN = re.compile(r"@([\w-]+(?:\.[\w-]+)+)")
TXT_LINE = re.compile(r"^(?:\[\d\d:\d\d:\d\d\] |\d\d:\d\d:\d\d )?([^:]+): \S")


def _luhn_ok(number: str) -> bool:
    """Independent Luhn check: double every second digit from the right."""
    digits = [int(c) for c in number][::-1]
    total = sum(d if i % 2 == 0 else (2 * d - 9 if d > 4 else 2 * d) for i, d in enumerate(digits))
    return total % 10 == 0


def _tree(root: Path) -> dict[str, bytes]:
    return {p.relative_to(root).as_posix(): p.read_bytes() for p in root.rglob("*") if p.is_file()}


def _read_csv(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def _month(call: DemoCall) -> str:
    return call.date.strftime("%Y-%m")


def _in_storm(day: dt.date) -> bool:
    return STORM_WEEK[0] <= day <= STORM_WEEK[1]


@pytest.fixture(scope="module")
def calls() -> list[DemoCall]:
    return list(iter_demo_calls(2000, seed=11))


@pytest.fixture(scope="module")
def written(tmp_path_factory: pytest.TempPathFactory) -> DemoFiles:
    return write_demo(tmp_path_factory.mktemp("demo") / "out", size=300, seed=5)


# -- determinism -----------------------------------------------------------------------


def test_same_seed_gives_identical_bytes_and_other_seed_differs(tmp_path: Path) -> None:
    a = _tree(write_demo(tmp_path / "a", size=60, seed=3).root)
    b = _tree(write_demo(tmp_path / "b", size=60, seed=3).root)
    c = _tree(write_demo(tmp_path / "c", size=60, seed=4).root)
    assert a == b
    assert a["truth.csv"] != c["truth.csv"]
    assert set(a) != set(c) or any(a[k] != c[k] for k in a)


#: SHA-256 over (relative path, bytes) of every file ``write_demo(size=200, seed=9,
#: hold_back_last_month=True)`` writes, recorded from the single-module generator before it
#: was split into the ``demo`` package. Change it only when the scenario changes on purpose.
TREE_SHA256_200_9_HELD = "d73431079583271539af81aa2c76144fff3107b89677ff249d545bac6071a296"


def _tree_sha256(root: Path) -> str:
    digest = hashlib.sha256()
    for path in sorted(root.rglob("*")):
        if path.is_file():
            digest.update(path.relative_to(root).as_posix().encode() + b"\0")
            digest.update(path.read_bytes())
    return digest.hexdigest()


def test_output_is_byte_identical_to_the_recorded_generator(tmp_path: Path) -> None:
    files = write_demo(tmp_path / "out", size=200, seed=9, hold_back_last_month=True)
    assert files.turns is not None and files.inbox is not None  # every writer path is covered
    assert _tree_sha256(files.root) == TREE_SHA256_200_9_HELD


def test_committed_sample_matches_the_generator(tmp_path: Path) -> None:
    fresh = _tree(write_demo(tmp_path / "sample", size=40, seed=7).root)
    committed = _tree(SAMPLE)
    assert sorted(committed) == sorted(fresh), "regenerate corpora/demo/sample (see README)"
    changed = [name for name in fresh if fresh[name] != committed[name]]
    assert not changed, f"stale sample files: {changed[:5]} (regenerate, see README)"


# -- the scenario's shape --------------------------------------------------------------


def test_reason_frequencies_follow_the_scenario(calls: list[DemoCall]) -> None:
    weights = {k: v["weight"] for k, v in scenario.load_scenario()["reasons"].items()}
    normal = [
        c for c in calls if c.kind == "regular" and _month(c) not in (PRICE_CHANGE_MONTH,)
        and not _in_storm(c.date) and c.date.month in (5, 9)
    ]  # fmt: skip
    counts = Counter(c.reasons[0] for c in normal)
    for key in REASONS:
        expected = weights[key] * len(normal)
        if key == "price_change":
            assert counts[key] == 0
        else:
            assert 0.5 * expected <= counts[key] <= 1.6 * expected, (key, counts[key], expected)
    every = Counter(r for c in calls for r in c.reasons)
    assert set(every) == set(REASONS)


def test_price_change_only_in_last_month(calls: list[DemoCall]) -> None:
    with_price = [c for c in calls if "price_change" in c.reasons]
    assert with_price
    assert {_month(c) for c in with_price} == {PRICE_CHANGE_MONTH}
    october = [c for c in calls if _month(c) == PRICE_CHANGE_MONTH and c.kind == "regular"]
    share = sum(c.reasons[0] == "price_change" for c in october) / len(october)
    assert 0.12 < share < 0.35


def test_outage_calls_surge_in_the_storm_week(calls: list[DemoCall]) -> None:
    def outage_share(selected: list[DemoCall]) -> float:
        return sum(bool(c.reasons) and c.reasons[0] == "power_outage" for c in selected) / len(
            selected
        )

    storm = [c for c in calls if _in_storm(c.date)]
    other = [c for c in calls if not _in_storm(c.date)]
    assert outage_share(storm) > 3 * outage_share(other)
    per_week = Counter(c.date.isocalendar()[1] for c in calls)
    storm_week = STORM_WEEK[0].isocalendar()[1]
    assert per_week[storm_week] > 1.5 * statistics.median(per_week.values())


def test_second_reasons_short_and_off_topic_calls(calls: list[DemoCall]) -> None:
    second = sum(len(c.reasons) == 2 for c in calls) / len(calls)
    assert 0.2 < second < 0.3
    assert all(c.reasons[0] != c.reasons[1] for c in calls if len(c.reasons) == 2)
    kinds = Counter(c.kind for c in calls)
    assert 0.02 < kinds["short"] / len(calls) < 0.07
    assert 0.015 < kinds["off_topic"] / len(calls) < 0.06
    assert all(2 <= len(c.turns) <= 4 for c in calls if c.kind == "short")
    assert all(c.reasons == () for c in calls if c.kind == "off_topic")
    assert {c.detail for c in calls if c.kind == "off_topic"} == {
        "wrong_number", "sales_call", "chit_chat"
    }  # fmt: skip


def test_dates_are_weekday_weighted_and_in_range(calls: list[DemoCall]) -> None:
    assert all(FIRST_DAY <= c.date <= LAST_DAY for c in calls)
    assert [c.date for c in calls] == sorted(c.date for c in calls)
    weekday = Counter(c.date.weekday() for c in calls)
    assert weekday[0] > 2 * weekday[5] > 2 * weekday[6]
    assert {_month(c) for c in calls} == {f"2026-{m:02d}" for m in range(5, 11)}


def test_call_length_distribution(calls: list[DemoCall]) -> None:
    words = [c.word_count for c in calls if c.kind == "regular"]
    assert 300 < statistics.median(words) < 650
    assert sum(250 <= w <= 700 for w in words) / len(words) > 0.7
    assert max(words) > 900
    assert all(c.word_count < 60 for c in calls if c.kind == "short")


def test_transcripts_are_unique_and_scripts_recur(calls: list[DemoCall]) -> None:
    hashes = {normalised_hash(c.text) for c in calls}
    assert len(hashes) == len(calls)
    regular = [c.text.lower() for c in calls if c.kind == "regular"]
    for sentence, share in (
        ("can i take the account number and the first line of the address", 0.6),
        ("anything else i can help with today", 0.5),
        ("place you on a brief hold", 0.1),
    ):
        assert sum(sentence in t for t in regular) / len(regular) > share, sentence


def test_turn_times_roles_and_labels_are_consistent(calls: list[DemoCall]) -> None:
    ingest = IngestSettings()
    agent_words, customer_words = set(ingest.agent_labels), set(ingest.customer_labels)
    for call in calls[:400]:
        starts = [t.start for t in call.turns]
        assert starts == sorted(starts)
        assert call.duration_s >= starts[-1]
        assert call.turns[0].role == "agent"
        for turn in call.turns:
            first = re.sub(r"[\d\W]+$", "", turn.speaker.split()[0]).lower()
            expected = agent_words if turn.role == "agent" else customer_words
            assert first in expected, (call.call_id, turn.speaker, turn.role)
            assert ":" not in turn.text and "-->" not in turn.text


# -- privacy-looking content -----------------------------------------------------------


def test_card_numbers_pass_luhn_and_emails_use_reserved_domains(calls: list[DemoCall]) -> None:
    text = "\n".join(c.text for c in calls)
    cards = [m.replace(" ", "") for m in CARD.findall(text)]
    assert len(cards) > 10
    assert all(len(n) == 16 and _luhn_ok(n) for n in cards)
    domains = Counter(EMAIL_DOMAIN.findall(text))
    assert sum(domains.values()) > 100
    assert set(domains) == {"example.com", "example.org"}
    phones = re.findall(r"555[- ]01\d\d", text)
    assert len(phones) > 20


def test_luhn_helper_matches_known_values() -> None:
    # The check digit of 7992739871 is 3 (worked example of the Luhn algorithm, from memory).
    assert slots.luhn_check_digit("7992739871") == "3"
    assert _luhn_ok("79927398713") and not _luhn_ok("79927398710")


# -- scenario data ---------------------------------------------------------------------


def _strings(value: object) -> list[str]:
    if isinstance(value, str):
        return [value]
    if isinstance(value, dict):
        return [s for v in value.values() for s in _strings(v)]
    if isinstance(value, list):
        return [s for v in value for s in _strings(v)]
    return []


def test_every_template_slot_resolves_and_no_colons() -> None:
    sc = scenario.load_scenario()
    assert tuple(sc["reasons"]) == REASONS
    b = builder.Builder(Random(0), dt.date(2026, 10, 2), {"agent": "A", "customer": "C"},
                      {"agent": "Maya", "customer": "Zoë", "company": sc["company"]})  # fmt: skip
    b.greeting = sc["scripts"]["greeting"][0]
    sections = [sc["slots"], sc["scripts"], sc["fillers"], sc["generic_pairs"]]
    for reason in sc["reasons"].values():
        b.local = {**reason["slots"], **reason.get("storm_slots", {})}
        for key in ("openings", "second", "details", "qa", "agent_explain", "agent_actions",
                    "customer_reacts"):  # fmt: skip
            for template in _strings(reason[key]):
                assert "{" not in b.fill(template), template
    for name, block in sc["off_topic"].items():
        b.local = block["slots"]
        for template in _strings(block["turns"]):
            if template != "{greeting}":
                assert "{" not in b.fill(template), (name, template)
    b.local = {}
    for template in _strings(sections):
        assert "{" not in b.fill(template), template
    for template in _strings({k: v for k, v in sc.items() if k not in ("about",)}):
        assert ":" not in template, template


def test_reasons_have_labels_and_are_documented() -> None:
    labels = demo_reasons()
    assert tuple(labels) == REASONS and all(labels.values())
    readme = (SAMPLE.parent / "README.md").read_text(encoding="utf-8")
    assert all(f"`{key}`" in readme for key in REASONS)


def test_names_are_invented_sets() -> None:
    sc = scenario.load_scenario()
    agents = [n for roster in sc["sites"].values() for n in roster]
    assert len(set(agents)) == len(agents) >= 30
    assert len(set(sc["customers"])) >= 60
    assert set(sc["sites"]) == set(sc["site_weights"])


# -- files -----------------------------------------------------------------------------


def test_formats_mix_and_manifest_covers_every_call(written: DemoFiles) -> None:
    counts = written.counts
    assert sum(counts.values()) == 300 and written.inbox is None
    assert 0.35 < counts["txt"] / 300 < 0.65
    assert 0.15 < counts["vtt"] / 300 < 0.35 and 0.15 < counts["csv"] / 300 < 0.35
    files = {p.stem: p for p in (written.exports / "calls").rglob("*.*")}
    assert Counter(p.suffix for p in files.values()) == {".txt": counts["txt"],
                                                         ".vtt": counts["vtt"]}  # fmt: skip
    assert all(p.parent.name == p.stem[1:8] for p in files.values())
    assert written.turns is not None
    csv_ids = {row["call_id"] for row in _read_csv(written.turns)}
    manifest = _read_csv(written.manifest)
    truth = _read_csv(written.truth)
    ids = {row["call_id"] for row in manifest}
    assert len(ids) == len(manifest) == 300
    assert ids == set(files) | csv_ids and not set(files) & csv_ids
    assert ids == {row["call_id"] for row in truth}
    assert list(manifest[0]) == ["call_id", "date", "queue", "site", "duration_s", "channel"]
    assert {row["queue"] for row in manifest} == {"billing", "faults", "general", "moves"}
    assert len({row["site"] for row in manifest}) == 3
    assert all(re.fullmatch(r"C2026-\d\d-\d{6}", i) for i in ids)


def test_truth_lives_outside_the_exports(written: DemoFiles) -> None:
    assert written.truth.parent == written.root
    assert written.exports not in written.truth.parents
    assert not list(written.exports.rglob("truth*"))
    for path in written.exports.rglob("*.*"):
        assert "primary_reason" not in path.read_text(encoding="utf-8")


def test_rendered_files_follow_their_formats(written: DemoFiles) -> None:
    styles = Counter()
    for path in (written.exports / "calls").rglob("*.txt"):
        lines = path.read_text(encoding="utf-8").splitlines()
        assert TXT_LINE.match(lines[0])
        styles["bracket" if lines[0].startswith("[") else "plain" if lines[0][0].isdigit()
               else "none"] += 1  # fmt: skip
        styles["wrapped"] += any(not TXT_LINE.match(line) for line in lines)
    assert styles["bracket"] and styles["plain"] and styles["none"] and styles["wrapped"]
    for path in (written.exports / "calls").rglob("*.vtt"):
        text = path.read_text(encoding="utf-8")
        assert text.startswith("WEBVTT\n\n")
        blocks = [b for b in text.strip().split("\n\n")[1:] if not b.startswith("NOTE")]
        for block in blocks:
            timing = next(line for line in block.splitlines() if "-->" in line)
            assert re.fullmatch(r"\d\d:\d\d:\d\d\.\d{3} --> \d\d:\d\d:\d\d\.\d{3}", timing)
            assert re.search(r"<v (Agent|Customer|Caller)[^>]*>", block)


def test_render_functions_round_trip_turns() -> None:
    call = next(c for c in iter_demo_calls(30, seed=2) if c.kind == "regular")
    txt = render_txt(call)
    labelled = [TXT_LINE.match(line) for line in txt.splitlines()]
    assert [m.group(1) for m in labelled if m] == [t.speaker for t in call.turns]
    vtt = render_vtt(call)
    voices = re.findall(r"<v ([^>]+)>", vtt)
    assert [v for i, v in enumerate(voices) if i == 0 or v != voices[i - 1]] == [
        t.speaker for t in call.turns
    ]


def test_hold_back_puts_october_in_the_inbox(tmp_path: Path) -> None:
    files = write_demo(tmp_path / "held", size=200, seed=9, hold_back_last_month=True)
    assert files.inbox == tmp_path / "held" / "inbox"
    inbox_ids = {r["call_id"] for r in _read_csv(files.inbox / "manifest.csv")}
    export_ids = {r["call_id"] for r in _read_csv(files.manifest)}
    assert inbox_ids and all(i.startswith("C2026-10-") for i in inbox_ids)
    assert not any(i.startswith("C2026-10-") for i in export_ids)
    assert sum(files.inbox_counts.values()) == len(inbox_ids)
    assert files.total == 200
    truth = {r["call_id"]: r["location"] for r in _read_csv(files.truth)}
    assert {i for i, loc in truth.items() if loc == "inbox"} == inbox_ids
    # writing again without holding back replaces the output and drops the stale inbox
    again = write_demo(tmp_path / "held", size=200, seed=9)
    assert again.inbox is None and not (tmp_path / "held" / "inbox").exists()
    assert json.loads((tmp_path / "held" / "demo.json").read_text())["size"] == 200


def test_bad_arguments_are_refused(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="at least 1"):
        write_demo(tmp_path / "x", size=0)
    with pytest.raises(InputError, match="at least 1"):
        iter_demo_calls(0)
    foreign = tmp_path / "mine"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("keep me", encoding="utf-8")
    with pytest.raises(InputError, match="mine"):
        write_demo(foreign, size=5)
    assert (foreign / "notes.txt").read_text(encoding="utf-8") == "keep me"


def test_per_turn_csv_is_split_into_parts_that_ingest_whole(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Large demos write several per-turn CSV parts (the default size limit would refuse one
    huge file); every call lands in exactly one part and every part ingests."""
    from talkthemes.ingest.run import ingest
    from talkthemes.workspace import Workspace

    monkeypatch.setattr(writer, "CSV_CALLS_PER_FILE", 20)
    files = write_demo(tmp_path / "out", size=300, seed=3)
    parts = sorted(files.exports.glob("turns*.csv"), key=lambda p: (p.name != "turns.csv", p.name))
    assert parts[0] == files.turns and len(parts) == -(-files.counts["csv"] // 20)
    ids_per_part = [{row["call_id"] for row in _read_csv(p)} for p in parts]
    assert all(len(ids) == 20 for ids in ids_per_part[:-1])
    assert sum(map(len, ids_per_part)) == len(set().union(*ids_per_part)) == files.counts["csv"]
    ws = Workspace(tmp_path / "ws")
    ws.init()
    with ws.lock("test"):
        report = ingest(ws, [files.exports], manifests=[files.manifest])
    assert report.total("added") == 300 and not report.rejects
