"""A small workspace with nothing random in it, and the JSON documents the CLI prints of it.

Twenty-four invented calls (with a manifest, a likely re-export and an empty file) are
ingested; a prep of their token lists is installed directly; a finished sweep is recorded
through the store with a scored ``cells.parquet`` written by hand, and a later one whose
process was killed after its first cell; a version is written from
fixed arrays (no model is fitted), labelled, hidden, refreshed with nothing new and made
current again. Every value the documents show is therefore the same on every machine, so
they can be compared, key for key, with the documents recorded in ``tests/cli/golden/``.

Values that depend on when or where the workspace was built (times, the workspace path,
the sweep's process) are replaced by placeholders (:func:`normalise`).
"""

from __future__ import annotations

import csv
import json
import re
import socket
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from tests.support.preps import install_prep
from typer.testing import CliRunner

from talkthemes.cli import app
from talkthemes.ingest.run import ingest
from talkthemes.sweep.grid import build_cells, grid_key, parse_k
from talkthemes.sweep.run import sweep_settings
from talkthemes.versions.fit import FittedVersion, prep_record
from talkthemes.versions.write import write_version
from talkthemes.workspace import Workspace

BLOCKS = (
    ("meter", "reading", "estimate", "photo", "digits", "register", "submit", "actual"),
    ("refund", "credit", "balance", "overpaid", "cheque", "transfer", "account", "statement"),
    ("outage", "power", "crew", "street", "restore", "fault", "cable", "storm"),
)
N_CALLS = 24
SWEEP_K = "2,3"
_TIME = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}([+-]\d{2}:\d{2}|Z)?$")


def _ids() -> list[str]:
    return [f"c{i:03d}" for i in range(N_CALLS)]


def _write_calls(folder: Path) -> Path:
    """The calls, a copy of one under another name, an empty file; the manifest."""
    folder.mkdir(parents=True)
    for i, tid in enumerate(_ids()):
        words = " ".join(BLOCKS[i % 3] + BLOCKS[(i + 1) % 3])
        (folder / f"{tid}.txt").write_text(
            f"Agent: Good morning, how can I help?\nCustomer: {words} call {i}\n"
            f"Agent: Thanks, that is noted for call {i}.\n",
            encoding="utf-8",
        )
    (folder / "c900.txt").write_bytes((folder / "c000.txt").read_bytes())
    (folder / "c901.txt").write_bytes(b"")
    manifest = folder.parent / "manifest.csv"
    with manifest.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(["call_id", "date", "queue"])
        for i, tid in enumerate(_ids()):
            writer.writerow([tid, f"2026-0{4 + i % 3}-1{i % 10}", ("billing", "faults")[i % 2]])
        writer.writerow(["c999", "2026-07-01", "billing"])  # no such transcript
    return manifest


def _tokens(tids: list[str]) -> list[list[str]]:
    """Token lists of the stored calls: call ``c<d>`` mostly of block ``d % 3``."""
    docs = []
    for tid in tids:
        d = int(tid[1:]) % N_CALLS
        own, other = BLOCKS[d % 3], BLOCKS[(d + 1) % 3]
        docs.append([own[(d + i) % 8] for i in range(24)] + [other[(d + i) % 8] for i in range(4)])
    return docs


def _record_sweep(ws: Workspace, prep_hash: str) -> None:
    """A finished NMF sweep over K = 2, 3 with two seeds, as :func:`run_sweep` records one."""
    settings = sweep_settings(ws, k=SWEEP_K, families=["nmf"], seeds=2)
    specs = build_cells(parse_k(settings.k), settings.families, settings.seeds)
    rows = []
    info: dict[str, Any] = {
        "grid_key": grid_key(prep_hash, specs, settings),
        "k": parse_k(settings.k),
        "families": list(settings.families),
        "seeds": settings.seeds,
        "settings": settings.model_dump(),
        "run": {"pid": 1, "host": "elsewhere"},
    }
    with ws.store() as store:
        sid = store.start_sweep(prep_hash, info)
        for i, spec in enumerate(specs):
            tops = [[(t * 8 + j + spec.seed) % 24 for j in range(10)] for t in range(spec.k)]
            metrics = {
                "fit_seconds": 0.25 * (i + 1),
                "reconstruction_error": 3.5 - 0.5 * i,
                "top_terms": tops,
                "peak_memory_mb": 100.0 + i,
            }
            store.add_cell(sid, spec.cell, spec.family, spec.k, spec.seed, metrics)
            row = {"cell": spec.cell, "family": spec.family, "k": spec.k, "seed": spec.seed}
            row.update({k: v for k, v in metrics.items() if k != "top_terms"})
            row.update(c_npmi=0.05 * spec.k + 0.01 * spec.seed, diversity=0.9, stability=0.8)
            rows.append(row)
        recommendation = {
            "family": "nmf",
            "k": 3,
            "rank_by": "c_npmi",
            "weak": False,
            "rule": "the highest mean C_NPMI among the stable K",
            "reasons": ["K=3 has the highest mean C_NPMI (0.155)"],
            "runners_up": [{"k": 2, "coherence": 0.105, "stability": 0.8, "why_not": "lower"}],
        }
        store.finish_sweep(sid, {**info, "recommendations": {"nmf": recommendation}})
    folder = ws.sweeps_dir / str(sid)
    folder.mkdir(parents=True)
    pd.DataFrame(rows).to_parquet(folder / "cells.parquet", index=False)


def _record_killed_sweep(ws: Workspace, prep_hash: str) -> None:
    """A sweep over K = 4 whose process was killed after one of its two cells: its record
    still says ``running``, with a process id no process can have."""
    info = {
        "grid_key": "killed",
        "k": [4],
        "families": ["nmf"],
        "seeds": 2,
        "run": {"pid": 99_999_999, "host": socket.gethostname()},
    }
    with ws.store() as store:
        sid = store.start_sweep(prep_hash, info)
        tops = [[(t * 5 + j) % 24 for j in range(10)] for t in range(4)]
        store.add_cell(sid, "nmf-k004-s0", "nmf", 4, 0, {"fit_seconds": 1.5, "top_terms": tops})


def _fixed_version(ws: Workspace, corpus: Any) -> None:
    """Version 1: three themes from fixed arrays (one block of terms each)."""
    k, v = 3, len(corpus.vocabulary)
    phi = np.full((k, v), 0.001)
    for t in range(k):
        phi[t, t * 8 : t * 8 + 8] = np.arange(8, 0, -1) + 0.1 * t
    phi /= phi.sum(axis=1, keepdims=True)
    theta = np.full((corpus.n_docs, k), 0.1)
    for d in range(corpus.n_docs):
        theta[d, d % 3] = 0.7 + 0.01 * d
    theta /= theta.sum(axis=1, keepdims=True)
    info = {
        "family": "nmf",
        "k": k,
        "seed": 0,
        "prep_hash": corpus.info["hash"],
        "n_docs": corpus.n_docs,
        "n_terms": v,
        "topic_weights": [0.4, 0.35, 0.25],
        "coherence": {"c_npmi": [0.21, 0.12, -0.05], "c_v": [0.61, 0.52, 0.43]},
        "topn": 10,
        "params": {},
        "fit_seconds": 0.5,
        "prepare_settings": {},
        "libraries": {},
    }
    fitted = FittedVersion(
        family="nmf",
        k=k,
        seed=0,
        topic_terms=phi,
        doc_topics=theta,
        doc_ids=list(corpus.doc_ids),
        vocabulary=list(corpus.vocabulary),
        state_arrays={"components": phi},
        state_params={},
        info=info,
        prep_info=prep_record(corpus),
    )
    write_version(ws, fitted, extra_info={"cell": "nmf-k003-s0", "sweep_id": 1})


def _run(runner: CliRunner, ws: Workspace, *args: str, code: int = 0) -> dict[str, Any]:
    result = runner.invoke(app, [*args, "--workspace", str(ws.root), "--json"])
    assert result.exit_code == code, (args, result.output)
    return json.loads(result.stdout)


def build_documents(base: Path) -> dict[str, Any]:
    """Build the workspace under ``base`` and return the documents, normalised, by name.

    ``status`` after ingest; ``sweep`` (the recorded sweep, found finished); ``label``
    twice; ``themes``; ``refresh`` (nothing new); ``status`` at the end; ``publish
    --version 1``.
    """
    runner = CliRunner()
    manifest = _write_calls(base / "calls")
    ws = Workspace(base / "ws")
    ws.init()
    docs: dict[str, Any] = {}
    with ws.lock("test"):
        ingest(ws, [base / "calls"], manifests=[manifest])
    docs["status_ingested"] = _run(runner, ws, "status")
    with ws.lock("test"):
        with ws.store() as store:
            tids = store.transcript_ids()
        corpus = install_prep(ws, [t for b in BLOCKS for t in b], _tokens(tids), tids)
        _record_sweep(ws, corpus.info["hash"])
    docs["sweep"] = _run(runner, ws, "sweep", "--k", SWEEP_K, "--family", "nmf", "--seeds", "2")
    with ws.lock("test"):
        _record_killed_sweep(ws, corpus.info["hash"])
        _fixed_version(ws, corpus)
    docs["label"] = _run(runner, ws, "label", "2", "Refunds & credit", "--note", "=SUM(A1)")
    docs["label_hidden"] = _run(runner, ws, "label", "3", "--hide")
    docs["themes"] = _run(runner, ws, "themes")
    docs["refresh"] = _run(runner, ws, "refresh")
    docs["status"] = _run(runner, ws, "status")
    docs["publish_version"] = _run(runner, ws, "publish", "--version", "1")
    return normalise(docs, ws.root)


def normalise(doc: Any, root: Path) -> Any:
    """``doc`` with times, the workspace path and wall-clock seconds replaced by
    placeholders."""
    if isinstance(doc, dict):
        return {k: "<seconds>" if k == "seconds" else normalise(v, root) for k, v in doc.items()}
    if isinstance(doc, list):
        return [normalise(v, root) for v in doc]
    if isinstance(doc, str):
        if _TIME.match(doc):
            return "<time>"
        return doc.replace(str(root), "<workspace>")
    return doc
