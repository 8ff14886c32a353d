"""The statistics behind refresh alerts against outside references.

Sources, beside each check:

* scipy.stats (version as installed) — ``chi2_contingency`` (Pearson's X² and the
  log-likelihood ratio G² of a 2 × 2 table), ``contingency.relative_risk`` (Katz log
  interval), ``binomtest(...).proportion_ci(method="wilson")``, ``false_discovery_control``
  (Benjamini–Hochberg);
* worked examples from the literature. Their values are **recalled from memory** (not
  re-checked against the printed page) and marked so; each agrees with scipy's computation
  too, which is the reference the tests rely on first.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import binomtest, chi2_contingency, false_discovery_control
from scipy.stats.contingency import relative_risk

from talkthemes.versions.alert_stats import (
    benjamini_hochberg,
    difference_interval,
    log_likelihood_ratio,
    rate_ratio,
    ratio_interval,
    two_proportion_test,
    wilson_interval,
)

# Agresti, A. (2013). Categorical Data Analysis, 3rd ed., Wiley: the Physicians' Health
# Study table (myocardial infarction with placebo 189 of 11,034, with aspirin 104 of 11,037),
# used in chapters 2 and 3. Values from memory (sections too): X² = 25.01, relative risk
# 1.82 with 95% interval (1.43, 2.30).
PLACEBO, ASPIRIN = (189, 11034), (104, 11037)


def test_two_proportion_z_squared_is_pearsons_chi_square_agresti_example() -> None:
    z, p = two_proportion_test(*PLACEBO, *ASPIRIN)
    # scipy: Pearson's X² without continuity correction, and its p-value
    ref = chi2_contingency(
        [[PLACEBO[0], PLACEBO[1] - PLACEBO[0]], [ASPIRIN[0], ASPIRIN[1] - ASPIRIN[0]]],
        correction=False,
    )
    assert float(z) ** 2 == pytest.approx(ref.statistic, rel=1e-10)
    assert float(p) == pytest.approx(ref.pvalue, rel=1e-8)
    # Agresti (2013), X² = 25.01 [from memory]
    assert float(z) ** 2 == pytest.approx(25.01, abs=0.01)


def test_ratio_interval_is_katz_agresti_example() -> None:
    ratio, lo, hi = ratio_interval(*PLACEBO, *ASPIRIN)
    # scipy's relative_risk: the Katz log interval
    ref = relative_risk(PLACEBO[0], PLACEBO[1], ASPIRIN[0], ASPIRIN[1])
    ci = ref.confidence_interval(confidence_level=0.95)
    assert float(ratio) == pytest.approx(ref.relative_risk, rel=1e-12)
    assert (float(lo), float(hi)) == pytest.approx((ci.low, ci.high), rel=1e-10)
    # Agresti (2013), 1.82 (1.43, 2.30) [from memory; printed to two decimals]
    assert (float(ratio), float(lo), float(hi)) == pytest.approx((1.82, 1.43, 2.30), abs=0.01)


@pytest.mark.parametrize(("x1", "n1", "x2", "n2"), [(30, 200, 18, 400), (5, 50, 40, 60),
                                                    (120, 900, 360, 2400)])  # fmt: skip
def test_ratio_interval_matches_scipy_on_other_tables(x1: int, n1: int, x2: int, n2: int) -> None:
    ratio, lo, hi = ratio_interval(x1, n1, x2, n2, level=0.9)
    ref = relative_risk(x1, n1, x2, n2)
    ci = ref.confidence_interval(confidence_level=0.9)
    assert (float(ratio), float(lo), float(hi)) == pytest.approx(
        (ref.relative_risk, ci.low, ci.high), rel=1e-10
    )


def test_difference_interval_newcombe_worked_example() -> None:
    # Newcombe, R. G. (1998), Statistics in Medicine 17: 873–890, one of the paper's worked
    # examples: 56/70 − 48/80 = 0.2000, method 10 (hybrid score) interval 0.0524 to 0.3339
    # [from memory]
    d, lo, hi = difference_interval(56, 70, 48, 80)
    assert (float(d), float(lo), float(hi)) == pytest.approx((0.2, 0.0524, 0.3339), abs=5e-5)


@pytest.mark.parametrize(("x", "n"), [(0, 10), (1, 10), (56, 70), (189, 11034), (50, 50)])
def test_wilson_interval_matches_scipy(x: int, n: int) -> None:
    lo, hi = wilson_interval(x, n)
    ci = binomtest(x, n).proportion_ci(confidence_level=0.95, method="wilson")
    assert (float(lo), float(hi)) == pytest.approx((ci.low, ci.high), abs=1e-12)


# Benjamini, Y. & Hochberg, Y. (1995), JRSS B 57(1): 289–300, section 4: the 15 p-values of
# their worked example (a study of myocardial infarction treatment); at q = 0.05 the
# step-up procedure rejects the four smallest, where a Bonferroni-type procedure rejects
# three. p-values and counts from memory.
BH_EXAMPLE = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459,
              0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.000]  # fmt: skip


def test_benjamini_hochberg_worked_example_and_scipy() -> None:
    q = benjamini_hochberg(BH_EXAMPLE)
    assert np.allclose(q, false_discovery_control(BH_EXAMPLE, method="bh"), rtol=0, atol=1e-15)
    assert int((q <= 0.05).sum()) == 4  # Benjamini & Hochberg (1995) [from memory]
    assert int((np.asarray(BH_EXAMPLE) <= 0.05 / 15).sum()) == 3  # Bonferroni, same paper


def test_benjamini_hochberg_matches_scipy_in_any_order() -> None:
    rng = np.random.default_rng(3)
    p = np.concatenate([rng.uniform(size=40), rng.uniform(0, 1e-3, size=10), [1.0, 0.0]])
    rng.shuffle(p)
    assert np.allclose(benjamini_hochberg(p), false_discovery_control(p), rtol=1e-12, atol=0)


@pytest.mark.parametrize(("a", "b", "n_a", "n_b"), [(10, 2, 1000, 2000), (0, 3, 1000, 2000),
                                                    (5, 5, 1000, 2000), (150, 2, 61000, 96000),
                                                    (300, 300, 5000, 5000)])  # fmt: skip
def test_dunning_g2_is_scipys_log_likelihood_ratio_statistic(
    a: int, b: int, n_a: int, n_b: int
) -> None:
    # Dunning (1993), Computational Linguistics 19(1): the log-likelihood ratio −2 log λ of a
    # 2 × 2 table is the G-test statistic, which scipy computes as the power divergence with
    # lambda_="log-likelihood" (Cressie & Read's λ = 0)
    ref = chi2_contingency([[a, n_a - a], [b, n_b - b]], correction=False,
                           lambda_="log-likelihood").statistic  # fmt: skip
    assert float(log_likelihood_ratio(a, b, n_a, n_b)) == pytest.approx(ref, rel=1e-9, abs=1e-12)


def test_rate_ratio_is_the_smoothed_ratio_of_rates() -> None:
    assert float(rate_ratio(0, 0, 100, 200)) == pytest.approx(2.0)
    assert float(rate_ratio(9.5, 1.5, 1000, 1000)) == pytest.approx(5.0)
