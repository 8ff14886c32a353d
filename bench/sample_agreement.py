"""Publishing from a sample vs fitting on every call: lead-theme agreement on a planted corpus.

Usage::

    .venv/bin/python bench/sample_agreement.py [--calls 3000] [--reasons 12] [--sample 750]
        [--seeds 2] [--families lda,nmf] [--workspace NEW_DIR]

Writes, ingests and prepares a planted corpus (:mod:`talkthemes.demo.planted`: invented calls
with a known reason and manifest dates over several months), then for each family and seed
fits the true K twice: on every call (what ``publish`` does without a sample) and from a
stratified sample of ``--sample`` calls (what ``publish`` does for a cell swept on a sample:
NMF fitted on the sample and every call transformed; LDA fitted on the sample, then online
passes over every call). It prints the share of calls whose lead theme agrees between the two
after Hungarian matching of the themes (all calls, and the calls outside the sample), the
same agreement between two fits on every call with seeds s and s + 1 (the baseline), both
fits' NMI/ARI against the planted reasons, and the fit seconds. Not a test: figures for
docs/methods.md; the machine may be shared, so seconds are indicative.
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import tempfile
from pathlib import Path


def main() -> None:
    from talkthemes.demo.harness import build_workspace
    from talkthemes.demo.planted import PlantedSpec
    from talkthemes.demo.sample_harness import compare_sample_fit

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--calls", type=int, default=3000)
    ap.add_argument("--reasons", type=int, default=12)
    ap.add_argument("--sample", type=int, default=750)
    ap.add_argument("--seeds", type=int, default=2)
    ap.add_argument("--corpus-seed", type=int, default=0)
    ap.add_argument("--families", default="lda,nmf")
    ap.add_argument("--workspace", type=Path, default=None, help="keep the corpus here (new)")
    args = ap.parse_args()

    tmp = Path(tempfile.mkdtemp(prefix="tt-bench-sample-"))
    root = args.workspace or tmp
    try:
        spec = PlantedSpec(reasons=args.reasons, calls=args.calls, seed=args.corpus_seed)
        pw = build_workspace(root, spec, settings={"prepare": {"n_process": 1}})
        k = pw.true_k
        print(
            f"planted corpus: {len(pw.corpus.doc_ids):,} prepared calls, {k} reasons; "
            f"sample {args.sample:,} calls; K={k}"
        )
        head = (
            f"{'family':<6} {'seed':>4} {'agree all':>9} {'outside':>8} {'seeds':>6} "
            f"{'NMI all':>8} {'NMI smp':>8} {'ARI all':>8} {'ARI smp':>8} {'s all':>7} {'s smp':>7}"
        )
        print(head)
        for family in [f.strip() for f in args.families.split(",") if f.strip()]:
            rows = []
            for seed in range(args.seeds):
                r = compare_sample_fit(pw, family, k, seed, args.sample)
                rows.append(r)
                print(
                    f"{family:<6} {seed:>4} {r.agreement:>9.3f} {r.agreement_outside:>8.3f} "
                    f"{r.agreement_seeds:>6.3f} "
                    f"{r.nmi_all:>8.3f} {r.nmi_sample:>8.3f} {r.ari_all:>8.3f} "
                    f"{r.ari_sample:>8.3f} {r.seconds_all:>7.1f} {r.seconds_sample:>7.1f}"
                )
            med = statistics.median
            print(
                f"{family:<6} {'med':>4} {med(r.agreement for r in rows):>9.3f} "
                f"{med(r.agreement_outside for r in rows):>8.3f} "
                f"{med(r.agreement_seeds for r in rows):>6.3f} "
                f"{med(r.nmi_all for r in rows):>8.3f} {med(r.nmi_sample for r in rows):>8.3f} "
                f"{med(r.ari_all for r in rows):>8.3f} {med(r.ari_sample for r in rows):>8.3f} "
                f"{med(r.seconds_all for r in rows):>7.1f} "
                f"{med(r.seconds_sample for r in rows):>7.1f}"
            )
    finally:
        if args.workspace is None:
            shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
