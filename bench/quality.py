"""Quality harness: themes measured against planted corpora whose true reasons are known.

Usage::

    .venv/bin/python bench/quality.py [--reasons 6,10,16] [--seeds 3] [--calls N]
                                      [--model-seeds 3] [--quick] [--json] [--keep DIR]
                                      [--secondary 0.25] [--short 0.04] [--noise 0]

For every planted setting (number of true reasons) and corpus seed: generate the corpus
(:mod:`talkthemes.demo.planted`, an invented rail operator's customer line) in a temporary
workspace, ingest, prepare and sweep K on an even grid from half to twice the truth
(``--quick``: truth − 2 … truth + 2) for LDA and NMF with ``--model-seeds`` seeds,
through the product's own functions (see :mod:`talkthemes.demo.harness`). Then per family
and K it prints: NMI and ARI of each regular call's lead theme vs its true reason
(scikit-learn; short no-reason calls left out, calls the prep excluded count as "unthemed"),
seed-to-seed stability and mean C_NPMI from the sweep, the largest lead theme's share and
the evenness of the lead themes, the sweep cells' own largest lead share times K (what the
catch-all check reads), the largest share of short calls in one theme, and which K the
product recommends (``*``; ``w`` when weak; ``c`` marks a K set aside as a catch-all).
Also the k-means baseline at the true K (TF-IDF, L2-normalised rows, ``n_init=10``) and a
summary across corpora: NMI/ARI at the true K, recommended K within ±2 of the truth,
stability, what the catch-all check set aside and its margins, and how each candidate rule
for the family ``publish --recommended`` takes fares against the truth (the product's own
rule first).

``--json`` prints everything as one JSON document instead of the tables. Progress goes to
stderr. Not a test: the figures go to docs/methods.md ("Measured on planted corpora").
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import platform
import shlex
import shutil
import sys
import tempfile
import time
from importlib.metadata import version
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

TRUE_K_TOLERANCE = 2
_QUICK_CALLS_PER_REASON = 60
_CALLS_PER_REASON = 120


def k_grid(true_k: int, quick: bool) -> list[int]:
    """Topic counts swept for a corpus with ``true_k`` reasons.

    An even grid from half to twice the truth (step 1 up to 15 reasons, then about an
    eighth of the truth), so the truth's ±2 neighbourhood is not sampled more densely than
    the rest; ``quick``: truth − 2 … truth + 2 only (then "within ±2" says nothing).
    """
    if quick:
        return list(range(max(2, true_k - TRUE_K_TOLERANCE), true_k + TRUE_K_TOLERANCE + 1))
    step = max(1, round(true_k / 8))
    return list(range(max(2, true_k // 2), 2 * true_k + 1, step))


def _log(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


def run_corpus(root: Path, reasons: int, seed: int, args: argparse.Namespace) -> dict[str, Any]:
    """Generate, ingest, prepare, sweep and score one planted corpus."""
    from talkthemes.demo.harness import build_workspace, kmeans_leads, score_leads, sweep_and_score
    from talkthemes.demo.planted import PlantedSpec
    from talkthemes.sweep.recommend import best_family

    calls = args.calls or reasons * (_QUICK_CALLS_PER_REASON if args.quick else _CALLS_PER_REASON)
    spec = PlantedSpec(reasons=reasons, calls=calls, seed=seed, secondary=args.secondary,
                       short=args.short, noise=args.noise)  # fmt: skip
    label = f"[{reasons} reasons, corpus seed {seed}, {calls} calls]"
    t0 = time.perf_counter()
    _log(f"{label} generate, ingest, prepare …")
    pw = build_workspace(root, spec)
    t1 = time.perf_counter()
    ks = k_grid(pw.true_k, args.quick)
    families = args.families.split(",")
    _log(f"{label} sweep K={','.join(map(str, ks))} × {families} × {args.model_seeds} seeds …")
    rows, sweep = sweep_and_score(
        pw, ks=ks, families=families, seeds=args.model_seeds, workers=args.workers
    )
    t2 = time.perf_counter()
    _log(f"{label} k-means baseline at K={pw.true_k} …")
    base = score_leads(pw.truth, pw.corpus.doc_ids, kmeans_leads(pw.corpus, pw.true_k, seed),
                       pw.true_k)  # fmt: skip
    regular = [row["reason"] for row in pw.truth if row["reason"]]
    true_share = max(regular.count(r) for r in set(regular)) / len(regular)
    recs = sweep.recommendations
    picked = best_family(recs, sweep.cells) if recs else ""
    return {
        "reasons": reasons,
        "seed": seed,
        "calls": calls,
        "true_k": pw.true_k,
        "true_largest_share": true_share,
        "prepared": pw.corpus.n_docs,
        "terms": pw.corpus.n_terms,
        "excluded": len(pw.corpus.excluded),
        "short_calls": sum(1 for row in pw.truth if not row["reason"]),
        "ks": ks,
        "rows": rows.to_dict(orient="records"),
        "kmeans": base.to_dict(),
        "recommended": {
            f: {"k": r.k, "weak": r.weak, "catch_all": list(r.catch_all)} for f, r in recs.items()
        },
        "publish_family": picked,
        "seconds": {"prepare": round(t1 - t0, 1), "sweep_and_score": round(t2 - t1, 1)},
    }


# -- printing -------------------------------------------------------------------------


def _print_corpus(c: dict[str, Any]) -> None:
    print(
        f"\n## {c['reasons']} reasons, corpus seed {c['seed']}: {c['calls']} calls "
        f"({c['short_calls']} short), {c['prepared']} prepared ({c['excluded']} excluded), "
        f"{c['terms']} terms; true K = {c['true_k']}, largest true reason "
        f"{c['true_largest_share']:.1%}; {c['seconds']['prepare']:.0f} s + "
        f"{c['seconds']['sweep_and_score']:.0f} s"
    )
    head = (f"{'family':6} {'K':>3} {'NMI':>6} {'ARI':>6} {'stab':>5} {'C_NPMI':>7} "
            f"{'lead max':>8} {'cell×K':>6} {'even':>5} {'short@':>6} {'unthemed':>8}"
            "  rec")  # fmt: skip
    print(head)
    for r in c["rows"]:
        mark = ("w" if r["weak"] else "*") if r["recommended"] else ""
        mark += "c" if r.get("catch_all") else ""
        cell = r.get("cell_lead_max", float("nan")) * r["k"]
        print(
            f"{r['family']:6} {r['k']:>3} {r['nmi']:6.3f} {r['ari']:6.3f} {r['stability']:5.2f} "
            f"{r['c_npmi']:7.3f} {r['largest_share']:8.1%} {cell:6.2f} {r['evenness']:5.2f} "
            f"{r['short_theme']:6.0%} {r['unthemed']:>8}  {mark}"
        )
    b = c["kmeans"]
    print(
        f"{'kmeans':6} {c['true_k']:>3} {b['nmi']:6.3f} {b['ari']:6.3f} {'':>5} {'':>7} "
        f"{b['largest_share']:8.1%} {'':>6} {b['evenness']:5.2f} {b['short_theme']:6.0%} "
        f"{b['unthemed']:>8}"
    )
    recs = ", ".join(
        f"{f} K={r['k']}{' (weak)' if r['weak'] else ''}" for f, r in c["recommended"].items()
    )
    print(f"recommended: {recs}; publish --recommended would take {c['publish_family']}")


def summarise(corpora: list[dict[str, Any]]) -> pd.DataFrame:
    """One row per (reasons, family) over the corpus seeds, plus k-means."""
    out = []
    for reasons in sorted({c["reasons"] for c in corpora}):
        group = [c for c in corpora if c["reasons"] == reasons]
        families = sorted({r["family"] for c in group for r in c["rows"]})
        for family in families:
            at_true, best, rec_rows, hits = [], [], [], 0
            for c in group:
                rows = [r for r in c["rows"] if r["family"] == family]
                at_true += [r for r in rows if r["k"] == c["true_k"]]
                best.append(max(rows, key=lambda r: r["nmi"]))
                rec = c["recommended"].get(family)
                if rec is not None:
                    rec_rows += [r for r in rows if r["k"] == rec["k"]]
                    hits += abs(rec["k"] - c["true_k"]) <= TRUE_K_TOLERANCE
            out.append({
                "reasons": reasons, "family": family, "corpora": len(group),
                "nmi_true_k": np.mean([r["nmi"] for r in at_true]),
                "ari_true_k": np.mean([r["ari"] for r in at_true]),
                "stability_true_k": np.mean([r["stability"] for r in at_true]),
                "best_nmi": np.mean([r["nmi"] for r in best]),
                "best_nmi_k": "/".join(str(r["k"]) for r in best),
                "recommended_k": "/".join(str(r["k"]) for r in rec_rows),
                "within_2": hits,
                "weak": sum(r["weak"] for r in rec_rows),
                "stability_rec_k": np.mean([r["stability"] for r in rec_rows]),
                "nmi_rec_k": np.mean([r["nmi"] for r in rec_rows]),
                "lead_max_rec_k": np.mean([r["largest_share"] for r in rec_rows]),
            })  # fmt: skip
        base = [c["kmeans"] for c in group]
        out.append({
            "reasons": reasons, "family": "kmeans", "corpora": len(group),
            "nmi_true_k": np.mean([b["nmi"] for b in base]),
            "ari_true_k": np.mean([b["ari"] for b in base]),
            "lead_max_rec_k": np.nan,
        })  # fmt: skip
    frame = pd.DataFrame(out)
    for column in ("within_2", "weak"):  # counts; empty on the k-means rows
        frame[column] = frame[column].astype("Int64")
    return frame


def _print_summary(summary: pd.DataFrame, corpora: list[dict[str, Any]], quick: bool) -> None:
    print("\n## Summary (means over corpus seeds; K lists are per corpus seed)")
    print(
        f"{'reasons':>7} {'family':6} {'NMI@T':>6} {'ARI@T':>6} {'stab@T':>6} "
        f"{'best NMI':>8} {'at K':>9} {'rec K':>9} {'±2':>4} {'weak':>4} {'stab@rec':>8} "
        f"{'NMI@rec':>7} {'lead max@rec':>12}"
    )
    for _, s in summary.iterrows():
        if s["family"] == "kmeans":
            print(f"{s['reasons']:>7} {'kmeans':6} {s['nmi_true_k']:6.3f} {s['ari_true_k']:6.3f}")
            continue
        print(
            f"{s['reasons']:>7} {s['family']:6} {s['nmi_true_k']:6.3f} {s['ari_true_k']:6.3f} "
            f"{s['stability_true_k']:6.2f} {s['best_nmi']:8.3f} {s['best_nmi_k']:>9} "
            f"{s['recommended_k']:>9} {int(s['within_2']):>2}/{s['corpora']} {int(s['weak']):>4} "
            f"{s['stability_rec_k']:8.2f} {s['nmi_rec_k']:7.3f} {s['lead_max_rec_k']:12.1%}"
        )
    n = len(corpora)
    for family in sorted({r["family"] for c in corpora for r in c["rows"]}):
        hits = sum(
            abs(c["recommended"][family]["k"] - c["true_k"]) <= TRUE_K_TOLERANCE
            for c in corpora
            if family in c["recommended"]
        )
        print(
            f"{family}: recommended K within ±{TRUE_K_TOLERANCE} of the truth on {hits}/{n} corpora"
        )
    if quick:
        print(f"(--quick swept only truth ± {TRUE_K_TOLERANCE}: the lines above say nothing)")
    _print_catch_all(corpora)
    _print_family_rules(corpora)


def _print_catch_all(corpora: list[dict[str, Any]]) -> None:
    """What the catch-all check did: K near the truth set aside, and the margins it had."""
    rows = [
        (c, r) for c in corpora for r in c["rows"] if np.isfinite(r.get("cell_lead_max", np.nan))
    ]
    if not rows:
        return
    near = [(c, r) for c, r in rows if abs(r["k"] - c["true_k"]) <= TRUE_K_TOLERANCE]
    aside = sum(bool(r.get("catch_all")) for _, r in rows)
    aside_near = sum(bool(r.get("catch_all")) for _, r in near)
    small = [r["cell_lead_max"] * r["k"] for _, r in rows if r["k"] <= 7]
    large = [r["cell_lead_max"] for _, r in rows if r["k"] >= 8]
    print(
        f"catch-all check: {aside} of {len(rows)} (family, K) set aside, {aside_near} of "
        f"{len(near)} within ±{TRUE_K_TOLERANCE} of the truth; largest cell lead share × K at "
        f"K ≤ 7: {max(small, default=float('nan')):.2f}; largest cell lead share at K ≥ 8: "
        f"{max(large, default=float('nan')):.1%}"
    )


def _family_rules() -> dict[str, Any]:
    """Candidate rules for the family ``publish --recommended`` takes: name → sort key of
    ``(family, recommendation, row at its K)``, the highest taken."""

    def usable(rec: dict[str, Any]) -> bool:
        return not rec["weak"] and rec["k"] not in rec.get("catch_all", [])

    return {
        "usable, then higher C_NPMI": lambda f, rec, row: (usable(rec), row["c_npmi"]),
        "usable, then higher stability": lambda f, rec, row: (usable(rec), row["stability"]),
        "usable, then LDA": lambda f, rec, row: (usable(rec), f == "lda"),
        "usable, then NMF": lambda f, rec, row: (usable(rec), f == "nmf"),
    }


def _print_family_rules(corpora: list[dict[str, Any]]) -> None:
    """Each candidate family rule against the truth: how often it took the family whose
    recommended K agrees better with the true reasons, and the mean NMI of what it took."""
    n = len(corpora)
    picks: dict[str, list[float]] = {"publish --recommended (the product's rule)": []}
    rules = _family_rules()
    picks.update({name: [] for name in rules})
    best_hits = dict.fromkeys(picks, 0)
    oracle = []
    for c in corpora:
        at_rec = {
            f: next(r for r in c["rows"] if r["family"] == f and r["k"] == rec["k"])
            for f, rec in c["recommended"].items()
        }
        top = max(r["nmi"] for r in at_rec.values())
        oracle.append(top)
        chosen = {"publish --recommended (the product's rule)": c["publish_family"]}
        for name, key in rules.items():
            chosen[name] = max(at_rec, key=lambda f: key(f, c["recommended"][f], at_rec[f]))
        for name, family in chosen.items():
            nmi = at_rec[family]["nmi"] if family in at_rec else float("nan")
            picks[name].append(nmi)
            best_hits[name] += nmi >= top
    print(f"family rules (NMI at the recommended K of the family taken; best possible "
          f"{np.mean(oracle):.3f}):")  # fmt: skip
    for name, values in picks.items():
        print(f"  {name:44} took the better family on {best_hits[name]}/{n} corpora, "
              f"mean NMI {np.nanmean(values):.3f}")  # fmt: skip


def main() -> None:
    from talkthemes.config import SweepSettings

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--reasons", default="6,10,16", help="true reason counts, e.g. 6,10,16")
    ap.add_argument("--seeds", type=int, default=3, help="planted corpora per reason count")
    ap.add_argument("--calls", type=int, default=0,
                    help=f"calls per corpus (default {_CALLS_PER_REASON} per reason, "
                         f"{_QUICK_CALLS_PER_REASON} with --quick)")  # fmt: skip
    ap.add_argument(
        "--model-seeds",
        type=int,
        default=SweepSettings().seeds,
        help="sweep seeds per (family, K); default: the product's [sweep] seeds",
    )
    ap.add_argument("--families", default="lda,nmf")
    ap.add_argument("--secondary", type=float, default=0.25, help="share with a second reason")
    ap.add_argument("--short", type=float, default=0.04, help="share of short no-reason calls")
    ap.add_argument("--noise", type=float, default=0.0, help="per-word ASR-like error rate")
    ap.add_argument("--workers", type=int, default=0, help="Dask workers; 0 = one per core")
    ap.add_argument("--quick", action="store_true",
                    help="K = truth-2..truth+2 only, fewer calls")  # fmt: skip
    ap.add_argument("--json", action="store_true", help="print one JSON document, no tables")
    ap.add_argument("--keep", type=Path, default=None, help="keep the workspaces under DIR")
    args = ap.parse_args()
    try:
        reason_counts = [int(x) for x in args.reasons.split(",") if x]
    except ValueError:
        ap.error(f"--reasons {args.reasons!r}: expected a list of integers such as 6,10,16")
    if args.seeds < 1 or args.model_seeds < 2:
        ap.error("--seeds must be ≥ 1 and --model-seeds ≥ 2 (stability needs two seeds)")

    command = " ".join(["bench/quality.py", *map(shlex.quote, sys.argv[1:])])
    started = dt.datetime.now().astimezone()
    base = args.keep or Path(tempfile.mkdtemp(prefix="tt-quality-"))
    corpora = []
    try:
        for reasons in reason_counts:
            for seed in range(args.seeds):
                corpus = run_corpus(base / f"r{reasons:02d}-s{seed}", reasons, seed, args)
                corpora.append(corpus)
                if not args.json:
                    _print_corpus(corpus)
    finally:
        if args.keep is None:
            shutil.rmtree(base, ignore_errors=True)
    summary = summarise(corpora)
    minutes = (dt.datetime.now().astimezone() - started).total_seconds() / 60
    machine = (
        f"{platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}, "
        + ", ".join(f"{name} {version(name)}" for name in ("scikit-learn", "gensim", "spacy"))
    )
    if args.json:
        doc = {"command": command, "date": started.isoformat(timespec="seconds"),
               "machine": machine, "minutes": round(minutes, 1), "quick": args.quick,
               "corpora": corpora,
               "summary": json.loads(summary.to_json(orient="records"))}  # fmt: skip
        print(json.dumps(doc, indent=1, default=float))
        return
    _print_summary(summary, corpora, args.quick)
    print(f"\n{command}\n{started:%Y-%m-%d %H:%M}, {machine}, {minutes:.1f} min")


if __name__ == "__main__":
    main()
