"""The demo's Spanish line: `write_demo(..., languages=("en", "es"))` and `demo --languages`."""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import json
import re
import shutil
import subprocess
from collections import Counter
from pathlib import Path
from random import Random
from typing import Any

import pytest
from spacy.lang.en.stop_words import STOP_WORDS as EN_STOP_WORDS
from spacy.lang.es.stop_words import STOP_WORDS as ES_STOP_WORDS
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.config import IngestSettings
from talkthemes.demo import builder, scenario
from talkthemes.demo.calls import LANGUAGE_SHARES, iter_demo_calls, language_sizes
from talkthemes.demo.records import DemoCall
from talkthemes.demo.scenario import PRICE_CHANGE_MONTH, REASONS, STORM_WEEK, reason_keys
from talkthemes.demo.writer import write_demo
from talkthemes.errors import InputError

ROOT = Path(__file__).resolve().parents[1]
SPANISH_ID = re.compile(r"ES-C2026-\d\d-\d{6}")
WORD = re.compile(r"[^\W\d_]+")
#: A few words each Spanish reason's calls cannot do without (the reason's own vocabulary).
REASON_WORDS = {
    "billing_dispute": ("reclam", "el doble", "ajuste", "recargo"),
    "payment_plan": ("pagos", "plan"),
    "move_service": ("mudanza", "mudo", "mudamos", "casa nueva", "dirección nueva"),
    "power_outage": ("sin luz", "corte de luz", "apagón", "avería"),
    "meter_reading": ("contador",),
    "letters_in_spanish": ("carta", "cartas"),
    "account_holder": ("titular", "a mi nombre", "a nombre de"),
    "price_change": ("precio", "precios", "subida", "tarifa"),
}


def _read_csv(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def _spanish(call: DemoCall) -> bool:
    return call.call_id.startswith("ES-")


def _words(text: str) -> list[str]:
    return [w.lower() for w in WORD.findall(text)]


@pytest.fixture(scope="module")
def spanish() -> list[DemoCall]:
    return list(iter_demo_calls(1500, seed=4, languages=("es",)))


@pytest.fixture(scope="module")
def mixed() -> list[DemoCall]:
    return list(iter_demo_calls(800, seed=3, languages=("en", "es")))


# -- English output is unchanged -------------------------------------------------------

#: The digest ``tests/test_demo.py`` holds for ``write_demo(size=200, seed=9,
#: hold_back_last_month=True)`` (recorded before the demo had a second language).
TREE_SHA256_200_9_HELD = "d73431079583271539af81aa2c76144fff3107b89677ff249d545bac6071a296"


def _tree_sha256(root: Path) -> str:
    digest = hashlib.sha256()
    for path in sorted(root.rglob("*")):
        if path.is_file():
            digest.update(path.relative_to(root).as_posix().encode() + b"\0")
            digest.update(path.read_bytes())
    return digest.hexdigest()


def test_english_only_output_is_byte_identical_to_before(tmp_path: Path) -> None:
    files = write_demo(
        tmp_path / "out", size=200, seed=9, hold_back_last_month=True, languages=("en",)
    )
    assert _tree_sha256(files.root) == TREE_SHA256_200_9_HELD
    assert "languages" not in json.loads((files.root / "demo.json").read_text(encoding="utf-8"))


def test_the_english_share_of_a_mixed_demo_is_the_english_demo_of_that_size(
    mixed: list[DemoCall],
) -> None:
    english = [c for c in mixed if not _spanish(c)]
    alone = list(iter_demo_calls(len(english), seed=3))
    assert len(english) == 600
    assert [(c.call_id, c.text) for c in english] == [(c.call_id, c.text) for c in alone]


# -- the split across lines ------------------------------------------------------------


def test_language_sizes_split_three_to_one_and_sum_to_size() -> None:
    assert LANGUAGE_SHARES == {"en": 3.0, "es": 1.0}
    assert language_sizes(3000, ("en", "es")) == {"en": 2250, "es": 750}
    assert language_sizes(3000, ("es", "en", "es")) == {"en": 2250, "es": 750}  # order, dupes
    assert language_sizes(21, ("en", "es")) == {"en": 16, "es": 5}  # 15.75 / 5.25
    assert language_sizes(1, ("en", "es")) == {"en": 1, "es": 0}
    assert language_sizes(50, ("es",)) == {"es": 50}
    assert language_sizes(50) == {"en": 50}
    for bad in (("en", "fr"), ()):
        with pytest.raises(InputError, match="supported: en, es"):
            language_sizes(10, bad)


def test_mixed_demo_has_the_share_ids_and_dates(mixed: list[DemoCall]) -> None:
    es = [c for c in mixed if _spanish(c)]
    assert len(es) == 200 and len(mixed) == 800
    assert all(SPANISH_ID.fullmatch(c.call_id) for c in es)
    assert all(re.fullmatch(r"C2026-\d\d-\d{6}", c.call_id) for c in mixed if not _spanish(c))
    assert len({c.call_id for c in mixed}) == 800
    assert [c.date for c in mixed] == sorted(c.date for c in mixed)  # merged in date order
    months = Counter(c.date.month for c in es)
    assert set(months) == set(range(5, 11))
    numbers = [int(c.call_id[-6:]) for c in es if c.date.month == 7]
    assert numbers == list(range(1, len(numbers) + 1))  # numbered per month within the line


def test_written_mixed_demo_keeps_the_manifest_without_a_language(tmp_path: Path) -> None:
    files = write_demo(tmp_path / "out", size=400, seed=5, languages=("en", "es"))
    assert files.total == 400
    with files.manifest.open(encoding="utf-8", newline="") as fh:
        header = next(csv.reader(fh))
    assert header == ["call_id", "date", "queue", "site", "duration_s", "channel"]
    manifest = _read_csv(files.manifest)
    es_rows = [r for r in manifest if r["call_id"].startswith("ES-")]
    assert len(es_rows) == 100 and len(manifest) == 400
    sites = set(scenario.load_scenario("es")["sites"])
    assert sites == set(scenario.load_scenario("en")["sites"])  # the same three sites
    for row in es_rows:
        assert dt.date.fromisoformat(row["date"]).year == 2026
        assert row["site"] in sites and row["queue"] in {"billing", "faults", "general", "moves"}
        assert int(row["duration_s"]) > 0 and row["channel"] in {"phone", "callback", "app"}
    assert {r["call_id"] for r in _read_csv(files.truth)} == {r["call_id"] for r in manifest}
    on_disk = {p.stem for p in (files.exports / "calls").rglob("ES-*.*")}
    in_csv = {r["call_id"] for p in files.exports.glob("turns*.csv") for r in _read_csv(p)}
    in_csv = {i for i in in_csv if i.startswith("ES-")}
    assert on_disk and in_csv and not on_disk & in_csv  # both kinds of file, once each
    assert {r["call_id"] for r in es_rows} == on_disk | in_csv
    info = json.loads((files.root / "demo.json").read_text(encoding="utf-8"))
    assert info["languages"] == {"en": 300, "es": 100}
    again = write_demo(tmp_path / "again", size=400, seed=5, languages=("es", "en"))
    assert _tree_sha256(again.root) == _tree_sha256(files.root)  # deterministic, any order


def test_a_mixed_demo_ingests_whole(tmp_path: Path) -> None:
    from talkthemes import Workspace

    files = write_demo(tmp_path / "out", size=120, seed=2, languages=("en", "es"))
    ws = Workspace.create(tmp_path / "ws")
    report = ws.ingest([files.exports], manifests=[files.manifest])
    totals = report.to_json()["totals"]
    assert totals["added"] == 120 and totals["rejected"] == 0, totals


# -- the Spanish text ------------------------------------------------------------------


def test_spanish_calls_are_in_spanish_and_english_calls_are_not(mixed: list[DemoCall]) -> None:
    def shares(call: DemoCall) -> tuple[float, float]:
        words = _words(call.text)
        es = sum(w in ES_STOP_WORDS for w in words) / len(words)
        en_only = sum(w in EN_STOP_WORDS and w not in ES_STOP_WORDS for w in words) / len(words)
        return es, en_only

    for call in mixed:
        es, en_only = shares(call)
        if _spanish(call):
            assert es > 0.35 and en_only < 0.05, (call.call_id, es, en_only)
        elif call.kind == "regular":
            assert es < 0.15 and en_only > 0.3, (call.call_id, es, en_only)


def test_every_spanish_reason_occurs_and_speaks_its_own_words(spanish: list[DemoCall]) -> None:
    keys = reason_keys("es")
    assert set(keys) == set(REASON_WORDS) and len(keys) == 8
    shared = set(keys) & set(REASONS)
    assert shared == {"billing_dispute", "payment_plan", "move_service", "power_outage",
                      "meter_reading", "price_change"}  # fmt: skip
    assert set(keys) - shared == {"letters_in_spanish", "account_holder"}  # Spanish line only
    regular = [c for c in spanish if c.kind == "regular"]
    led = Counter(c.reasons[0] for c in regular)
    assert set(led) == set(keys), led
    for key, words in REASON_WORDS.items():
        mine = [c.text.lower() for c in regular if c.reasons == (key,)]
        rest = [c.text.lower() for c in regular if key not in c.reasons]
        hit = sum(any(w in t for w in words) for t in mine) / len(mine)
        elsewhere = sum(any(w in t for w in words) for t in rest) / len(rest)
        assert hit > 0.9 and hit > 2 * elsewhere, (key, hit, elsewhere)


def test_spanish_line_follows_the_calendar(spanish: list[DemoCall]) -> None:
    price = [c for c in spanish if "price_change" in c.reasons]
    assert price and {c.date.strftime("%Y-%m") for c in price} == {PRICE_CHANGE_MONTH}
    storm = [c for c in spanish if STORM_WEEK[0] <= c.date <= STORM_WEEK[1]]
    other = [c for c in spanish if not STORM_WEEK[0] <= c.date <= STORM_WEEK[1]]

    def outage(calls: list[DemoCall]) -> float:
        return sum(c.reasons[:1] == ("power_outage",) for c in calls) / len(calls)

    assert outage(storm) > 3 * outage(other)
    kinds = Counter(c.kind for c in spanish)
    assert kinds["off_topic"] and kinds["short"]
    assert 0.2 < sum(len(c.reasons) == 2 for c in spanish) / len(spanish) < 0.3


def test_spanish_calls_carry_the_fake_private_details(spanish: list[DemoCall]) -> None:
    text = "\n".join(c.text for c in spanish)
    assert set(re.findall(r"@([\w-]+(?:\.[\w-]+)+)", text)) == {"example.com", "example.org"}
    assert len(re.findall(r"555[- ]01\d\d", text)) > 20
    assert "arroba example punto" in text  # e-mail addresses read aloud, in Spanish
    months = scenario.load_scenario("es")["words"]["months"]
    assert any(f" de {m}" in text for m in months)
    assert not re.search(r"\b(?:January|February|March|April|June|July|August)\b", text)
    assert "dólares" in text and " dollars" not in text


def test_spanish_speaker_labels_map_to_ingest_roles(spanish: list[DemoCall]) -> None:
    ingest = IngestSettings()
    for call in spanish[:300]:
        for turn in call.turns:
            first = re.sub(r"[\d\W]+$", "", turn.speaker.split()[0]).lower()
            expected = ingest.agent_labels if turn.role == "agent" else ingest.customer_labels
            assert first in expected, (call.call_id, turn.speaker)
            assert ":" not in turn.text


def test_disfluency_keeps_spanish_questions_well_formed(spanish: list[DemoCall]) -> None:
    text = "\n".join(t.text for c in spanish for t in c.turns)
    assert text.count("¿") > 100
    # A filler before a question lowers its first letter, not the opening mark.
    assert not re.search(r"(?:Eh|Pues|Mire|Bueno|Vale|Oiga), ¿[A-ZÁÉÍÓÚ]", text)
    assert re.search(r"(?:Eh|Pues|Mire|Bueno|Vale|Oiga), ¿[a-záéíóú]", text)


# -- the Spanish phrase banks ----------------------------------------------------------


def _strings(value: Any) -> list[str]:
    if isinstance(value, str):
        return [value]
    if isinstance(value, dict):
        return [s for v in value.values() for s in _strings(v)]
    if isinstance(value, list):
        return [s for v in value for s in _strings(v)]
    return []


def test_spanish_banks_have_the_english_structure_and_every_slot_resolves() -> None:
    en, es = scenario.load_scenario("en"), scenario.load_scenario("es")
    assert set(en) <= set(es) and set(es) - set(en) == {"words"}
    assert set(es["scripts"]) == set(en["scripts"]) and set(es["fillers"]) == set(en["fillers"])
    assert set(es["off_topic"]) == set(en["off_topic"]) and set(es["short"]) == set(en["short"])
    reason_fields = set(en["reasons"]["billing_dispute"])
    for key, reason in es["reasons"].items():
        assert set(reason) - {"storm_slots", "october_weight"} == reason_fields, key
    assert set(es["second_affinity"]) == set(es["reasons"])
    assert all(set(v) <= set(es["reasons"]) for v in es["second_affinity"].values())
    agents = [n for roster in es["sites"].values() for n in roster]
    assert len(set(agents)) == len(agents) >= 12 and len(set(es["customers"])) >= 40
    memo = {"agent": agents[0], "customer": "Úrsula", "company": es["company"]}
    b = builder.Builder(Random(0), dt.date(2026, 10, 2), {"agent": "A", "customer": "C"}, memo,
                        "es")  # fmt: skip
    b.greeting = es["scripts"]["greeting"][0]
    for reason in es["reasons"].values():
        b.local = {**reason["slots"], **reason.get("storm_slots", {})}
        for template in _strings({k: v for k, v in reason.items() if k not in ("label",)}):
            assert "{" not in b.fill(template), template
    for name, block in es["off_topic"].items():
        b.local = block["slots"]
        for template in _strings(block["turns"]):
            if template != "{greeting}":
                assert "{" not in b.fill(template), (name, template)
    b.local = {}
    for section in ("slots", "scripts", "fillers", "generic_pairs", "short", "dropped"):
        for template in _strings(es[section]):
            if template != "{greeting}":
                assert "{" not in b.fill(template), template
    assert not [t for t in _strings({k: v for k, v in es.items() if k != "about"}) if ":" in t]


def test_unknown_language_is_refused_by_the_generator(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="supported: en, es"):
        scenario.load_scenario("fr")
    with pytest.raises(InputError, match="supported: en, es"):
        write_demo(tmp_path / "out", size=10, languages=("de",))
    assert not (tmp_path / "out").exists()


# -- the command line and the Makefile -------------------------------------------------


@pytest.mark.parametrize("value", ["en,fr", "", "english", "es,,xx"])
def test_demo_refuses_an_unknown_language_with_exit_2(tmp_path: Path, value: str) -> None:
    ws = tmp_path / "ws"
    r = CliRunner().invoke(app, ["demo", "--languages", value, "--no-serve", "-w", str(ws)])
    assert r.exit_code == 2, r.output
    message = " ".join(r.stderr.replace("│", " ").split())  # the error box may wrap it
    assert "'--languages'" in message and "supported: en, es" in message
    assert not ws.exists()  # refused before anything was written


def test_demo_passes_the_languages_to_the_generator(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from talkthemes.cli import faces

    seen: dict[str, Any] = {}

    def fake_run(ws: Any, **kwargs: Any) -> tuple[dict[str, Any], list[dict[str, Any]]]:
        seen.update(kwargs)
        return {"workspace": str(ws.root)}, []

    monkeypatch.setattr(faces, "_run_demo", fake_run)
    args = ["demo", "--size", "40", "--no-serve", "-w", str(tmp_path / "ws"), "--json"]
    r = CliRunner().invoke(app, [*args, "--languages", " ES, en ,es"])
    assert r.exit_code == 0, r.output
    assert seen["languages"] == ("es", "en") and seen["size"] == 40
    r = CliRunner().invoke(app, ["demo", "--no-serve", "-w", str(tmp_path / "w2"), "--json"])
    assert r.exit_code == 0, r.output
    assert seen["languages"] == ("en",)  # the default: the English line only


@pytest.mark.skipif(shutil.which("make") is None, reason="make is not installed")
def test_make_demo_passes_demo_languages() -> None:
    def dry_run(*extra: str) -> str:
        done = subprocess.run(["make", "-n", "demo", *extra], cwd=ROOT, capture_output=True,
                              text=True, check=True)  # fmt: skip
        (line,) = [x for x in done.stdout.splitlines() if "talkthemes demo" in x]
        return line

    assert "--languages en " in dry_run()
    assert "--languages en,es " in dry_run("DEMO_LANGUAGES=en,es")
