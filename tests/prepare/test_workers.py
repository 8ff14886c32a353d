"""The chain's worker processes never outlive a prepare that was killed."""

from __future__ import annotations

import os
import random
import select
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from talkthemes.calls.model import Transcript, Turn
from talkthemes.config import PrepareSettings, Settings, render_settings
from talkthemes.workspace import Workspace, atomic_write_text

WORDS = [
    "invoice",
    "refund",
    "payment",
    "balance",
    "meter",
    "reading",
    "engineer",
    "outage",
    "cable",
    "tariff",
    "landlord",
    "tenant",
    "postcode",
    "leak",
    "pipe",
    "pressure",
    "boiler",
    "radiator",
    "plumber",
    "voltage",
]


def _fill(ws: Workspace, n: int) -> None:
    rng = random.Random(4)
    items = []
    for i in range(n):
        turns = [
            Turn("Caller", "customer", " ".join(rng.choices(WORDS, k=40)) + ".") for _ in range(8)
        ]
        items.append(Transcript(f"t{i:05d}", turns, source=f"t{i}.txt", format="txt"))
    with ws.store() as store:
        store.add_transcripts(items, None)


def _state(pid: int) -> str | None:
    """The process's state letter, or None when it is gone."""
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return None
    return stat[stat.rfind(")") + 2]


def _descendants(pid: int) -> set[int]:
    children: dict[int, list[int]] = {}
    for entry in Path("/proc").iterdir():
        if not entry.name.isdigit():
            continue
        try:
            stat = (entry / "stat").read_text()
        except OSError:
            continue
        ppid = int(stat[stat.rfind(")") + 2 :].split()[1])
        children.setdefault(ppid, []).append(int(entry.name))
    out: set[int] = set()
    todo = [pid]
    while todo:
        for child in children.get(todo.pop(), []):
            out.add(child)
            todo.append(child)
    return out


@pytest.mark.slow
@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="needs /proc")
def test_workers_exit_soon_after_prepare_is_killed(ws: Workspace) -> None:
    _fill(ws, 4000)
    settings = Settings(prepare=PrepareSettings(n_process=2, batch_size=20))
    atomic_write_text(ws.settings_path, render_settings(settings))
    main = subprocess.Popen(
        [
            sys.executable,
            "-c",
            "from talkthemes.cli import main; main()",
            "prepare",
            "--workspace",
            str(ws.root),
        ],
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
    )
    family: set[int] = set()
    try:
        # wait until the pool's workers run (the main process's grandchildren)
        deadline = time.monotonic() + 60
        workers: set[int] = set()
        while time.monotonic() < deadline and main.poll() is None:
            family = _descendants(main.pid)
            workers = {p for p in family if _ppid(p) not in (None, main.pid)}
            if len(workers) >= 2:
                break
            time.sleep(0.05)
        assert len(workers) >= 2, "the workers never started"
        family = _descendants(main.pid)
        os.kill(main.pid, signal.SIGKILL)
        main.wait()
        # every process it started is gone within a few seconds ...
        deadline = time.monotonic() + 5
        while time.monotonic() < deadline:
            alive = {p for p in family if _state(p) not in (None, "Z")}
            if not alive:
                break
            time.sleep(0.1)
        assert not alive, f"still running 5 s after the kill: {sorted(alive)}"
        # ... so nothing holds the output pipe any more: reading it ends
        fd = main.stdout.fileno()  # type: ignore[union-attr]
        deadline = time.monotonic() + 5
        while time.monotonic() < deadline:
            ready, _, _ = select.select([fd], [], [], 0.2)
            if ready and not os.read(fd, 65536):
                break
        else:
            pytest.fail("the output pipe is still held open")
    finally:
        if main.poll() is None:
            main.kill()
        for pid in family:  # what it started never outlives the test, even on failure
            if _state(pid) not in (None, "Z"):
                os.kill(pid, signal.SIGKILL)


def _ppid(pid: int) -> int | None:
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return None
    return int(stat[stat.rfind(")") + 2 :].split()[1])


@pytest.mark.slow
def test_a_spacy_pipeline_runs_on_the_chains_own_workers(tmp_path: Path) -> None:
    """With n_process > 1 a pipeline is loaded again by name in each worker (spaCy starts no
    processes of its own), and the result equals one process's."""
    import numpy as np
    import spacy

    from talkthemes.prepare.chain import build_processor, prepare_corpus

    nlp = spacy.blank("en")
    nlp.add_pipe("lemmatizer", config={"mode": "lookup"})
    nlp.initialize()
    folder = tmp_path / "lookup_en"
    nlp.to_disk(folder)
    rng = random.Random(2)
    data = [
        (f"p{i:03d}", [("customer", " ".join(rng.choices(WORDS, k=30)) + ".")]) for i in range(120)
    ]
    one = PrepareSettings(
        pipeline=str(folder), pos_keep=[], n_process=1, batch_size=10, vocab_min_docs=2,
        min_tokens=5, boilerplate_min_share=0.0, vocab_max_doc_share=1.0,
    )  # fmt: skip
    two = one.model_copy(update={"n_process": 2})
    encoder = build_processor(two).encoder
    assert encoder.source == str(folder)

    def batches():
        return [data[i : i + 10] for i in range(0, len(data), 10)]

    a, _ = prepare_corpus(batches, one, total=len(data), min_terms=5)
    b, _ = prepare_corpus(batches, two, total=len(data), min_terms=5)
    assert a.vocabulary == b.vocabulary and np.array_equal(a.tokens, b.tokens)
