"""A planted labelling corpus, published once per session: two reasons to call with known
words, one scripted sentence in every call (boilerplate, holding both themes' words), and
planted personal data.

60 invented calls of the invented utility "Lumenford Energy": 30 about meter readings, 30
about refunds. Each call opens with the agent's greeting and the customer's scripted
sentence ``BOILERPLATE`` (both in every call, so the prep finds them to be boilerplate),
then four to six customer sentences drawn from its reason's bank (each said with one of
a few openers and closers, so none recurs often enough to be boilerplate), and one agent
sentence
using the same words (agents' sentences only fill places customers' cannot). Every meter
call holds ``PII_SENTENCE`` with an e-mail address and a phone number. Prepared with the
real chain and published as NMF K = 2.
"""

from __future__ import annotations

import random
import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest

from talkthemes.workspace import Workspace

BOILERPLATE = "I have a question about my meter reading and my refund today."
GREETING = "Thank you for calling Lumenford Energy, how can I help you today?"
EMAIL, PHONE = "sam.ortiz@example.com", "+44 20 7946 0000"
PII_SENTENCE = (
    f"You can send the meter photo with the actual reading and the digits to {EMAIL} or ring "
    f"me on {PHONE} about the estimate."
)
METER = [
    "The meter reading on my bill is an estimate and the digits look wrong.",
    "I took a photo of the meter display this morning with the actual reading.",
    "My smart meter stopped sending readings after the engineer visit.",
    "The estimated reading is much higher than what the dial shows.",
    "I want to submit a meter reading because the estimate keeps going up.",
    "The register on the meter shows five digits but the bill shows six.",
    "Can I read the meter myself and send the digits online?",
    "The display on the meter is blank so I cannot give an actual reading.",
    "Nobody has read the meter in a year and every bill is estimated.",
    "I think the meter reading was swapped with my neighbour's meter.",
    "The second dial on the meter turns very slowly at night.",
    "My reading this month is lower than the estimate you sent.",
]
REFUND = [
    "I overpaid last quarter and the refund has not reached my bank.",
    "My account is in credit and I would like the balance refunded.",
    "You promised a refund cheque two weeks ago and nothing arrived.",
    "The statement shows a credit balance but no refund transfer.",
    "Can you transfer the credit on my account back to my bank?",
    "I closed the account and I am still waiting for the final refund.",
    "The refund amount on the letter does not match my statement.",
    "I paid twice by mistake and need one payment refunded.",
    "Why is the refund going back to a card I cancelled?",
    "My direct debit took too much and the overpayment should be refunded.",
    "The credit balance keeps growing because you overcharge me.",
    "How long does a refund transfer take to clear?",
]
AGENT = {
    "meter": "I can see the meter reading on the account was estimated.",
    "refund": "I can see the credit balance and the refund on the account.",
}


# Said the way people say things, so that no customer sentence recurs often enough to be
# boilerplate (only the scripted ones do).
OPENERS = ("", "Well, ", "So, ", "Right, ", "Honestly, ", "Um, ")
CLOSERS = ("", ", I think", ", to be honest", ", as far as I can tell")


def _said(sentence: str, rng: random.Random) -> str:
    opener, closer = rng.choice(OPENERS), rng.choice(CLOSERS)
    body = sentence[:-1] if sentence[-1] in ".?!" else sentence
    if opener:
        body = body[0].lower() + body[1:]
    return f"{opener}{body}{closer}{sentence[-1]}"


@dataclass(frozen=True)
class Planted:
    """The planted workspace and the call ids of each reason."""

    root: Path
    calls: dict[str, list[str]]  # reason → call ids


def _write_calls(folder: Path) -> dict[str, list[str]]:
    rng = random.Random(5)
    folder.mkdir(parents=True)
    calls: dict[str, list[str]] = {"meter": [], "refund": []}
    for i in range(60):
        reason = "meter" if i % 2 == 0 else "refund"
        bank = METER if reason == "meter" else REFUND
        said = [_said(x, rng) for x in rng.sample(bank, rng.randint(4, 6))]
        if reason == "meter":
            said.insert(rng.randint(0, len(said)), _said(PII_SENTENCE, rng))
        lines = [f"Agent: {GREETING}", f"Customer: {BOILERPLATE}"]
        lines += [f"Customer: {s}" for s in said[:3]]
        lines.append(f"Agent: {AGENT[reason]}")
        lines += [f"Customer: {s}" for s in said[3:]]
        lines.append("Agent: Is there anything else I can help with today?")
        tid = f"L-{reason}-{i:03d}"
        (folder / f"{tid}.txt").write_text("\n".join(lines) + "\n", encoding="utf-8")
        calls[reason].append(tid)
    return calls


@pytest.fixture(scope="session")
def planted_root(tmp_path_factory: pytest.TempPathFactory) -> Planted:
    """The planted workspace, published (read-only: copy it with :func:`copy_planted`)."""
    from talkthemes.config import render_settings
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep.run import load_current_prep
    from talkthemes.versions.fit import fit_version
    from talkthemes.versions.write import write_version
    from talkthemes.workspace import atomic_write_text

    base = tmp_path_factory.mktemp("planted-labelling")
    calls = _write_calls(base / "calls")
    ws = Workspace(base / "ws")
    ws.init()
    settings = ws.settings()
    settings.prepare.n_process = 1
    settings.prepare.min_tokens = 5
    settings.prepare.vocab_min_docs = 3
    atomic_write_text(ws.settings_path, render_settings(settings))
    with ws.lock("test"):
        ingest(ws, [base / "calls"])
        run_prepare(ws)
        prep, folder = load_current_prep(ws)
        fitted = fit_version(
            ws, PreparedCorpus.load(folder), family="nmf", k=2, seed=0, prep_hash=prep.hash
        )
        write_version(ws, fitted)
    return Planted(ws.root, calls)


def copy_planted(planted: Planted, dest: Path) -> Workspace:
    """A private copy of the planted workspace (a test may change it)."""
    shutil.copytree(planted.root, dest, ignore=shutil.ignore_patterns(".lock"))
    return Workspace(dest)
