"""Recommending a topic count from a sweep's metrics: a documented rule with its reasons.

The rule, per model family:

1. Summarise each K over its seeds: mean and standard error of the ranking coherence
   (C_NPMI by default), the seed-to-seed stability, mean topic diversity, and the fit
   measure (held-out perplexity for LDA, reconstruction error for NMF).
2. A K is *eligible* when its stability reaches ``stability_min``: topics that change
   with the random seed cannot be labelled and tracked. When no K is eligible, every K
   is considered and the recommendation says it is weak.
3. A K is set aside as a *catch-all* when its largest lead theme (mean over seeds of the
   cells' ``largest_lead_share``) leads more than ``catch_all_ratio / K`` and more than
   ``catch_all_share`` of the transcripts (:mod:`talkthemes.metrics.evenness`); when every
   K is one, all are considered and the reasons say so.
4. Among eligible K, find the best mean coherence. Recommend the **smallest** eligible K
   whose mean coherence is within one standard error of that best — the one-standard-error
   rule (Breiman, Friedman, Olshen & Stone 1984; Hastie, Tibshirani & Friedman 2009, §7.10):
   when the data cannot tell two K apart, prefer the one with fewer themes to read.

The result is never a bare number: it carries the reasons, the runners-up and the K set
aside. :func:`best_family` picks the family ``publish --recommended`` takes.

References
----------
Breiman, L., Friedman, J., Olshen, R., Stone, C. (1984). *Classification and Regression
Trees*. Wadsworth.
Greene, D., O'Callaghan, D., Cunningham, P. (2014). How Many Topics? Stability Analysis
for Topic Models. ECML PKDD 2014.
Hastie, T., Tibshirani, R., Friedman, J. (2009). *The Elements of Statistical Learning*,
2nd ed., Springer, §7.10.
Lau, J. H., Newman, D., Baldwin, T. (2014). Machine Reading Tea Leaves. EACL 2014
(NPMI tracks human coherence ratings best among the automatic measures they compared).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.config import SweepSettings
from talkthemes.metrics.evenness import catch_all_threshold, is_catch_all

__all__ = [
    "CATCH_ALL_RATIO",
    "CATCH_ALL_SHARE",
    "RANKABLE",
    "Recommendation",
    "best_family",
    "recommend",
    "summarise_by_k",
]

#: Coherence measures a recommendation can rank by, with "higher is better" for all.
RANKABLE = ("c_npmi", "c_v", "c_uci", "u_mass")

#: Defaults of ``[sweep] catch_all_ratio`` and ``catch_all_share``; the figures behind them
#: are in docs/methods.md, "The recommendation".
CATCH_ALL_RATIO: float = SweepSettings.model_fields["catch_all_ratio"].default
CATCH_ALL_SHARE: float = SweepSettings.model_fields["catch_all_share"].default

_FIT_COLUMN = {"lda": "perplexity", "nmf": "reconstruction_error"}
_FIT_NAME = {"perplexity": "held-out perplexity", "reconstruction_error": "reconstruction error"}


@dataclass(frozen=True)
class Recommendation:
    """A recommended K for one family, with the reasons and the runners-up.

    Attributes
    ----------
    family : str
    k : int
        The recommended topic count.
    rank_by : str
        The coherence measure the rule ranked by.
    weak : bool
        True when no K reached the stability threshold.
    rule : str
        The rule in one sentence.
    reasons : list of str
        Why this K, in plain words with the numbers.
    runners_up : list of dict
        Other K worth a look: ``k``, ``coherence``, ``stability`` and ``why_not``.
    catch_all : list of int
        K set aside because one theme leads a disproportionate share of the transcripts
        (every swept K when none escapes it: then ``k`` is among them).
    """

    family: str
    k: int
    rank_by: str
    weak: bool
    rule: str
    reasons: list[str] = field(default_factory=list)
    runners_up: list[dict[str, Any]] = field(default_factory=list)
    catch_all: list[int] = field(default_factory=list)

    @property
    def usable(self) -> bool:
        """Not weak, and its K is not a catch-all."""
        return not self.weak and self.k not in self.catch_all

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dict."""
        return asdict(self)


def summarise_by_k(cells: pd.DataFrame, rank_by: str = "c_npmi") -> pd.DataFrame:
    """Per (family, K): mean and standard error of ``rank_by``, and means of other metrics.

    Parameters
    ----------
    cells : DataFrame
        One row per cell with columns ``family``, ``k``, ``seed``, ``rank_by`` and any of
        ``stability``, ``diversity``, ``perplexity``, ``reconstruction_error``.
    rank_by : str
        The coherence column to summarise with a standard error.

    Returns
    -------
    DataFrame
        Columns ``family, k, seeds, coherence, coherence_se`` plus the mean of each
        other metric present (``stability``, ``diversity``, the fit measure,
        ``largest_lead_share``).
    """
    if rank_by not in cells.columns:
        raise KeyError(f"cells have no column {rank_by!r}")
    rows = []
    for (family, k), g in cells.groupby(["family", "k"], sort=True):
        vals = g[rank_by].to_numpy(dtype=float)
        vals = vals[np.isfinite(vals)]
        n = len(vals)
        row: dict[str, Any] = {
            "family": family,
            "k": int(k),
            "seeds": len(g),
            "coherence": float(vals.mean()) if n else float("nan"),
            "coherence_se": float(vals.std(ddof=1) / np.sqrt(n)) if n > 1 else 0.0,
        }
        for col in (
            "stability",
            "diversity",
            "perplexity",
            "reconstruction_error",
            "largest_lead_share",
        ):
            if col in g.columns:
                row[col] = float(g[col].mean())
        rows.append(row)
    return pd.DataFrame(rows)


def _fmt(x: float) -> str:
    return f"{x:.3f}" if abs(x) < 100 else f"{x:,.0f}"


def _catch_all_ks(s: pd.DataFrame, ratio: float, min_share: float) -> list[int]:
    """The K of one family's summary whose largest lead theme is a catch-all."""
    if "largest_lead_share" not in s.columns:
        return []
    return [
        int(r["k"])
        for _, r in s.iterrows()
        if is_catch_all(float(r["largest_lead_share"]), int(r["k"]), ratio, min_share)
    ]


def _catch_all_words(ratio: float, min_share: float) -> str:
    """The catch-all test in words: "more than 2.5/K of the transcripts and more than 35%"."""
    words = f"more than {ratio:g}/K of the transcripts"
    return words + (f" and more than {_pct(min_share)}" if min_share > 0 else "")


def _pct(x: float) -> str:
    return f"{100 * x:.0f}%"


def recommend(
    cells: pd.DataFrame,
    *,
    rank_by: str = "c_npmi",
    stability_min: float = 0.6,
    catch_all_ratio: float = CATCH_ALL_RATIO,
    catch_all_share: float = CATCH_ALL_SHARE,
) -> dict[str, Recommendation]:
    """Apply the module's rule to every family in ``cells``.

    Parameters
    ----------
    cells : DataFrame
        One row per (family, k, seed) cell; see :func:`summarise_by_k`.
    rank_by : str
        Coherence measure to rank by (one of :data:`RANKABLE`).
    stability_min : float
        Stability a K must reach to be eligible.
    catch_all_ratio, catch_all_share : float
        A K whose largest lead theme leads more than ``catch_all_ratio / K`` and more than
        ``catch_all_share`` of the transcripts (mean over seeds of the cells'
        ``largest_lead_share``) is set aside as a catch-all; a ratio of 0 turns the check
        off. Cells without the column (sweeps recorded before it was kept) skip the check.

    Returns
    -------
    dict
        ``family -> Recommendation``.
    """
    if rank_by not in RANKABLE:
        raise ValueError(f"rank_by must be one of {', '.join(RANKABLE)}, not {rank_by!r}")
    summary = summarise_by_k(cells, rank_by)
    out: dict[str, Recommendation] = {}
    for family, s in summary.groupby("family", sort=True):
        s = s.sort_values("k").reset_index(drop=True)
        s = s[np.isfinite(s["coherence"])]
        if s.empty:
            continue
        catch_all = _catch_all_ks(s, catch_all_ratio, catch_all_share)
        usable = s[~s["k"].isin(catch_all)]
        all_catch_all = usable.empty
        if all_catch_all:
            usable = s
        has_stab = "stability" in s.columns and s["stability"].notna().any()
        eligible = usable[usable["stability"] >= stability_min] if has_stab else usable
        weak = eligible.empty
        if weak:
            eligible = usable
        best = eligible.loc[eligible["coherence"].idxmax()]
        cutoff = best["coherence"] - best["coherence_se"]
        chosen = eligible[eligible["coherence"] >= cutoff].sort_values("k").iloc[0]
        k = int(chosen["k"])
        name = rank_by.upper()
        rule = (
            f"smallest K whose mean {name} is within one standard error of the best among K "
            f"with seed stability ≥ {stability_min:.2f}"
        )
        if catch_all_ratio > 0:
            rule += (
                " and no catch-all theme (one theme leading "
                f"{_catch_all_words(catch_all_ratio, catch_all_share)})"
            )
        reasons = [
            f"K={k}: mean {name} {_fmt(chosen['coherence'])} ± {_fmt(chosen['coherence_se'])} "
            f"(standard error over {int(chosen['seeds'])} seeds)"
        ]
        if int(best["k"]) != k:
            reasons.append(
                f"the best {name} among eligible K is K={int(best['k'])} at "
                f"{_fmt(best['coherence'])} ± {_fmt(best['coherence_se'])}; K={k} is within one "
                "standard error of it and has fewer themes to read"
            )
        else:
            reasons.append(f"K={k} has the best mean {name} among eligible K")
        if has_stab:
            if weak:
                most = usable.loc[usable["stability"].idxmax()]
                reasons.append(
                    f"no K reached stability {stability_min:.2f} (best "
                    f"{_fmt(most['stability'])} at K={int(most['k'])}); "
                    "this recommendation is weak — themes will change with the seed"
                )
            else:
                reasons.append(
                    f"seed stability {_fmt(chosen['stability'])} ≥ {stability_min:.2f}: the same "
                    "themes come back with other random seeds"
                )
        reasons += _evenness_reasons(
            s, chosen, catch_all, all_catch_all, catch_all_ratio, catch_all_share
        )
        if "diversity" in s.columns and np.isfinite(chosen.get("diversity", np.nan)):
            reasons.append(
                f"topic diversity {_fmt(chosen['diversity'])} (share of distinct words among "
                "all themes' top 25)"
            )
        fit_col = _FIT_COLUMN.get(str(family))
        if fit_col and fit_col in s.columns and s[fit_col].notna().any():
            lowest = s.loc[s[fit_col].idxmin()]
            reasons.append(
                f"{_FIT_NAME[fit_col]} {_fmt(chosen[fit_col])} (lowest {_fmt(lowest[fit_col])} "
                f"at K={int(lowest['k'])}; lower fits held-out words better but tends to favour "
                "more themes than people can tell apart)"
            )
        runners: list[dict[str, Any]] = []
        for _, r in s[s["k"] != k].sort_values("coherence", ascending=False).head(3).iterrows():
            stab = float(r["stability"]) if has_stab else float("nan")
            if int(r["k"]) in catch_all and not all_catch_all:
                limit = catch_all_threshold(int(r["k"]), catch_all_ratio, catch_all_share)
                why = (
                    f"catch-all: one theme leads {_pct(r['largest_lead_share'])} of the "
                    f"transcripts (more than {_pct(limit)} at K={int(r['k'])})"
                )
            elif has_stab and stab < stability_min and not weak:
                why = f"less stable across seeds ({_fmt(stab)} < {stability_min:.2f})"
            elif r["coherence"] >= cutoff:
                why = f"within one standard error but larger (K={int(r['k'])} > {k})"
            else:
                why = f"lower {name} ({_fmt(r['coherence'])} vs {_fmt(chosen['coherence'])})"
            runners.append(
                {
                    "k": int(r["k"]),
                    "coherence": float(r["coherence"]),
                    "coherence_se": float(r["coherence_se"]),
                    "stability": stab,
                    "why_not": why,
                }
            )
        out[str(family)] = Recommendation(
            family=str(family),
            k=k,
            rank_by=rank_by,
            weak=weak,
            rule=rule,
            reasons=reasons,
            runners_up=runners,
            catch_all=catch_all,
        )
    return out


def _evenness_reasons(
    s: pd.DataFrame,
    chosen: pd.Series,
    catch_all: list[int],
    every: bool,
    ratio: float,
    min_share: float,
) -> list[str]:
    """What the reasons say about how evenly the lead themes split the transcripts."""
    if "largest_lead_share" not in s.columns or not np.isfinite(
        chosen.get("largest_lead_share", np.nan)
    ):
        return []
    k = int(chosen["k"])
    share = float(chosen["largest_lead_share"])
    out = []
    if catch_all:
        shares = s.set_index("k")["largest_lead_share"]
        listed = ", ".join(f"K={c} ({_pct(shares[c])})" for c in catch_all)
        test = _catch_all_words(ratio, min_share)
        if every:
            out.append(
                f"every K has a catch-all theme, one theme leading {test}: {listed}; this K "
                "is the best of them, but read its largest theme before trusting the others"
            )
        else:
            out.append(
                f"set aside as catch-all (one theme leads {test}): {listed}; such a theme "
                "gathers words common to many calls, or one reason far ahead of the others "
                "— its top words tell which"
            )
    if not every:
        out.append(
            f"the largest theme leads {_pct(share)} of the transcripts at K={k} (an even split "
            f"would be {_pct(1 / k)} each)"
        )
    return out


def best_family(recommendations: dict[str, Recommendation], cells: pd.DataFrame) -> str:
    """The family whose recommended K to publish when the user names none.

    The rule (docs/methods.md, "The recommendation"):

    1. A **usable** recommendation beats one that is not: usable means not weak (some K
       reached ``stability_min``) and its K not a catch-all.
    2. Between equals, the **higher seed stability** at the recommended K wins (Greene,
       O'Callaghan & Cunningham 2014): the family whose themes come back with other seeds.
    3. Then the higher mean ranking coherence at the recommended K.

    Evidence, from the planted-corpus harness (``bench/quality.py --seeds 5``: 15 corpora
    of 6, 10 and 16 true reasons): rule 2 took the family whose lead themes agree better
    with the true reasons on 10 of 15 corpora (mean NMI at the recommended K 0.919, best
    possible 0.923); always preferring LDA did as often but less well (10 of 15, 0.915);
    ranking by coherence — the rule before — took NMF every time and the better family on
    5 of 15 (0.900): NMF's top words score higher C_NPMI than LDA's whatever the fit, so
    coherence does not compare the two families fairly.
    """
    if not recommendations:
        raise ValueError("no recommendation to choose from")

    def at(fam: str, rec: Recommendation, column: str) -> float:
        if column not in cells.columns:
            return float("-inf")
        values = cells[(cells["family"] == fam) & (cells["k"] == rec.k)][column]
        mean = float(values.mean()) if len(values) else float("nan")
        return mean if np.isfinite(mean) else float("-inf")

    def key(item: tuple[str, Recommendation]) -> tuple[bool, float, float]:
        fam, rec = item
        return (rec.usable, at(fam, rec, "stability"), at(fam, rec, rec.rank_by))

    return max(recommendations.items(), key=key)[0]
