"""Benchmark of ``talkthemes prepare`` on the invented demo corpus (not a test).

    python bench/prepare.py 20000
    python bench/prepare.py 100000 --n-process 2
    python bench/prepare.py 20000 --repeat 3 --workspace /tmp/ws   # medians of 3 runs
    python bench/prepare.py 5000 --n-process 1 --language es    # invented Spanish calls

Steps:

1. Generate N demo calls (:func:`talkthemes.demo.iter_demo_calls`) and store them in a
   temporary workspace, then detect their languages as ``ingest`` does (setup; timed but
   not part of prepare). With ``--language xx`` the calls are invented ones in that
   language (``bench/calls_by_language.py``, bench only) and the workspace's
   ``[prepare] lang`` is ``xx`` (with ``vocab_max_doc_share = 1``: the templates' words are
   in most calls; the same for every language, English included).
2. In a fresh child process (one per ``--repeat``, so every run pays the one-off costs a
   ``talkthemes prepare`` pays: loading the language's resources, starting workers), run
   :func:`talkthemes.prepare.run_prepare` and time each stage from its progress callback;
   ``start-up`` is the time before the first transcript is read. Peak memory is the
   child's (and its workers') ``ru_maxrss``.
3. In the same child, time each per-transcript step alone on a sample of the stored
   transcripts (store read, roles, scrub, words + lemmas + filter; the word cache warm, as
   it is after the first batches of a run), and the tokenisation of the same text by
   ``spacy.blank(lang)`` alone (``nlp.pipe``; its speed does not depend on how many
   transcripts it reads, and a second pass over the same text is no faster).

The ratio "whole chain vs spaCy tokenisation alone" compares the MB/s of the whole
prepare run (every one-off cost included; the import of the package is not, as it is
done before the clock starts) with the MB/s of spaCy's tokeniser measured in the same
child a moment later, so both see the same load on the machine. With ``--repeat`` the
figures are medians over the runs and the ratio is given per run.

Throughput is given in transcripts/s and MB/s, where MB counts the UTF-8 bytes of the
turns' text.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def _mb(texts: list[str]) -> float:
    return sum(len(t.encode("utf-8")) for t in texts) / 1e6


def _calls(n: int, seed: int, language: str | None):
    """``(call id, [(speaker, role, text), ...])`` of the demo, or of the bench's invented
    calls in ``language``."""
    from talkthemes.demo.calls import iter_demo_calls

    if language is None:
        for call in iter_demo_calls(n, seed):
            yield call.call_id, [(t.speaker, t.role, t.text) for t in call.turns]
        return
    sys.path.insert(0, str(Path(__file__).parent))
    from calls_by_language import iter_calls

    for call_id, turns in iter_calls(n, language, seed):
        yield call_id, [(speaker, role, text) for role, speaker, text in turns]


def setup(
    root: Path, n: int, seed: int, n_process: int, language: str | None = None
) -> dict[str, float]:
    """Create a workspace at ``root`` holding ``n`` demo calls (or invented calls in
    ``language``, prepared with ``[prepare] lang = language``)."""
    from talkthemes.calls.model import Transcript, Turn
    from talkthemes.config import PrepareSettings, Settings, render_settings
    from talkthemes.workspace import Workspace, atomic_write_text

    ws = Workspace(root)
    reuse = ws.exists()
    ws.init()
    prepare = PrepareSettings(n_process=n_process)
    if language is not None:
        # the invented calls have a small vocabulary from a few dozen templates: every
        # template word is in most calls, so no share cut (the same for every language)
        prepare = PrepareSettings(n_process=n_process, lang=language, vocab_max_doc_share=1.0)
    settings = Settings(prepare=prepare)
    atomic_write_text(ws.settings_path, render_settings(settings))
    if reuse:  # a kept workspace: measure its text instead of generating it again
        _settle(ws)
        with ws.store() as store:
            stored = store.count_transcripts()
            nbytes = sum(
                len(text.encode("utf-8"))
                for batch in store.iter_turn_batches(2000)
                for _, turns in batch
                for _, text in turns
            )
        return {"seconds": 0.0, "mb": nbytes / 1e6, "stored": stored}
    t0 = time.perf_counter()
    nbytes = 0
    batch: list[Transcript] = []
    with ws.store() as store:
        for call_id, call_turns in _calls(n, seed, language):
            turns = [Turn(speaker, role, text) for speaker, role, text in call_turns]
            nbytes += sum(len(t.text.encode("utf-8")) for t in turns)
            batch.append(Transcript(call_id, turns, source=call_id, format="txt"))
            if len(batch) == 2000:
                store.add_transcripts(batch, None)
                batch = []
        if batch:
            store.add_transcripts(batch, None)
        stored = store.count_transcripts()
    _settle(ws)
    return {"seconds": time.perf_counter() - t0, "mb": nbytes / 1e6, "stored": stored}


def _settle(ws) -> None:
    """Detect the calls' languages, as ``talkthemes ingest`` does after storing them (a
    ``prepare`` after a real ingest finds nothing left to detect)."""
    from talkthemes.languages.lanes import sync_lanes
    from talkthemes.languages.settle import settle_languages

    with ws.store() as store:
        if settle_languages(ws, store).detected:
            sync_lanes(ws, store)


def measure(root: Path, sample: int, spacy_sample: int) -> dict:
    """Run in the child process: prepare once, then the per-step and spaCy timings."""
    t_import = time.perf_counter()
    from talkthemes.prepare import run_prepare
    from talkthemes.prepare.chain import build_processor
    from talkthemes.prepare.roles import select_turns
    from talkthemes.prepare.scrub import scrub
    from talkthemes.workspace import Workspace

    import_seconds = time.perf_counter() - t_import
    ws = Workspace(root)
    marks: list[tuple[str, int, int, float]] = []
    t0 = time.perf_counter()
    result = run_prepare(
        ws, force=True, progress=lambda d, t, s: marks.append((s, d, t, time.perf_counter()))
    )
    total = time.perf_counter() - t0
    stages: dict[str, float] = {"start-up": (marks[0][3] if marks else t0) - t0}
    start: dict[str, float] = {}
    for stage, _done, _total, at in marks:
        start.setdefault(stage, at)
        stages[stage] = at - start[stage]
    peak_self = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    peak_children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024

    settings = ws.settings().prepare
    processor = build_processor(settings)
    steps: dict[str, float] = {}
    with ws.store() as store:
        t = time.perf_counter()
        batches = []
        got = 0
        for b in store.iter_turn_batches(settings.batch_size):
            batches.append(b)
            got += len(b)
            if got >= sample:
                break
        steps["store read"] = time.perf_counter() - t
    calls = [c for b in batches for c in b][:sample]
    raw = ["\n".join(text for _, text in turns) for _, turns in calls]
    for batch in batches:  # warm the word cache, as it is after the first batches of a run
        processor.process(batch)

    t = time.perf_counter()
    kept = ["\n".join(select_turns(turns, settings.roles)[0]) for _, turns in calls]
    steps["roles"] = time.perf_counter() - t
    t = time.perf_counter()
    clean = [scrub(x)[0] for x in kept]
    steps["scrub"] = time.perf_counter() - t
    t = time.perf_counter()
    for i in range(0, len(clean), settings.batch_size):
        processor.encoder.encode(clean[i : i + settings.batch_size])
    steps["sentences + words + lemmas + filter"] = time.perf_counter() - t
    t = time.perf_counter()
    for batch in batches:
        processor.process(batch)
    steps["all per-transcript steps (one process)"] = time.perf_counter() - t

    import spacy

    nlp = spacy.blank(settings.lang)
    spacy_texts = raw[:spacy_sample]
    t = time.perf_counter()
    n_tokens = sum(len(doc) for doc in nlp.pipe(spacy_texts, batch_size=256))
    spacy_seconds = time.perf_counter() - t
    return {
        "prep": result.prep_hash,
        "summary": result.summary,
        "total_seconds": total,
        "import_seconds": import_seconds,
        "stages": stages,
        "peak_mb_main": peak_self,
        "peak_mb_workers": peak_children,
        "sample": len(calls),
        "sample_mb": _mb(raw),
        "steps": steps,
        "spacy": {
            "transcripts": len(spacy_texts),
            "mb": _mb(spacy_texts),
            "seconds": spacy_seconds,
            "tokens": n_tokens,
        },
        "n_process": settings.n_process,
        "cpus": os.cpu_count(),
    }


def _rate(n: float, mb: float, seconds: float) -> str:
    if seconds <= 0:
        return "—"
    return f"{n / seconds:10,.0f} transcripts/s  {mb / seconds:7.2f} MB/s  ({seconds:7.2f} s)"


def _ratio(made: dict, got: dict) -> float:
    """Whole-run MB/s over spaCy's MB/s, both from one child."""
    sp = got["spacy"]
    return (made["mb"] / got["total_seconds"]) / (sp["mb"] / sp["seconds"])


def report(made: dict, runs: list[dict], language: str | None = None) -> None:
    mb, n = made["mb"], made["stored"]
    got = runs[0]
    med = statistics.median
    what = "demo corpus" if language is None else f"invented calls, lang = {language}"
    print(f"{what}: {n:,} calls, {mb:.1f} MB of text, stored in {made['seconds']:.1f} s")
    print(f"prepare: n_process = {got['n_process']} (0 = one per core), cpus = {got['cpus']}")
    runs_s = ", ".join(f"{r['total_seconds']:.2f}" for r in runs)
    print(f"  runs (s)       {runs_s}; the figures below are medians")
    total = med(r["total_seconds"] for r in runs)
    print(f"  total          {_rate(n, mb, total)}")
    print(f"  calls/s        {n / total:,.0f}")
    for stage in got["stages"]:
        seconds = med(r["stages"].get(stage, 0.0) for r in runs)
        print(f"  {stage:<14} {_rate(n, mb, seconds)}")
    print(
        f"  (import of the package before the clock: "
        f"{med(r['import_seconds'] for r in runs):.2f} s)"
    )
    print(
        f"  peak memory: main process {max(r['peak_mb_main'] for r in runs):,.0f} MB, "
        f"largest child process {max(r['peak_mb_workers'] for r in runs):,.0f} MB"
    )
    s = got["summary"]
    print(
        f"  result: {s['transcripts']:,} transcripts, {s['terms']:,} terms, "
        f"{s['tokens']:,} tokens ({s['tokens_out_of_vocabulary']:,} out of vocabulary)"
    )
    k, kmb = got["sample"], got["sample_mb"]
    print(f"per-transcript steps alone, one process, on {k:,} transcripts ({kmb:.1f} MB):")
    for step in got["steps"]:
        seconds = med(r["steps"][step] for r in runs)
        print(f"  {step:<40} {_rate(k, kmb, seconds)}")
    sp = got["spacy"]
    sp_seconds = med(r["spacy"]["seconds"] for r in runs)
    print(
        f"spacy.blank tokenisation alone on {sp['transcripts']:,} of the same transcripts: "
        f"{_rate(sp['transcripts'], sp['mb'], sp_seconds)}"
    )
    ratios = [_ratio(made, r) for r in runs]
    each = ", ".join(f"{x:.1f}x" for x in ratios)
    print(f"whole chain vs spaCy tokenisation alone: {med(ratios):.1f}x faster (runs: {each})")
    steps_alone = [
        (kmb / r["steps"]["all per-transcript steps (one process)"])
        / (r["spacy"]["mb"] / r["spacy"]["seconds"])
        for r in runs
    ]
    print(f"per-transcript steps alone vs spaCy tokenisation alone: {med(steps_alone):.1f}x")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("n", type=int, nargs="?", default=20_000, help="demo calls")
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument("--n-process", type=int, default=0, help="[prepare] n_process")
    parser.add_argument("--sample", type=int, default=5_000, help="transcripts for step timings")
    parser.add_argument("--spacy-sample", type=int, default=2_000, help="transcripts for spaCy")
    parser.add_argument(
        "--repeat", type=int, default=1, help="prepare runs, each in a fresh process (medians)"
    )
    parser.add_argument(
        "--workspace", type=Path, help="keep the workspace here (reused when it exists)"
    )
    parser.add_argument(
        "--language",
        help="invented calls in this language (en, es, de, fr, it, nl, pt) instead of the demo",
    )
    parser.add_argument("--child", type=Path, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        print(json.dumps(measure(args.child, args.sample, args.spacy_sample)))
        return
    with tempfile.TemporaryDirectory(prefix="tt-bench-") as tmp:
        root = args.workspace or Path(tmp) / "ws"
        made = setup(root, args.n, args.seed, args.n_process, args.language)
        runs = []
        for _ in range(max(1, args.repeat)):
            out = subprocess.run(
                [
                    sys.executable,
                    __file__,
                    "--child",
                    str(root),
                    "--sample",
                    str(args.sample),
                    "--spacy-sample",
                    str(args.spacy_sample),
                ],
                check=True,
                capture_output=True,
                text=True,
            )
            runs.append(json.loads(out.stdout.strip().splitlines()[-1]))
        report(made, runs, args.language)


if __name__ == "__main__":
    main()
