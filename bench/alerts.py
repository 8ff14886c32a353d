"""Alert harness: refresh alerts measured on planted histories and next batches.

Usage::

    .venv/bin/python bench/alerts.py [--seeds 10] [--first-seed 0] [--k 8] [--family nmf]
                                     [--history-calls 2400] [--batch-calls 900]
                                     [--new-share 0.13] [--rise-factor 1.5]
                                     [--cases nothing,new,rise,both] [--json] [--save FILE]
                                     [--keep DIR]

For every seed: four months of an invented rail operator's calls (six call reasons) are
ingested, prepared and published; then a fifth month arrives in each of four cases —
nothing new; a new reason (*Cancelled train and alternative travel*, ``--new-share`` of the
month's calls); a rise of an old reason (*Season ticket renewal*, ``--rise-factor`` times its
earlier share); both — and ``refresh --alert-on-new --alert-on-rise`` runs through the
product's own code (:mod:`talkthemes.demo.alert_harness`). Prints one row per case and the
targets: no alert on a batch with nothing new in ≥ 95% of runs; the new reason alerted with
precision ≥ 0.9 and recall ≥ 0.8 over its calls; rises of ×1.5 or more on ≥ 200 calls caught
in ≥ 90% of runs; no split reported as new.

``--json`` prints every run as one JSON document instead. Progress goes to stderr. Not a
test: the figures go to docs/operations.md ("How well the alerts work").
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import platform
import shlex
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

from talkthemes.demo.alert_harness import (
    CASES,
    AlertScenario,
    build_history,
    run_case,
    score_run,
)


def _fmt(x: float | None, digits: int = 2) -> str:
    return "–" if x is None else f"{x:.{digits}f}"


def _median_min(values: list[float]) -> str:
    if not values:
        return "–"
    return f"{statistics.median(values):.2f} ({min(values):.2f})"


def summarise(runs: list[dict[str, Any]]) -> tuple[list[dict[str, str]], list[str]]:
    """The table rows (one per case) and the target lines, from every scored run."""
    rows, by_case = [], {c: [r for r in runs if r["case"] == c] for c in CASES}
    for case, rs in by_case.items():
        if not rs:
            continue
        n = len(rs)
        planted_new = case in ("new", "both")
        planted_rise = case in ("rise", "both")
        verdicts = [v for r in rs for v in r["verdicts"].values()]
        rows.append(
            {
                "case": case,
                "runs": str(n),
                "any alert": f"{sum(r['alert'] for r in rs)}/{n}",
                "new alerted": f"{sum(bool(r['new_alerts']) for r in rs)}/{n}",
                "precision med (min)": _median_min([r["precision"] for r in rs])
                if planted_new
                else "–",
                "lead-only": _median_min([r["precision_lead"] for r in rs]) if planted_new else "–",
                "recall med (min)": _median_min([r["recall"] for r in rs]) if planted_new else "–",
                "rise caught": f"{sum(bool(r['rise_caught']) for r in rs)}/{n}"
                if planted_rise
                else "–",
                "split as new": str(sum(len(r["split_as_new"]) for r in rs)),
                "false risers": str(sum(len(r["false_risers"]) for r in rs)),
                "runs w/ fallers": f"{sum(bool(r['fallers']) for r in rs)}/{n}",
                "not alerted: split/small/familiar": "/".join(
                    str(verdicts.count(v)) for v in ("split", "small", "familiar")
                ),
            }
        )
    lines = []
    quiet = by_case["nothing"]
    if quiet:
        share = sum(not r["alert"] for r in quiet) / len(quiet)
        lines.append(
            f"(i) nothing new, no alert: {share:.0%} of {len(quiet)} runs (target ≥ 95%): "
            + ("met" if share >= 0.95 else "NOT met")
        )
    planted = [r for c in ("new", "both") for r in by_case[c]]
    if planted:
        called = sum(r["alerted_calls"] for r in planted)
        about = sum(r["alerted_about_new"] for r in planted)
        found = sum(r["alerted_led_by_new"] for r in planted)
        truth = sum(r["new_reason_calls"] for r in planted)
        p = about / called if called else 0.0
        rec = found / truth if truth else 0.0
        each = sum((r["precision"] or 0) >= 0.9 and (r["recall"] or 0) >= 0.8 for r in planted)
        lines.append(
            f"new reason, pooled over {len(planted)} runs: precision {p:.3f} (lead reason only "
            f"{sum(r['alerted_led_by_new'] for r in planted) / max(called, 1):.3f}), recall "
            f"{rec:.3f} (targets ≥ 0.9 and ≥ 0.8): "
            + ("met" if p >= 0.9 and rec >= 0.8 else "NOT met")
            + f"; both met in {each}/{len(planted)} single runs"
        )
    rising = [r for c in ("rise", "both") for r in by_case[c]]
    if rising:
        caught = sum(bool(r["rise_caught"]) for r in rising) / len(rising)
        calls = min(r["rise_reason_calls"] for r in rising)
        lines.append(
            f"rise caught in {caught:.0%} of {len(rising)} runs (at least {calls} calls of the "
            "rising reason in each batch; target ≥ 90%): " + ("met" if caught >= 0.9 else "NOT met")
        )
    splits = sum(len(r["split_as_new"]) for r in runs)
    lines.append(
        f"splits reported as new: {splits} (target 0): " + ("met" if not splits else "NOT met")
    )
    return rows, lines


def print_table(rows: list[dict[str, str]]) -> None:
    cols = list(rows[0])
    print("| " + " | ".join(cols) + " |")
    print("|" + "|".join("---" for _ in cols) + "|")
    for r in rows:
        print("| " + " | ".join(r[c] for c in cols) + " |")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", type=int, default=10, help="planted histories (one per seed)")
    ap.add_argument("--first-seed", type=int, default=0)
    ap.add_argument("--k", type=int, default=8, help="K of the published model")
    ap.add_argument("--family", default="nmf", choices=["nmf", "lda"])
    ap.add_argument("--history-calls", type=int, default=2400, help="calls in the 4 months")
    ap.add_argument("--batch-calls", type=int, default=900, help="calls in the next month")
    ap.add_argument("--new-share", type=float, default=0.13)
    ap.add_argument("--rise-factor", type=float, default=1.5)
    ap.add_argument("--cases", default=",".join(CASES))
    ap.add_argument("--json", action="store_true", help="print one JSON document, no tables")
    ap.add_argument("--save", type=Path, default=None, help="also write the JSON document here")
    ap.add_argument("--keep", type=Path, default=None, help="keep the workspaces under DIR")
    args = ap.parse_args()
    cases = [c.strip() for c in args.cases.split(",") if c.strip()]
    unknown = sorted(set(cases) - set(CASES))
    if unknown:
        ap.error(f"unknown case(s): {', '.join(unknown)}; choose from {', '.join(CASES)}")
    scenario = AlertScenario(
        history_calls=args.history_calls,
        batch_calls=args.batch_calls,
        new_share=args.new_share,
        rise_factor=args.rise_factor,
        family=args.family,
        k=args.k,
        settings={"prepare": {"n_process": 1}},
    )
    started, t0 = dt.datetime.now().astimezone(), time.perf_counter()
    base = args.keep or Path(tempfile.mkdtemp(prefix="talkthemes-alerts-"))
    runs: list[dict[str, Any]] = []
    try:
        for seed in range(args.first_seed, args.first_seed + args.seeds):
            root = base / f"seed{seed}"
            shutil.rmtree(root, ignore_errors=True)
            history = build_history(root / "history", scenario, seed)
            for case in cases:
                t1 = time.perf_counter()
                doc, ws, truth = run_case(history, root / case, scenario, case, seed)
                run = {"seed": seed, **score_run(doc, ws, truth, scenario, case)}
                runs.append(run)
                print(
                    f"seed {seed} {case}: alert={run['alert']} new={run['new_alerts']} "
                    f"risers={run['risers']} fallers={run['fallers']} "
                    f"precision={_fmt(run['precision'])} recall={_fmt(run['recall'])} "
                    f"({time.perf_counter() - t1:.0f} s)",
                    file=sys.stderr,
                )
                if args.keep is None:
                    shutil.rmtree(root / case, ignore_errors=True)
    finally:
        if args.keep is None:
            shutil.rmtree(base, ignore_errors=True)
    minutes = (time.perf_counter() - t0) / 60
    machine = f"{platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}"
    command = "bench/alerts.py " + shlex.join(sys.argv[1:])
    rows, lines = summarise(runs)
    doc = {"command": command, "date": started.isoformat(timespec="seconds"),
           "machine": machine, "minutes": round(minutes, 1),
           "scenario": {k: v for k, v in vars(scenario).items() if k != "settings"},
           "runs": runs, "table": rows, "targets": lines}  # fmt: skip
    if args.save:
        args.save.write_text(json.dumps(doc, indent=1) + "\n", encoding="utf-8")
    if args.json:
        print(json.dumps(doc, indent=1))
        return
    print(f"\n{command}\n{started:%Y-%m-%d %H:%M}, {machine}, {minutes:.1f} min")
    print(
        f"history {args.history_calls} calls (6 reasons, Jan–Apr 2027), next batch "
        f"{args.batch_calls} calls (May 2027), {args.family.upper()} K={args.k}; new reason "
        f"{args.new_share:.0%} of the batch, rise ×{args.rise_factor:g}\n"
    )
    print_table(rows)
    print()
    for line in lines:
        print(line)


if __name__ == "__main__":
    main()
