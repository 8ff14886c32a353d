"""Scoring themes against a planted corpus's answer key: the core of the quality harness.

A planted corpus (:mod:`talkthemes.demo.planted`) goes through the product's own code paths:
:func:`talkthemes.ingest.run.ingest`, :func:`talkthemes.prepare.run.run_prepare`,
:func:`talkthemes.sweep.run_sweep`, then for each (family, K) the seed that
:func:`talkthemes.versions.pick_cell` would publish, fitted on every transcript by
:func:`talkthemes.versions.fit_version` (what ``publish`` fits). Each call's **lead theme**
(its largest share) is compared with its true reason by scikit-learn's normalised mutual
information and adjusted Rand index.

What is scored (see docs/methods.md, "Measured on planted corpora"):

- the **regular calls**, each with its true lead reason; the short calls (hang-ups, wrong
  numbers, small talk) have no reason and are left out of NMI and ARI;
- a regular call the prep excluded (too few terms) counts as one more predicted group,
  "unthemed", so losing calls costs agreement;
- how evenly lead themes split the prepared transcripts: the largest lead theme's share and
  the normalised entropy of the lead-theme shares (1 = all themes lead equally many);
- whether short calls gather in a theme of their own: the largest share of short calls
  among the calls any theme leads (themes leading at least five calls).

``bench/quality.py`` prints the tables; ``tests/test_quality_planted.py`` runs a small subset.
"""

from __future__ import annotations

import math
from collections import Counter
from collections.abc import Sequence
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from sklearn.cluster import KMeans
from sklearn.feature_extraction.text import TfidfTransformer
from sklearn.metrics import adjusted_rand_score, normalized_mutual_info_score

from talkthemes.demo.planted import PlantedFiles, PlantedSpec, read_truth, write_planted
from talkthemes.ingest.run import ingest
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.prepare.run import run_prepare
from talkthemes.sweep.run import SweepResult, run_sweep
from talkthemes.sweep.scoring import seed_agreement
from talkthemes.versions.fit import fit_version
from talkthemes.versions.publish import pick_cell
from talkthemes.workspace import Workspace, atomic_write_text

__all__ = [
    "LeadScore",
    "PlantedWorkspace",
    "build_workspace",
    "fit_leads",
    "kmeans_leads",
    "score_leads",
    "sweep_and_score",
]

#: Predicted group of a regular call that the prep excluded.
UNTHEMED = -1
#: Themes leading fewer calls are left out of the short-call check.
_MIN_THEME_CALLS = 5


@dataclass
class PlantedWorkspace:
    """A planted corpus ingested and prepared in its own workspace.

    Attributes
    ----------
    workspace : Workspace
    files : PlantedFiles
    truth : list of dict
        ``truth.csv`` rows (``call_id, kind, reason, secondary_reason``, ...).
    prep_hash : str
    corpus : PreparedCorpus
    """

    workspace: Workspace
    files: PlantedFiles
    truth: list[dict[str, str]]
    prep_hash: str
    corpus: PreparedCorpus

    @property
    def true_k(self) -> int:
        """Number of distinct true lead reasons."""
        return len({row["reason"] for row in self.truth if row["reason"]})


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(value)
    return '"' + str(value).replace("\\", "\\\\").replace('"', '\\"') + '"'


def build_workspace(
    root: Path, spec: PlantedSpec, *, settings: dict[str, dict[str, Any]] | None = None
) -> PlantedWorkspace:
    """Write a planted corpus under ``root/source`` and ingest and prepare it in ``root/ws``.

    Parameters
    ----------
    root : Path
        A new or empty folder.
    spec : PlantedSpec
    settings : dict, optional
        ``{section: {key: value}}`` written to the workspace's ``talkthemes.toml``
        (defaults for everything else).

    Returns
    -------
    PlantedWorkspace

    Raises
    ------
    RuntimeError
        When ingest rejected or dropped a call: the answer key would no longer match.
    """
    root = Path(root)
    files = write_planted(root / "source", spec)
    ws = Workspace(root / "ws")
    ws.init()
    if settings:
        lines = []
        for section, values in settings.items():
            lines.append(f"[{section}]")
            lines += [f"{key} = {_toml_value(value)}" for key, value in values.items()]
        atomic_write_text(ws.settings_path, "\n".join(lines) + "\n")
    with ws.lock("quality"):
        report = ingest(ws, [files.exports], manifests=[files.manifest])
        added = report.total("added")
        if report.rejects or added != spec.calls:
            raise RuntimeError(
                f"{files.exports}: ingest added {added} of {spec.calls} planted calls "
                f"({len(report.rejects)} rejected)"
            )
        prep = run_prepare(ws)
    corpus = PreparedCorpus.load(prep.path)
    return PlantedWorkspace(ws, files, read_truth(files.truth), prep.prep_hash, corpus)


def fit_leads(pw: PlantedWorkspace, family: str, k: int, seed: int) -> np.ndarray:
    """Fit ``family`` at ``k`` with ``seed`` on every prepared transcript, as ``publish`` does.

    Returns
    -------
    ndarray of int
        The lead theme (row of the largest share) of each prepared transcript.
    """
    fitted = fit_version(
        pw.workspace, pw.corpus, family=family, k=k, seed=seed, prep_hash=pw.prep_hash
    )
    return np.argmax(fitted.doc_topics, axis=1)


def kmeans_leads(corpus: PreparedCorpus, k: int, seed: int, *, n_init: int = 10) -> np.ndarray:
    """The baseline: scikit-learn k-means on the prep's counts, TF-IDF weighted, rows L2-normalised.

    ``TfidfTransformer`` with its defaults (smooth idf, L2 row norm), then ``KMeans`` with
    ``n_init`` restarts; the best of them (lowest inertia) gives each transcript's cluster.
    """
    weights = TfidfTransformer().fit_transform(corpus.counts.astype(np.float64))
    model = KMeans(n_clusters=k, n_init=n_init, random_state=seed)
    return model.fit_predict(weights)


@dataclass(frozen=True)
class LeadScore:
    """Agreement of lead themes with the truth, and how the lead themes split the corpus.

    Attributes
    ----------
    nmi, ari : float
        Over the regular calls: lead theme (or unthemed) vs true lead reason.
    scored : int
        Regular calls scored.
    unthemed : int
        Regular calls the prep excluded.
    largest_share : float
        Largest share of prepared transcripts led by one theme.
    evenness : float
        Entropy of the lead-theme shares over the log of the number of themes.
    short_kept : int
        Short calls (no reason) that reached the model.
    short_theme : float
        Largest share of short calls among the calls one theme leads (themes leading at
        least five calls); 0 when no short call reached the model.
    """

    nmi: float
    ari: float
    scored: int
    unthemed: int
    largest_share: float
    evenness: float
    short_kept: int
    short_theme: float

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dict."""
        return asdict(self)


def score_leads(
    truth: Sequence[dict[str, str]], doc_ids: Sequence[str], leads: np.ndarray, k: int
) -> LeadScore:
    """Score lead themes against the answer key (see the module docstring for the rules).

    Parameters
    ----------
    truth : sequence of dict
        ``truth.csv`` rows.
    doc_ids : sequence of str
        The prepared transcripts, in the order of ``leads``.
    leads : ndarray of int
        Lead theme of each prepared transcript.
    k : int
        Number of themes the model had (normalises the evenness).
    """
    lead_of = dict(zip(doc_ids, (int(x) for x in leads), strict=True))
    regular = [row for row in truth if row["reason"]]
    true = [row["reason"] for row in regular]
    pred = [lead_of.get(row["call_id"], UNTHEMED) for row in regular]
    counts = np.bincount(np.asarray(leads, dtype=np.int64), minlength=k).astype(float)
    shares = counts / max(counts.sum(), 1.0)
    nonzero = shares[shares > 0]
    entropy = float(-(nonzero * np.log(nonzero)).sum())
    short_ids = {row["call_id"] for row in truth if not row["reason"]}
    per_theme: Counter[int] = Counter()
    short_per_theme: Counter[int] = Counter()
    for call_id, lead in lead_of.items():
        per_theme[lead] += 1
        short_per_theme[lead] += call_id in short_ids
    short_theme = max(
        (short_per_theme[t] / n for t, n in per_theme.items() if n >= _MIN_THEME_CALLS),
        default=0.0,
    )
    return LeadScore(
        nmi=float(normalized_mutual_info_score(true, pred)),
        ari=float(adjusted_rand_score(true, pred)),
        scored=len(regular),
        unthemed=sum(p == UNTHEMED for p in pred),
        largest_share=float(shares.max()) if len(shares) else 0.0,
        evenness=entropy / math.log(k) if k > 1 else 1.0,
        short_kept=sum(call_id in short_ids for call_id in lead_of),
        short_theme=float(short_theme),
    )


def sweep_and_score(
    pw: PlantedWorkspace,
    *,
    ks: Sequence[int],
    families: Sequence[str] = ("lda", "nmf"),
    seeds: int = 2,
    workers: int = 0,
) -> tuple[pd.DataFrame, SweepResult]:
    """Sweep ``ks`` × ``families`` × ``seeds`` and score the published-style fit of each K.

    For each (family, K) the seed :func:`~talkthemes.versions.pick_cell` chooses (the medoid
    by seed agreement) is refitted on every transcript and its lead themes scored.

    Returns
    -------
    rows : DataFrame
        One row per (family, K): ``family, k, seed`` (the one fitted), the
        :class:`LeadScore` fields, ``stability``, ``c_npmi`` and ``cell_lead_max`` (sweep
        means; the last is the largest lead share of the cells' training transcripts, what
        the catch-all check reads), ``recommended`` (this K is the family's
        recommendation), ``weak`` and ``catch_all`` (the recommendation set this K aside).
    sweep : SweepResult
    """
    ws = pw.workspace
    grid = ",".join(str(k) for k in sorted(set(ks)))
    with ws.lock("quality"):
        result = run_sweep(ws, k=grid, families=list(families), seeds=seeds, workers=workers)
    with ws.store() as store:  # the stored cells keep their top terms, as publish reads them
        stored = pd.DataFrame([c.row() for c in store.cells(result.sweep_id)])
    agreement = seed_agreement(stored, ws.settings().sweep.stability_topn)
    cells = result.cells
    rows = []
    for family in families:
        rec = result.recommendations.get(family)
        for k in sorted(set(ks)):
            chosen = pick_cell(agreement, k=k, family=family, cell=None)
            at = cells[(cells["family"] == family) & (cells["k"] == k)]
            leads = fit_leads(pw, family, k, int(chosen["seed"]))
            score = score_leads(pw.truth, pw.corpus.doc_ids, leads, k)
            rows.append(
                {
                    "family": family,
                    "k": k,
                    "seed": int(chosen["seed"]),
                    **score.to_dict(),
                    "stability": float(at["stability"].mean()),
                    "c_npmi": float(at["c_npmi"].mean()),
                    "cell_lead_max": float(at["largest_lead_share"].mean())
                    if "largest_lead_share" in at.columns
                    else float("nan"),
                    "recommended": rec is not None and rec.k == k,
                    "weak": bool(rec.weak) if rec is not None else True,
                    "catch_all": rec is not None and k in rec.catch_all,
                }
            )
    return pd.DataFrame(rows), result
