"""Diversity, stability, relevance, layout and matching checked against outside references.

Sources, beside each check:
- scipy 1.17.1 ``scipy.spatial.distance.jensenshannon`` and
  ``scipy.optimize.linear_sum_assignment`` (run live; version asserted below).
- scikit-learn 1.9.1 ``sklearn.manifold.ClassicalMDS`` (run live when installed).
- worked checks of topic diversity (Dieng et al. 2020), average Jaccard (Greene et al. 2014),
  relevance (Sievert & Shirley 2014), classical MDS eigenvalues and matching (Kuhn 1955), as in
  docs/methods_metrics.md — [run] values, produced with numpy
  2.4.6, scipy 1.17.1 and scikit-learn 1.9.1.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
import scipy
from scipy.spatial.distance import jensenshannon

from talkthemes.metrics.diversity import topic_diversity
from talkthemes.metrics.layout import classical_mds, js_distance_matrix
from talkthemes.metrics.matching import match_topics, optimal_assignment
from talkthemes.metrics.relevance import relevance, term_marginal
from talkthemes.metrics.stability import average_jaccard

# worked check, topics over four words.
A1 = [0.7, 0.2, 0.1, 0.0]
A2 = [0.0, 0.1, 0.2, 0.7]
B1 = [0.0, 0.1, 0.3, 0.6]
B2 = [0.6, 0.3, 0.1, 0.0]
B3 = [0.25, 0.25, 0.25, 0.25]


def test_scipy_version() -> None:
    assert scipy.__version__.startswith("1.17.")


def test_js_distance_equals_scipy_jensenshannon() -> None:
    # scipy 1.17.1 jensenshannon(p, q, base=2): sqrt of the base-2 JS divergence.
    rng = np.random.default_rng(11)
    p = rng.random((5, 30)) * (rng.random((5, 30)) > 0.3)
    q = rng.random((4, 30)) * (rng.random((4, 30)) > 0.3)
    got = js_distance_matrix(p, q)
    want = np.array([[jensenshannon(a, b, base=2) for b in q] for a in p])
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-12)
    assert js_distance_matrix([[1, 0, 0]], [[0, 1, 0]])[0, 0] == pytest.approx(1.0)


@pytest.mark.parametrize("shape", [(4, 4), (3, 5), (5, 3), (6, 6)])
def test_assignment_equals_bruteforce_over_permutations(shape: tuple[int, int]) -> None:
    # scipy 1.17.1 linear_sum_assignment (Crouse 2016) against trying every injection.
    rng = np.random.default_rng(sum(shape))
    cost = rng.random(shape)
    rows, cols = shape
    if rows <= cols:
        best = min(
            sum(cost[r, c] for r, c in enumerate(p))
            for p in itertools.permutations(range(cols), rows)
        )
    else:
        best = min(
            sum(cost[r, c] for c, r in enumerate(p))
            for p in itertools.permutations(range(rows), cols)
        )
    pairs = optimal_assignment(cost)
    assert len(pairs) == min(shape)
    assert cost[pairs[:, 0], pairs[:, 1]].sum() == pytest.approx(best, abs=1e-12)
    similar = optimal_assignment(-cost, maximize=True)
    assert cost[similar[:, 0], similar[:, 1]].sum() == pytest.approx(best, abs=1e-12)


def test_methods_11_worked_matching() -> None:
    # Worked check [run]: cost [[0.837, 0.100, 0.481], [0.100, 0.837, 0.481]];
    # A1→B2 and A2→B1 at 0.100 each, B3 unmatched.
    cost = js_distance_matrix([A1, A2], [B1, B2, B3])
    np.testing.assert_allclose(cost, [[0.837, 0.100, 0.481], [0.100, 0.837, 0.481]], atol=5e-4)
    got = match_topics(cost)
    assert got.pairs.tolist() == [[0, 1], [1, 0]]
    np.testing.assert_allclose(got.costs, [0.100, 0.100], atol=5e-4)
    assert got.unmatched_cols.tolist() == [2]
    assert got.unmatched_rows.size == 0


def test_methods_4_average_jaccard() -> None:
    # Worked check [run]: R1 = (a,b,c,d), R2 = (b,a,c,e) → AJ = (0 + 1 + 1 + 0.6)/4 = 0.65.
    a, b, c, d, e = range(5)
    assert average_jaccard(np.array([a, b, c, d]), np.array([b, a, c, e])) == pytest.approx(0.65)


def test_methods_3_topic_diversity() -> None:
    # Worked check [run]: top-3 lists {a,b,c}, {a,d,e}, {f,g,b}: 7 unique of 9 → 0.778.
    a, b, c, d, e, f, g = range(7)
    td = topic_diversity(np.array([[a, b, c], [a, d, e], [f, g, b]]), topn=3)
    assert td == pytest.approx(0.778, abs=5e-4)


def test_methods_5_4_relevance_table() -> None:
    # Worked check [run]: φ = [[0.5,0.3,0.1,0.1],[0.1,0.1,0.4,0.4]], P(T) = (0.6, 0.4).
    phi = np.array([[0.5, 0.3, 0.1, 0.1], [0.1, 0.1, 0.4, 0.4]])
    p = term_marginal(phi, np.array([0.6, 0.4]))
    np.testing.assert_allclose(p, [0.34, 0.22, 0.22, 0.22], atol=1e-12)
    table = {
        1.0: [-0.6931, -1.2040, -2.3026, -2.3026],
        0.6: [-0.2616, -0.5983, -1.6969, -1.6969],
        0.0: [0.3857, 0.3102, -0.7885, -0.7885],
    }
    for lam, row in table.items():
        np.testing.assert_allclose(relevance(phi, p, lam)[0], row, atol=5e-5)


def five_topic_distances() -> np.ndarray:
    return js_distance_matrix(np.array([A1, A2, B1, B2, B3]))


def test_methods_6_2_eigenvalues() -> None:
    # Worked check [run]: eigenvalues (0.6952, 0.0345, 0.0048, 0.0036, ≈0); uniform B3
    # lands near the origin.
    got = classical_mds(five_topic_distances())
    np.testing.assert_allclose(got.eigenvalues, [0.6952, 0.0345, 0.0048, 0.0036, 0.0], atol=5e-5)
    assert abs(got.coordinates[4, 0]) < 1e-6


def test_classical_mds_agrees_with_scikit_learn() -> None:
    # scikit-learn 1.9.1 ClassicalMDS(metric="precomputed"): same eigenvalues and, with
    # the same sign convention (svd_flip), the same coordinates.
    manifold = pytest.importorskip("sklearn.manifold")
    if not hasattr(manifold, "ClassicalMDS"):
        pytest.skip("this scikit-learn has no ClassicalMDS")
    d = five_topic_distances()
    theirs = manifold.ClassicalMDS(n_components=2, metric="precomputed")
    coords = theirs.fit_transform(d)
    ours = classical_mds(d, 2)
    np.testing.assert_allclose(ours.eigenvalues[:2], theirs.eigenvalues_, atol=1e-12)
    np.testing.assert_allclose(ours.coordinates, coords, atol=1e-10)
