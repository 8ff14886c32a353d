"""The statistics behind refresh alerts: pure functions over counts (docs/methods_alerts.md,
"Risers and fallers" and "A new theme alerts only when four pieces of evidence hold").

* :func:`two_proportion_test` — is a theme's share of the new transcripts different from its
  share of the earlier ones? The pooled two-proportion z-test, two-sided (Agresti 2013;
  its square is Pearson's chi-square statistic of the 2 × 2 table);
* :func:`ratio_interval` — the ratio of the two shares with the Katz log interval (Katz,
  Baptista, Azen & Pike 1978), 0.5 added to every cell when a count is 0;
* :func:`difference_interval` — the difference of the shares with Newcombe's (1998) hybrid
  score interval (his method 10, from Wilson's 1927 score intervals);
* :func:`benjamini_hochberg` — adjusted p-values (q-values) controlling the false
  discovery rate over the themes tested in one refresh (Benjamini & Hochberg 1995);
* :func:`log_likelihood_ratio` — Dunning's (1993) log-likelihood ratio G² of each term's
  count in the new transcripts against the earlier ones (a 2 × 2 table per term), and
  :func:`rate_ratio` the ratio of the term's rates, 0.5 added to both counts.

Every function takes numbers or numpy arrays and returns numpy arrays (or floats); none
reads files, the clock or a random state.

References
----------
Agresti, A. (2013). *Categorical Data Analysis*, 3rd ed. Wiley. Chapters 2–3.
Benjamini, Y. & Hochberg, Y. (1995). Controlling the false discovery rate: a practical and
powerful approach to multiple testing. *Journal of the Royal Statistical Society B* 57(1):
289–300.
Dunning, T. (1993). Accurate methods for the statistics of surprise and coincidence.
*Computational Linguistics* 19(1): 61–74.
Katz, D., Baptista, J., Azen, S. P. & Pike, M. C. (1978). Obtaining confidence intervals for
the risk ratio in cohort studies. *Biometrics* 34(3): 469–474.
Newcombe, R. G. (1998). Interval estimation for the difference between independent
proportions: comparison of eleven methods. *Statistics in Medicine* 17(8): 873–890.
Wilson, E. B. (1927). Probable inference, the law of succession, and statistical inference.
*Journal of the American Statistical Association* 22(158): 209–212.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy.special import xlogy
from scipy.stats import norm

from talkthemes.errors import InputError

__all__ = [
    "benjamini_hochberg",
    "difference_interval",
    "log_likelihood_ratio",
    "rate_ratio",
    "ratio_interval",
    "two_proportion_test",
    "wilson_interval",
]


def _counts(x: Any, n: Any, what: str) -> tuple[np.ndarray, np.ndarray]:
    x, n = np.asarray(x, dtype=np.float64), np.asarray(n, dtype=np.float64)
    if np.any(x < 0) or np.any(n <= 0) or np.any(x > n):
        raise InputError(f"{what}: counts must satisfy 0 ≤ x ≤ n and n > 0")
    return x, n


def _z(level: float) -> float:
    if not 0 < level < 1:
        raise InputError(f"confidence level must lie in (0, 1), got {level}")
    return float(norm.ppf(0.5 + level / 2))


def two_proportion_test(x1: Any, n1: Any, x2: Any, n2: Any) -> tuple[np.ndarray, np.ndarray]:
    """Pooled two-proportion z-test of x1/n1 against x2/n2, two-sided.

    Parameters
    ----------
    x1, n1 : int or array
        Successes and trials of the first sample (the new transcripts a theme leads, and the
        new transcripts).
    x2, n2 : int or array
        The same for the second sample (the earlier transcripts).

    Returns
    -------
    z : ndarray
        (p1 − p2) / √(p̂(1 − p̂)(1/n1 + 1/n2)) with the pooled p̂ = (x1 + x2)/(n1 + n2);
        0 when p̂ is 0 or 1 (no variation to test).
    p : ndarray
        Two-sided p-value 2·(1 − Φ(|z|)); 1 when z is 0.

    Notes
    -----
    z² equals Pearson's X² of the 2 × 2 table without continuity correction (Agresti 2013),
    so the p-value equals scipy's ``chi2_contingency(..., correction=False)``.
    """
    x1, n1 = _counts(x1, n1, "two-proportion test")
    x2, n2 = _counts(x2, n2, "two-proportion test")
    pooled = (x1 + x2) / (n1 + n2)
    var = pooled * (1 - pooled) * (1 / n1 + 1 / n2)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(var > 0, (x1 / n1 - x2 / n2) / np.sqrt(np.where(var > 0, var, 1.0)), 0.0)
    p = 2 * norm.sf(np.abs(z))
    return z, p


def ratio_interval(
    x1: Any, n1: Any, x2: Any, n2: Any, level: float = 0.95
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Ratio of two shares (x1/n1) / (x2/n2) with the Katz log interval.

    exp(ln r ± z·√(1/x1 − 1/n1 + 1/x2 − 1/n2)) (Katz et al. 1978). When x1 or x2 is 0,
    0.5 is added to both counts and both totals of that pair first (Haldane's correction),
    so the ratio and interval stay finite.

    Returns
    -------
    ratio, lo, hi : ndarray
    """
    x1, n1 = _counts(x1, n1, "ratio interval")
    x2, n2 = _counts(x2, n2, "ratio interval")
    z = _z(level)
    zero = (x1 == 0) | (x2 == 0)
    a, b = np.where(zero, x1 + 0.5, x1), np.where(zero, x2 + 0.5, x2)
    m1, m2 = np.where(zero, n1 + 0.5, n1), np.where(zero, n2 + 0.5, n2)
    ratio = (a / m1) / (b / m2)
    se = np.sqrt(1 / a - 1 / m1 + 1 / b - 1 / m2)
    return ratio, ratio * np.exp(-z * se), ratio * np.exp(z * se)


def wilson_interval(x: Any, n: Any, level: float = 0.95) -> tuple[np.ndarray, np.ndarray]:
    """Wilson's (1927) score interval of a proportion x/n."""
    x, n = _counts(x, n, "Wilson interval")
    z = _z(level)
    p = x / n
    centre = (p + z * z / (2 * n)) / (1 + z * z / n)
    half = z * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / (1 + z * z / n)
    return centre - half, centre + half


def difference_interval(
    x1: Any, n1: Any, x2: Any, n2: Any, level: float = 0.95
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Difference of two shares x1/n1 − x2/n2 with Newcombe's (1998) hybrid score interval.

    With Wilson intervals (l1, u1) and (l2, u2) of the two shares and d = p1 − p2:
    lo = d − √((p1 − l1)² + (u2 − p2)²), hi = d + √((u1 − p1)² + (p2 − l2)²)
    (Newcombe's method 10).

    Returns
    -------
    difference, lo, hi : ndarray
    """
    x1, n1 = _counts(x1, n1, "difference interval")
    x2, n2 = _counts(x2, n2, "difference interval")
    p1, p2 = x1 / n1, x2 / n2
    l1, u1 = wilson_interval(x1, n1, level)
    l2, u2 = wilson_interval(x2, n2, level)
    d = p1 - p2
    return (
        d,
        d - np.sqrt((p1 - l1) ** 2 + (u2 - p2) ** 2),
        d + np.sqrt((u1 - p1) ** 2 + (p2 - l2) ** 2),
    )


def benjamini_hochberg(p_values: Any) -> np.ndarray:
    """Benjamini–Hochberg (1995) adjusted p-values, in the input order.

    q_(i) = min over j ≥ i of p_(j)·m/j (p sorted ascending, m tests), at most 1. Rejecting
    every hypothesis with q ≤ α is the step-up procedure at false discovery rate α.

    Raises
    ------
    InputError
        When a p-value is not in [0, 1].
    """
    p = np.asarray(p_values, dtype=np.float64).ravel()
    if p.size == 0:
        return p
    if np.any(~np.isfinite(p)) or np.any(p < 0) or np.any(p > 1):
        raise InputError("Benjamini–Hochberg: p-values must lie in [0, 1]")
    m = p.size
    order = np.argsort(p, kind="stable")
    scaled = p[order] * m / np.arange(1, m + 1)
    q_sorted = np.minimum.accumulate(scaled[::-1])[::-1]
    q = np.empty(m)
    q[order] = np.minimum(q_sorted, 1.0)
    return q


def log_likelihood_ratio(a: Any, b: Any, n_a: Any, n_b: Any) -> np.ndarray:
    """Dunning's (1993) log-likelihood ratio G² of a count a of n_a against b of n_b.

    The 2 × 2 table [[a, n_a − a], [b, n_b − b]] (a term's tokens and the other tokens, in
    the new and in the earlier transcripts): G² = 2 Σ O ln(O / E) with E the counts expected
    under one common rate. Asymptotically chi-square with one degree of freedom (G² > 10.83
    is p < 0.001).

    Parameters
    ----------
    a, b : int or array
        The term's counts in the two samples.
    n_a, n_b : int or array
        The samples' total token counts.

    Returns
    -------
    ndarray
        G² ≥ 0 (0 when the rates are equal).
    """
    a, n_a = _counts(a, n_a, "log-likelihood ratio")
    b, n_b = _counts(b, n_b, "log-likelihood ratio")
    table = [a, n_a - a, b, n_b - b]
    total = n_a + n_b
    col = a + b
    expected = [n_a * col / total, n_a * (total - col) / total,
                n_b * col / total, n_b * (total - col) / total]  # fmt: skip
    g = sum(xlogy(o, o) - xlogy(o, e) for o, e in zip(table, expected, strict=True))
    return np.maximum(2 * g, 0.0)


def rate_ratio(a: Any, b: Any, n_a: Any, n_b: Any) -> np.ndarray:
    """(a + 0.5)/n_a ÷ (b + 0.5)/n_b: how many times more often a term occurs in the first
    sample (0.5 added to both counts so a term absent from one sample has a finite ratio)."""
    a, n_a = _counts(a, n_a, "rate ratio")
    b, n_b = _counts(b, n_b, "rate ratio")
    return ((a + 0.5) / n_a) / ((b + 0.5) / n_b)
