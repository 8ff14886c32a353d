"""A published version written directly, for timing the viewer at sizes the pipeline
would take too long to build (bench only; ``bench/viewer.py --synthetic``).

Invented calls ``S0000000…``: each a row in the store (``transcripts``, a four-turn
``turn_sets`` row, metadata ``date`` over one year, ``queue`` of six invented queues,
``channel``, ``duration_s``), inserted in batches; a version folder holding K themes
over a vocabulary of invented terms (Dirichlet word distributions), the D × K shares
(Dirichlet rows, written in chunks to a memory-mapped ``.npy``), the ids, and the viewer
tables built by the same code a publish runs; then the version is made current.
Nothing here is fitted: the shares are random, the timings are what matters.
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
import time
from pathlib import Path

import numpy as np

QUEUES = ("billing", "faults", "moving home", "meters", "payments plan", "complaints")
QUEUE_P = (0.32, 0.24, 0.14, 0.12, 0.1, 0.08)
CHANNELS = ("phone", "chat")
BATCH = 50_000


def _vocabulary(v: int, rng: np.random.Generator) -> list[str]:
    syllables = ["ka", "lo", "mi", "ra", "te", "vu", "sen", "dor", "pli", "fa", "qua", "zen"]
    words: set[str] = set()
    while len(words) < v:
        n = int(rng.integers(2, 4))
        words.add("".join(rng.choice(syllables, size=n)))
    return sorted(words)


def _store_rows(db: Path, ids: list[str], rng: np.random.Generator, vocab: list[str]) -> None:
    """Transcripts, their turns and metadata, inserted straight into the store's tables."""
    d = len(ids)
    start = np.datetime64("2025-12-01")
    days = rng.integers(0, 365, size=d)
    queues = rng.choice(len(QUEUES), size=d, p=QUEUE_P)
    channels = rng.choice(2, size=d, p=(0.8, 0.2))
    durations = np.maximum(20, rng.lognormal(5.5, 0.6, size=d)).astype(int)
    now = "2026-12-05T00:00:00+00:00"
    conn = sqlite3.connect(db)
    conn.execute("PRAGMA journal_mode=WAL")
    conn.execute("PRAGMA synchronous=OFF")
    for lo in range(0, d, BATCH):
        rows, turns, meta = [], [], []
        for i in range(lo, min(d, lo + BATCH)):
            tid = ids[i]
            w = [vocab[j] for j in rng.integers(0, len(vocab), size=6)]
            text = [
                ["Agent", "agent", None, None, "Thank you for calling, how can I help?"],
                ["Customer", "customer", None, None, f"I am calling about {w[0]} and {w[1]}."],
                ["Agent", "agent", None, None, f"I can see the {w[2]} on the {w[3]} here."],
                ["Customer", "customer", None, None, f"Thanks, the {w[4]} and {w[5]} too."],
            ]
            packed = json.dumps(text)
            digest = hashlib.sha1(tid.encode()).hexdigest()
            rows.append((i + 1, tid, f"synthetic/{tid}.txt", "txt", digest, 4, 30, 160, now))
            turns.append((i + 1, 2, 2, 0, packed))
            day = str(start + np.timedelta64(int(days[i]), "D"))
            meta += [
                (tid, "date", day, "manifest"),
                (tid, "queue", QUEUES[queues[i]], "manifest"),
                (tid, "channel", CHANNELS[channels[i]], "manifest"),
                (tid, "duration_s", str(int(durations[i])), "manifest"),
            ]
        with conn:
            conn.executemany(
                "INSERT INTO transcripts(id, tid, source, format, content_hash, n_turns, "
                "n_words, n_chars, run_id, added_at) VALUES (?,?,?,?,?,?,?,?,NULL,?)",
                rows,
            )
            conn.executemany(
                "INSERT INTO turn_sets(transcript, agent_turns, customer_turns, unknown_turns, "
                "turns) VALUES (?,?,?,?,?)",
                turns,
            )
            conn.executemany("INSERT INTO metadata(tid, key, value, origin) VALUES (?,?,?,?)", meta)
    conn.close()


def write_synthetic(root: Path, size: int, k: int, *, seed: int = 7, log=print) -> dict:
    """Write a workspace at ``root`` holding one published version of ``size`` calls.

    Returns the seconds each step took (``store``, ``shares``, ``tables``).
    """
    from talkthemes.versions.metadata import metadata_table
    from talkthemes.versions.tables import TABLES_DIR, build_and_write
    from talkthemes.workspace import Workspace

    rng = np.random.default_rng(seed)
    ws = Workspace(root)
    ws.init()
    times: dict[str, float] = {}
    ids = [f"S{i:07d}" for i in range(size)]
    vocab = _vocabulary(1500, rng)
    t0 = time.perf_counter()
    log(f"inserting {size:,} calls into the store …")
    _store_rows(ws.db_path, ids, rng, vocab)
    times["store"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    with ws.store() as store:
        theme_ids = store.reserve_theme_ids(k)
    folder = ws.versions_dir / "1"
    folder.mkdir(parents=True)
    topic_terms = rng.dirichlet(np.full(len(vocab), 0.05), size=k).astype(np.float32)
    np.save(folder / "topic_terms.npy", topic_terms, allow_pickle=False)
    shares = np.lib.format.open_memmap(
        folder / "doc_topics.npy", mode="w+", dtype=np.float32, shape=(size, k)
    )
    alpha = rng.gamma(2.0, 0.05, size=k)
    for lo in range(0, size, 200_000):
        hi = min(size, lo + 200_000)
        shares[lo:hi] = rng.dirichlet(alpha, size=hi - lo).astype(np.float32)
    shares.flush()
    (folder / "doc_ids.json").write_text(json.dumps(ids), encoding="utf-8")
    (folder / "vocabulary.json").write_text(json.dumps(vocab), encoding="utf-8")
    (folder / "prep.json").write_text(json.dumps({"excluded": []}), encoding="utf-8")
    order = np.argsort(-topic_terms, axis=1)
    names = [" ".join(vocab[j] for j in order[i, :3]) for i in range(k)]
    info = {
        "n": 1,
        "family": "nmf",
        "k": k,
        "seed": seed,
        "synthetic": True,
        "theme_ids": theme_ids,
        "suggested_names": names,
        "topic_weights": (alpha / alpha.sum()).tolist(),
        "prepare_settings": {"lang": "en"},
    }
    (folder / "version.json").write_text(json.dumps(info, indent=1), encoding="utf-8")
    times["shares"] = time.perf_counter() - t0

    log("building the viewer tables (as a publish does) …")
    t0 = time.perf_counter()
    doc_topics = np.load(folder / "doc_topics.npy", mmap_mode="r", allow_pickle=False)
    with ws.store() as store:
        meta = metadata_table(ids, store.metadata_for(None))
    times["tables: metadata"] = time.perf_counter() - t0
    build_and_write(folder / TABLES_DIR, doc_topics, ids, meta, theme_ids, topic_terms)
    times["tables"] = time.perf_counter() - t0
    del meta
    with ws.store() as store:
        store.publish_version(
            1,
            info,
            [{"theme_id": t, "position": i, "status": "new"} for i, t in enumerate(theme_ids)],
        )
    return times
